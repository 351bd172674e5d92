"""The candidates of a spec: library topologies of its family, prepared as the circuits a ranking measures.

Design layer, the step after the spec (:class:`~symbias.design.spec.Spec` and
the topology library -> :class:`Candidate`).  A topology's netlist is written
for its published analysis (a 5 V supply, textbook ``.model`` cards, one
output); a candidate is the same circuit set up for the spec:

* the process describes the devices: a ``.model`` card's parameters that the
  spec's process gives are dropped (the cards hold textbook placeholders), so
  every candidate is measured on the same devices;
* the supply sources (``roles.supply``) sit at the spec's nominal supply and
  every output source at the spec's output voltage (the voltage across the
  output: ``Vout out 0`` for a sink, ``Vout vcc out`` for a source);
* resistors that name no layer take the process's ``[layout] resistor_layer``
  (its temperature coefficients then apply);
* a block of N outputs repeats the output branch: every element carrying the
  first output's current (collector-emitter, drain-source and resistor paths
  from the output node down to a rail) is copied with its own nodes, its
  control terminals (base, gate) left on the original nodes, as a designer
  adds outputs to a mirror.  A branch that shares a node with a source (the
  input) cannot be repeated and the candidate says so.

A candidate whose output flows the other way than the spec asks (a pnp
source for a sink) is kept with the reason it is excluded.

Examples
--------
>>> from symbias.design.spec import parse_spec
>>> spec = parse_spec('''[block]
... family = "current-mirror"
... current = "5uA"
... outputs = 3
... direction = "sink"
... [supply]
... min = 1.62
... max = 1.98''')
>>> found = {c.id: c for c in candidates(spec, only=("bjt-cascode-mirror", "bjt-pnp-simple-mirror"))}
>>> found["bjt-cascode-mirror"].outputs, found["bjt-pnp-simple-mirror"].excluded
(('Vout', 'Vout_2', 'Vout_3'), 'its output sources current; the spec asks for a sink')
>>> [e.name for e in found["bjt-cascode-mirror"].circuit.elements][-3:]
['Q4_3', 'Q2_3', 'Vout_3']
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any, Iterable, Mapping

from ..circuit import GROUND, Circuit, Element, Model
from ..errors import CircuitError, UsageError
from ..expressions import Number, Symbol, substitute
from ..process import Process

__all__ = ["Candidate", "candidates", "prepare", "repeat_output", "spec_process", "output_value", "with_values",
           "with_numbers"]

#: Terminals that carry a branch's current, by element letter (the others are control terminals).
_CURRENT_TERMINALS = {"Q": (0, 2), "M": (0, 2, 3), "R": (0, 1), "D": (0, 1), "C": (0, 1), "L": (0, 1)}
#: The word the spec uses for the direction ``symbias.conventions`` reports.
_DIRECTION = {"sinks": "sink", "sources": "source"}


@dataclass(frozen=True)
class Candidate:
    """A library topology set up for a spec.

    Attributes
    ----------
    topology : Topology
    circuit : Circuit
        Process parameters, supply, output voltage, resistor layers and every output in place.
    formula_circuit : Circuit
        The same with at most one copy of the output branch: the circuit the exact
        output-resistance formula is derived on (a copy of a fed-back output differs from the first).
    outputs : tuple of str
        The output sources; the first is the one measured.
    direction : str or None
        ``"sink"`` or ``"source"`` (None for a reference).
    excluded : str or None
        Why the candidate is not evaluated (None: it is).
    """

    topology: Any
    circuit: Circuit
    formula_circuit: Circuit
    outputs: tuple[str, ...] = ()
    direction: str | None = None
    excluded: str | None = None

    @property
    def id(self) -> str:
        """The topology's identifier."""
        return self.topology.id

    @property
    def family(self) -> str:
        """``current-source``, ``current-mirror`` or ``reference``."""
        return self.topology.family

    @property
    def output(self) -> str:
        """The output that is measured: the first output source, or a reference's output node."""
        return self.outputs[0] if self.outputs else self.topology.roles["output"]

    @property
    def input(self) -> str | None:
        """A mirror's input current source (None otherwise)."""
        return self.topology.roles.get("input") if self.family == "current-mirror" else None

    def target(self, circuit: Circuit | None = None):
        """The pipeline :class:`~symbias.pipeline.targets.Target` of this candidate (or of ``circuit``)."""
        from ..pipeline.targets import Target

        return Target(circuit if circuit is not None else self.circuit, self.topology, self.id)


