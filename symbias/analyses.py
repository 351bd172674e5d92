"""Small-signal quantities of a circuit, each returned as a :class:`~symbias.formula.Formula`.

The analyses wire the steps: circuit -> expanded network -> linear problem
-> cofactor solve -> formula.  They are pure functions of a circuit.

Sign conventions (SPICE directions):

* An input current source ``I n+ n-`` drives a unit current that flows from
  ``n+`` through the source to ``n-``, i.e. it is delivered into the circuit
  at ``n-``.
* The output current of ``current_gain`` and ``transconductance`` is the
  current that flows out of the output voltage source's ``+`` terminal into
  the circuit (minus the SPICE branch current).  A sinking (NPN, NMOS) mirror
  written as ``Iref vcc in`` and ``Vout out 0``, and a sourcing (PNP, PMOS)
  mirror written as ``Iref in 0`` and ``Vout vcc out``, both have a positive
  gain: the sign follows the direction in which each source is written.
* An input voltage source drives a unit voltage ``v(n+) - v(n-)``.
* Output voltages are ``v(a) - v(b)`` of the named node pair (``b`` is ground
  for a single node).
* ``output_resistance`` drives a unit test current into ``a`` and out of
  ``b`` with every independent source zeroed (V shorted, I open) and returns
  ``v(a) - v(b)``; when the port is an element it is removed first.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> mirror = parse_netlist('''simple NPN mirror
... Iref 0 in 100u
... Q1 in in 0 QN
... Q2 out in 0 QN
... Vout out 0 2
... .model QN npn (BF=100 VAF=50)
... ''')
>>> output_resistance(mirror, "Vout").expr
ro_Q2
>>> current_gain(mirror, "Vout", "Iref", SmallSignalOptions(ro=False, match=True, beta=True)).expr
beta/(beta + 2)
"""

from __future__ import annotations

from dataclasses import replace

from .circuit import GROUND, Circuit, Element
from .errors import AnalysisError, CircuitError, InfiniteResultError
from .formula import Formula
from .linear.mna import LinearProblem, solve
from .devices.options import SmallSignalOptions
from .linear.network import LinearNetwork, expand

__all__ = [
    "SmallSignalOptions",
    "Port",
    "parse_port",
    "output_resistance",
    "output_impedance",
    "current_gain",
    "voltage_gain",
    "transconductance",
    "transimpedance",
    "QUANTITIES",
]


class Port(tuple):
    """A node pair ``(a, b)`` plus the element removed to open it (or None)."""

    removed: str | None = None

    def __new__(cls, a: str, b: str, removed: str | None = None):
        port = super().__new__(cls, (a, b))
        port.removed = removed
        return port


def _node_name(circuit: Circuit, text: str) -> str:
    name = text.strip().lower()
    name = GROUND if name in ("0", "gnd") else name
    if name not in circuit.nodes:
        raise CircuitError(f"no element or node named {text.strip()!r}", path=circuit.path)
    return name


def parse_port(circuit: Circuit, port: str) -> Port:
    """Resolve a port given as an element name, a node, or ``"a,b"``.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nI1 0 a 1\\nR1 a b 1k\\nR2 b 0 1k\\n")
    >>> parse_port(c, "R1"), parse_port(c, "R1").removed, parse_port(c, "a,b")
    (('a', 'b'), 'R1', ('a', 'b'))
    """
    text = port.strip()
    if "," in text:
        a, b = (part for part in text.split(",", 1))
        return Port(_node_name(circuit, a), _node_name(circuit, b))
    if circuit.has_element(text):
        element = circuit.element(text)
        if len(element.nodes) != 2 or element.kind in ("F", "H"):
            if element.kind not in ("F", "H"):
                raise CircuitError(f"port {element.name} must be a two-terminal element", path=circuit.path,
                                   line=element.line)
        return Port(element.nodes[0], element.nodes[1], element.name)
    return Port(_node_name(circuit, text), GROUND)