def spec_process(spec) -> Process:
    """The spec's process: its file, or the shipped demo process.

    Raises
    ------
    ProcessError
        When the file cannot be read.

    Examples
    --------
    >>> from symbias.design.spec import load_spec
    >>> spec_process(load_spec("examples/sensor_bias_spec.toml")).layout["resistor_layer"]
    'rpoly'
    """
    from ..process import demo_process_path, load_process

    return load_process(spec.block.process or demo_process_path())


def candidates(spec, library_dirs: Iterable[str] = (), only: Iterable[str] = (), process: Process | None = None
               ) -> tuple[Candidate, ...]:
    """The library's candidates for ``spec``, prepared (:func:`prepare`), in identifier order.

    Parameters
    ----------
    spec : Spec
    library_dirs : iterable of str
        Extra library folders (``--library``), searched before the shipped one.
    only : iterable of str
        Restrict to these identifiers (``--only``).
    process : Process, optional
        The spec's process, when already read.

    Raises
    ------
    UsageError
        An ``--only`` identifier that is not in the library or not of the spec's family, or no
        topology of the spec's family and technology.
    LibraryError
        From reading the library.
    """
    from ..library import load_library

    library = load_library(extra_dirs=tuple(library_dirs))
    process = process if process is not None else spec_process(spec)
    wanted = list(dict.fromkeys(only))
    for name in wanted:
        if name not in library:
            raise UsageError(f"--only {name}: no topology of that identifier in the library", path="--only")
        if library[name].family != spec.block.family:
            raise UsageError(f"--only {name}: a {library[name].family}, the spec asks for a {spec.block.family}",
                             path="--only")
    chosen = [t for i, t in sorted(library.items()) if (not wanted or i in wanted) and t.family == spec.block.family
              and spec.block.technology in ("any", t.technology)]
    if not chosen:
        raise UsageError(f"the library has no {spec.block.technology} {spec.block.family}", path=spec.path)
    return tuple(prepare(topology, spec, process) for topology in chosen)


def prepare(topology, spec, process: Process) -> Candidate:
    """One topology set up for the spec (see the module docstring).

    Raises
    ------
    LibraryError
        When the topology's netlist does not read.
    """
    circuit = _resistor_layers(_process_models(topology.circuit(), process), process)
    roles = topology.roles
    circuit = with_values(circuit, roles.get("supply", ()), spec.supply.nominal)
    if topology.family == "reference":
        return Candidate(topology, circuit, circuit)
    outputs = (roles["output"], *roles.get("outputs", ()))
    circuit = with_values(circuit, outputs, spec.output_voltage)
    from ..conventions import output_current

    direction = _DIRECTION.get(output_current(circuit, outputs[0]).direction or "", None)
    if spec.block.direction != "any" and direction != spec.block.direction:
        why = f"its output {direction}s current" if direction else "its output current has no direction"
        return Candidate(topology, circuit, circuit, outputs, direction, f"{why}; the spec asks for a "
                                                                          f"{spec.block.direction}")
    copies = spec.block.outputs - len(outputs)
    if copies <= 0:
        return Candidate(topology, circuit, circuit, outputs, direction)
    try:
        full, added = repeat_output(circuit, outputs[0], copies)
        single, _ = repeat_output(circuit, outputs[0], 1)
    except CircuitError as err:
        return Candidate(topology, circuit, circuit, outputs, direction,
                         f"cannot give {spec.block.outputs} outputs: {err.reason}")
    return Candidate(topology, full, single, outputs + added, direction)


def _process_models(circuit: Circuit, process: Process) -> Circuit:
    """Drop the card parameters the process gives, so the process describes every device."""
    models = {}
    for key, model in circuit.models.items():
        entry = process.device(model.name, model.type)
        given = set(entry.params) if entry is not None and entry.type == model.type else set()
        models[key] = Model(model.name, model.type, {k: v for k, v in model.params.items() if k not in given},
                            model.line)
    return replace(circuit, models=models)


def _resistor_layers(circuit: Circuit, process: Process) -> Circuit:
    """Resistors without a layer or their own TC take the process's default layer."""
    layer = process.layout.get("resistor_layer")
    if layer is None:
        return circuit
    for element in circuit.elements_of("R"):
        if not {"layer", "tc1", "tc2"} & set(element.params):
            circuit = circuit.replace_element(replace(element, params={**element.params, "layer": Symbol(layer)}))
    return circuit