def _source(circuit: Circuit, name: str, kinds: tuple[str, ...], role: str) -> Element:
    if not circuit.has_element(name):
        raise CircuitError(f"no {role} source named {name!r}", path=circuit.path)
    element = circuit.element(name)
    if element.kind not in kinds:
        wanted = " or ".join({"V": "a voltage source", "I": "a current source"}[k] for k in kinds)
        raise CircuitError(
            f"{role} {element.name} must be {wanted}"
            + (" (add a 0 V source in series to measure a current)" if kinds == ("V",) else ""),
            path=circuit.path,
            line=element.line,
        )
    return element


def _drive_current(element: Element) -> tuple[tuple[str, int], ...]:
    """b entries of a unit current flowing n+ -> source -> n- (into the circuit at n-)."""
    plus, minus = element.nodes
    entries = []
    if plus != GROUND:
        entries.append((f"v:{plus}", -1))
    if minus != GROUND:
        entries.append((f"v:{minus}", 1))
    return tuple(entries)


def _voltage(a: str, b: str) -> tuple[tuple[str, int], ...]:
    entries = []
    if a != GROUND:
        entries.append((f"v:{a}", 1))
    if b != GROUND:
        entries.append((f"v:{b}", -1))
    return tuple(entries)


def _assumptions(network: LinearNetwork, options: SmallSignalOptions, circuit: Circuit, driven: str) -> tuple[str, ...]:
    notes = ["linear small-signal analysis about a fixed operating point"]
    if circuit.devices:
        bjt = "BJT hybrid-pi: gm, " + ("beta/gm" if options.beta else "rpi")
        bjt += ", ro" if options.ro else " (ro omitted)"
        if options.extras:
            bjt += ", rmu, rb, re"
        mos = "MOS: gm" + (", gmb" if options.gmb else " (gmb omitted)") + (", ro" if options.ro else " (ro omitted)")
        kinds = {d.kind for d in circuit.devices}
        if "Q" in kinds:
            notes.append(bjt)
        if "M" in kinds:
            notes.append(mos)
        if options.capacitances:
            notes.append("device capacitances included (s is the Laplace variable)")
    if options.match:
        notes.append("matched devices share symbols; multipliers m/area scale gm up and r down")
    notes.append(f"independent sources zeroed (V shorted, I open) except {driven}")
    return tuple(notes)


def _formula(problem: LinearProblem, *, quantity: str, label: str, unit: str, circuit: Circuit,
             options: SmallSignalOptions, driven: str, backend: str | None) -> Formula:
    solution = solve(problem, backend)
    formula = Formula.from_solution(
        solution,
        quantity=quantity,
        label=label,
        unit=unit,
        meanings={},
        assumptions=_assumptions(problem.network, options, circuit, driven),
        problem=problem,
    )
    names = {s.name for s in formula.symbols}
    meanings = {k: v for k, v in problem.network.meanings.items() if k in names}
    from dataclasses import replace

    return replace(formula, meanings=meanings)


def output_resistance(
    circuit: Circuit,
    port: str,
    options: SmallSignalOptions | None = None,
    backend: str | None = None,
) -> Formula:
    """Small-signal resistance (impedance, with capacitances) seen at a port.

    Parameters
    ----------
    circuit : Circuit
    port : str
        An element name (the element is removed and the impedance between its
        terminals returned), a node name (to ground) or ``"a,b"``.
    options : SmallSignalOptions, optional
    backend : {"flint", "sympy"}, optional
        Polynomial arithmetic; default flint.

    Returns
    -------
    Formula
        In ohm.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n")
    >>> output_resistance(c, "R1").expr
    RB
    """
    options = options or SmallSignalOptions()
    where = parse_port(circuit, port)
    a, b = where
    if a == b:
        raise CircuitError(f"port {port!r} has both terminals on node {a!r}", path=circuit.path)
    if where.removed:
        _check_removable(circuit, where.removed)
    reduced = circuit.without(where.removed) if where.removed else circuit
    holder, notes = _holding_source(reduced, a, b, port)
    if holder is not None:
        # a node held by a voltage source has zero resistance; the designer means the node with it removed
        reduced = reduced.without(holder)
    network = expand(reduced, options)
    for node in (a, b):
        if node != GROUND and node not in network.nodes:
            raise CircuitError(f"node {node!r} is left unconnected once {where.removed or holder} is removed",
                               path=circuit.path)
    drive = _voltage(a, b)
    problem = LinearProblem(network, rhs=drive, observe=drive)
    label = f"Rout at {where.removed or (a if b == GROUND else a + ',' + b)}"
    if holder is not None:
        label += f" ({holder} removed)"
    try:
        formula = _formula(problem, quantity="output_resistance", label=label, unit="ohm", circuit=circuit,
                           options=options, driven="the test current at the port", backend=backend)
    except AnalysisError:
        _check_port_connected(network, a, b, port)  # an open port: say so; anything else stands
        raise
    return replace(formula, assumptions=formula.assumptions + notes) if notes else formula