def with_values(circuit: Circuit, names: Iterable[str], value: float) -> Circuit:
    """A copy with the named sources (or passives) set to ``value`` (an exact number close to it)."""
    for name in names:
        element = circuit.element(name)
        circuit = circuit.replace_element(replace(element, value=Number(_fraction(value))))
    return circuit


def with_numbers(circuit: Circuit, values: Mapping[str, float]) -> Circuit:
    """A copy with the free symbols of element values and instance parameters replaced by ``values``.

    For analyses that read sizes as numbers (``W={WN/4}`` becomes ``W=2.5e-06``).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nV1 a 0 1\\nM1 a a 0 0 NM W={WN/4} L=1u\\n.model NM nmos\\n")
    >>> float(with_numbers(c, {"WN": 1e-5}).element("M1").params["w"])
    2.5e-06
    """
    exact = {name: Number(_fraction(value)) for name, value in values.items()}
    changed = []
    for element in circuit.elements:
        value = substitute(element.value, exact) if element.value is not None else None
        params = {key: substitute(param, exact) for key, param in element.params.items()}
        changed.append(replace(element, value=value, params=params))
    return replace(circuit, elements=tuple(changed))


def _fraction(value: float):
    from fractions import Fraction

    return Fraction(value).limit_denominator(10**9)


def repeat_output(circuit: Circuit, output: str, copies: int) -> tuple[Circuit, tuple[str, ...]]:
    """The circuit with the output branch of source ``output`` repeated ``copies`` times.

    Copy ``k`` of element ``Q2`` is ``Q2_k`` and of node ``out`` is ``out_k``;
    control terminals keep their nodes.

    Raises
    ------
    CircuitError
        When the branch reaches a node of another source (it carries more than the output's current).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nIref 0 in 1m\\nQ1 in in 0 QN\\nQ2 out in e 0 QN\\nR2 e 0 1k\\nVout out 0 2\\n"
    ...                   ".model QN npn\\n")
    >>> new, outputs = repeat_output(c, "Vout", 1)
    >>> outputs, [(e.name, e.nodes) for e in new.elements[-3:]]
    (('Vout_2',), [('Q2_2', ('out_2', 'in', 'e_2', '0')), ('R2_2', ('e_2', '0')), ('Vout_2', ('out_2', '0'))])
    """
    source = circuit.element(output)
    chain, private = _branch(circuit, source)
    added: list[Element] = []
    names = []
    for k in range(2, copies + 2):
        def copy(node: str) -> str:
            return f"{node}_{k}" if node in private else node

        for element in chain:
            control = [i for i in range(len(element.nodes)) if i not in _CURRENT_TERMINALS[element.kind]]
            nodes = tuple(n if i in control else copy(n) for i, n in enumerate(element.nodes))
            added.append(replace(element, name=f"{element.name}_{k}", nodes=nodes))
        added.append(replace(source, name=f"{source.name}_{k}", nodes=tuple(copy(n) for n in source.nodes)))
        names.append(added[-1].name)
    return circuit.with_elements(*added), tuple(names)


def _branch(circuit: Circuit, source: Element) -> tuple[list[Element], set[str]]:
    """The elements carrying the output's current and the nodes only they share."""
    from ..conventions import output_current

    node = output_current(circuit, source.name).node
    fixed = {GROUND} | {n for e in circuit.elements_of("V") if e is not source for n in e.nodes}
    private, frontier, chain = {node}, [node], []
    while frontier:
        here = frontier.pop()
        for element in circuit.elements:
            if element is source or element in chain or here not in element.nodes:
                continue
            terminals = _CURRENT_TERMINALS.get(element.kind)
            if terminals is None:
                raise CircuitError(f"the output branch reaches {element.name} at node {here!r}", path=circuit.path,
                                   line=element.line)
            if not any(element.nodes[i] == here for i in terminals):
                continue  # only a control terminal here (a base or gate watching the branch)
            chain.append(element)
            for i in terminals:
                other = element.nodes[i]
                if other not in fixed and other not in private:
                    private.add(other)
                    frontier.append(other)
    return chain, private


def output_value(candidate: Candidate, point):
    """The measured output of an operating point (or of a batch of them, as an array).

    A source's or mirror's output current (A, positive the way its output
    transistor drives it: :mod:`symbias.conventions`), or a reference's output voltage (V).
    """
    if candidate.family == "reference":
        return point.voltage(candidate.output)
    from ..conventions import output_current

    return output_current(candidate.circuit, candidate.output).sign * point.current(candidate.output)