def _holding_source(circuit: Circuit, a: str, b: str, port: str) -> tuple[str | None, tuple[str, ...]]:
    """The independent voltage source to remove from port ``a,b``, and a note for the assumptions.

    A port held by one independent source is seen with that source removed; a
    port held by several, or by a controlled source (an ideal amplifier's
    output), keeps them, and the note names them: its resistance is 0.
    """
    path = _source_path(circuit, a, b)
    if not path:
        return None, ()
    if len(path) == 1 and circuit.element(path[0]).kind == "V":
        return path[0], (f"{path[0]} removed: it held the port at a fixed voltage",)
    return None, (f"the port is held at a fixed voltage by {', '.join(path)} (ideal sources): its resistance is 0; "
                  "name one of them as the port to see the resistance with it removed",)


def _source_path(circuit: Circuit, a: str, b: str) -> list[str]:
    """Names of the voltage-fixing elements (V, E, H) on the path from ``a`` to ``b``, if there is one."""
    links: dict[str, list[tuple[str, str]]] = {}
    for element in circuit.elements:
        if element.kind in ("V", "E", "H"):
            n1, n2 = element.nodes[:2]
            links.setdefault(n1, []).append((n2, element.name))
            links.setdefault(n2, []).append((n1, element.name))
    trail: dict[str, list[str]] = {a: []}
    queue = [a]
    while queue:  # breadth first: the sources form a forest (a loop of them is refused on reading)
        node = queue.pop(0)
        if node == b:
            return trail[node]
        for other, name in links.get(node, ()):
            if other not in trail:
                trail[other] = trail[node] + [name]
                queue.append(other)
    return []


def _check_port_connected(network: LinearNetwork, a: str, b: str, port: str) -> None:
    """An open port (no small-signal path between its terminals) has an infinite resistance: say why.

    Raises
    ------
    InfiniteResultError
        Naming the node that floats.
    """
    from .circuit import components

    edges = []
    for p in network.primitives:
        # a VCCS controlled by its own terminals is a conductance (a diode-connected MOS without ro)
        if p.kind in ("Y", "Z", "V", "E", "H") or (p.kind == "G" and set(p.nodes[:2]) == set(p.nodes[2:])):
            edges.append((p.nodes[0], p.nodes[1]))
    joined = components(network.nodes, edges)
    group = next(g for g in joined if a in g)
    if b not in group:
        floating = a if GROUND not in group else b
        raise InfiniteResultError(f"Rout at {port} is infinite: node {floating!r} has no small-signal path to "
                                  f"the other terminal of the port once sources are zeroed", path=network.path)


#: ``output_impedance`` is the same analysis; with capacitances the result depends on s.
output_impedance = output_resistance


def current_gain(
    circuit: Circuit,
    output: str,
    input: str,
    options: SmallSignalOptions | None = None,
    backend: str | None = None,
) -> Formula:
    """Current out of voltage source ``output`` per unit current of source ``input``.

    See the module docstring for the sign convention.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a b RB\\nVout 0 b 0\\n")
    >>> current_gain(c, "Vout", "I1").expr
    RA/(RA + RB)
    """
    return _transfer(circuit, output, input, options, backend, "current_gain")


def transimpedance(
    circuit: Circuit,
    output: str,
    input: str,
    options: SmallSignalOptions | None = None,
    backend: str | None = None,
) -> Formula:
    """Output voltage (node or ``"a,b"``) per unit current of source ``input``.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\n")
    >>> transimpedance(c, "a", "I1").expr
    RA
    """
    return _transfer(circuit, output, input, options, backend, "transimpedance")


def voltage_gain(
    circuit: Circuit,
    output: str,
    input: str,
    options: SmallSignalOptions | None = None,
    backend: str | None = None,
) -> Formula:
    """Output voltage (node or ``"a,b"``) per unit voltage of source ``input``.

    With ``input`` the supply source this is the supply-to-output transfer
    (line sensitivity in small signal).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nV1 a 0 1\\nR1 a b RA\\nR2 b 0 RB\\n")
    >>> voltage_gain(c, "b", "V1").expr
    RB/(RA + RB)
    """
    return _transfer(circuit, output, input, options, backend, "voltage_gain")


def transconductance(
    circuit: Circuit,
    output: str,
    input: str,
    options: SmallSignalOptions | None = None,
    backend: str | None = None,
) -> Formula:
    """Current out of voltage source ``output`` per unit voltage of source ``input``.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nV1 a 0 1\\nR1 a b RA\\nVout b 0 0\\n")
    >>> transconductance(c, "Vout", "V1").expr
    -1/RA
    """
    return _transfer(circuit, output, input, options, backend, "transconductance")


#: Transfer quantity -> (output kind, input source kind, unit).
_TRANSFERS = {
    "current_gain": ("current", "I", "A/A"),
    "transimpedance": ("voltage", "I", "V/A"),
    "voltage_gain": ("voltage", "V", "V/V"),
    "transconductance": ("current", "V", "A/V"),
}


def _transfer(circuit: Circuit, output: str, input: str, options: SmallSignalOptions | None,
              backend: str | None, quantity: str) -> Formula:
    """Build and solve a transfer: drive the input source, observe the output current or voltage."""
    options = options or SmallSignalOptions()
    out_kind, in_kind, unit = _TRANSFERS[quantity]
    src = _source(circuit, input, (in_kind,), "input")
    rhs = _drive_current(src) if in_kind == "I" else ((f"i:{src.name}", 1),)
    if out_kind == "current":
        out = _source(circuit, output, ("V",), "output")
        observe, shown = ((f"i:{out.name}", -1),), f"i({out.name})"
    else:
        observe, shown = _voltage(*_output_nodes(circuit, output)), f"v({output})"
    problem = LinearProblem(expand(circuit, options), rhs=rhs, observe=observe)
    label = f"{shown}/{'i' if in_kind == 'I' else 'v'}({src.name})"
    return _formula(problem, quantity=quantity, label=label, unit=unit, circuit=circuit, options=options,
                    driven=src.name, backend=backend)


def _check_removable(circuit: Circuit, name: str) -> None:
    """A port element that controls an F or H source cannot be removed."""
    element = circuit.element(name)
    for other in circuit.elements_of("F", "H"):
        if (other.control or "").lower() == element.key:
            raise CircuitError(
                f"port {element.name} cannot be opened: it senses the current controlling {other.name} "
                "(put a separate 0 V source in series and use that as the port)",
                path=circuit.path,
                line=element.line,
            )


def _output_nodes(circuit: Circuit, output: str) -> tuple[str, str]:
    if circuit.has_element(output) and "," not in output:
        element = circuit.element(output)
        return element.nodes[0], element.nodes[1]
    port = parse_port(circuit, output)
    return port[0], port[1]


#: Quantity name -> (function, unit, takes an input source).
QUANTITIES = {
    "output_resistance": (output_resistance, "ohm", False),
    "current_gain": (current_gain, "A/A", True),
    "voltage_gain": (voltage_gain, "V/V", True),
    "transconductance": (transconductance, "A/V", True),
    "transimpedance": (transimpedance, "V/A", True),
}
