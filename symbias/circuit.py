"""The Circuit: parsed, validated, immutable description of a netlist.

Second step of the text side (``netlist`` text -> :class:`Circuit`).  A
circuit holds data only; analyses are free functions in other modules that
take a circuit.  Every "edit" (:meth:`Circuit.without`, :meth:`Circuit.replace_element`)
returns a new circuit.  Element kinds, their terminals and what they accept
come from the registry in :mod:`symbias.elements`; values are exact
:mod:`symbias.expressions` trees.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist("divider\\nV1 in 0 1\\nR1 in out 1k\\nR2 out 0 1k\\n")
>>> c.nodes
('0', 'in', 'out')
>>> c.element("r2").value
1000
"""


from __future__ import annotations

import warnings
from dataclasses import dataclass, field, replace
from types import MappingProxyType
from typing import Any, Iterable, Mapping

from .elements import DEVICE_LETTERS, KINDS
from .errors import CircuitError, CircuitWarning
from .expressions import ONE, Expr, as_expr

__all__ = [
    "Element",
    "Model",
    "SimulatorCard",
    "Circuit",
    "GROUND",
    "validate",
    "conducting_pairs",
    "controls_itself",
    "components",
]

GROUND = "0"



def _frozen_mapping(data: Mapping | None) -> Mapping:
    return MappingProxyType(dict(data or {}))


@dataclass(frozen=True)
class Element:
    """One circuit element as written in the netlist.

    Parameters
    ----------
    name : str
        Element name as written, e.g. ``"Q1"``; its first letter is the kind.
    kind : str
        Upper-case SPICE letter (``R``, ``Q``, ...).
    nodes : tuple of str
        Node names (lower case, ground is ``"0"``) in the order of the kind's terminals.
    value : Expr or None
        Primary value: resistance, capacitance, DC value, gain. None for devices.
    control : str or None
        Controlling voltage source of an F or H element.
    model : str or None
        Model name of a device (Q, M, D).
    params : mapping
        Instance parameters, lower-case keys (``area``, ``m``, ``w``, ``l``, ``ac``).
    line : int
        Line of the netlist it came from (0 when built in code).
    """

    name: str
    kind: str
    nodes: tuple[str, ...]
    value: Expr | None = None
    control: str | None = None
    model: str | None = None
    params: Mapping[str, Expr] = field(default_factory=dict)
    line: int = 0

    def __post_init__(self) -> None:
        object.__setattr__(self, "params", _frozen_mapping({k: as_expr(v) for k, v in dict(self.params).items()}))
        object.__setattr__(self, "nodes", tuple(self.nodes))
        if self.value is not None:
            object.__setattr__(self, "value", as_expr(self.value))
        kind = KINDS.get(self.kind)
        if kind is None:
            raise CircuitError(f"unknown element kind {self.kind!r} for {self.name}", line=self.line)
        if len(self.nodes) not in kind.node_counts:
            wanted = " or ".join(str(n) for n in kind.node_counts)
            raise CircuitError(
                f"{self.name}: expected {wanted} nodes, got {len(self.nodes)}", line=self.line
            )

    @property
    def key(self) -> str:
        """Case-insensitive identity of the element (SPICE names ignore case)."""
        return self.name.lower()

    @property
    def multiplier(self) -> Expr:
        """Parallel-device multiplier: ``m`` times ``area`` (BJT, diode), 1 if absent."""
        factor: Expr = ONE
        for key in ("m", "area"):
            if key in self.params:
                factor = factor * self.params[key]
        return factor

    def __reduce__(self):  # MappingProxyType does not pickle
        return (
            Element,
            (self.name, self.kind, self.nodes, self.value, self.control, self.model, dict(self.params), self.line),
        )


@dataclass(frozen=True)
class Model:
    """A ``.model`` card: name, type (npn, pnp, nmos, pmos, ...) and parameters.

    Parameter keys are upper case (``BF``, ``VAF``, ``VTO``); unknown ones are kept.
    """

    name: str
    type: str
    params: Mapping[str, Expr] = field(default_factory=dict)
    line: int = 0

    def __post_init__(self) -> None:
        object.__setattr__(self, "params", _frozen_mapping({k: as_expr(v) for k, v in dict(self.params).items()}))

    @property
    def key(self) -> str:
        """Case-insensitive identity of the model."""
        return self.name.lower()

    @property
    def polarity(self) -> int:
        """+1 for npn/nmos, -1 for pnp/pmos, 0 for other types."""
        return {"npn": 1, "nmos": 1, "pnp": -1, "pmos": -1}.get(self.type, 0)

    def __reduce__(self):
        return (Model, (self.name, self.type, dict(self.params), self.line))


@dataclass(frozen=True)
class SimulatorCard:
    """A line of the top netlist file that a simulator deck writes back as written.

    Parameters
    ----------
    kind : {"include", "lib", "model"}
        ``.include FILE`` (or ``.inc``), ``.lib FILE SECTION`` or a ``.model`` card.
    text : str
        The logical line as written (continuations joined, comments removed).
    line : int
        Its line in the top file.
    file : str, optional
        include, lib: the file named, relative to the folder of the netlist.
    section : str, optional
        lib: the section, lower case.
    model : Model, optional
        model: the card as read, so a deck can tell whether the circuit still holds it unchanged.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn (BF=80 ikf=1m)\\n")
    >>> c.simulator_cards[0].text
    '.model QN npn (BF=80 ikf=1m)'
    """

    kind: str
    text: str
    line: int = 0
    file: str | None = None
    section: str | None = None
    model: Model | None = None


@dataclass(frozen=True)
class Circuit:
    """An immutable circuit: title, elements, models, parameters, matched groups.

    Parameters
    ----------
    title : str
        First line of the netlist.
    elements : tuple of Element
        In netlist order.
    models : mapping of str to Model
        Keyed by lower-case model name.
    params : mapping of str to Expr
        ``.param`` values (lower-case keys), already substituted into elements.
    groups : mapping of str to tuple of str
        Declared matched groups (``.match NAME Q1 Q2 ...``), element keys.
    path : str or None
        File it was read from, for error messages.
    simulator_cards : tuple of SimulatorCard
        The top file's ``.include``/``.lib`` lines and ``.model`` cards as written, for a simulator
        deck (:mod:`symbias.simulator.deck`); not part of the circuit's identity.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn\\n")
    >>> [d.name for d in c.devices], c.model_of(c.devices[0]).type, c.without("I1").nodes
    (['Q1'], 'npn', ('0', 'a'))
    """

    title: str
    elements: tuple[Element, ...]
    models: Mapping[str, Model] = field(default_factory=dict)
    params: Mapping[str, Expr] = field(default_factory=dict)
    groups: Mapping[str, tuple[str, ...]] = field(default_factory=dict)
    path: str | None = None
    simulator_cards: tuple[SimulatorCard, ...] = field(default=(), compare=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "elements", tuple(self.elements))
        object.__setattr__(self, "simulator_cards", tuple(self.simulator_cards))
        object.__setattr__(self, "models", _frozen_mapping(self.models))
        object.__setattr__(self, "params", _frozen_mapping(self.params))
        object.__setattr__(self, "groups", _frozen_mapping({k: tuple(v) for k, v in dict(self.groups).items()}))
        seen: dict[str, Element] = {}
        for element in self.elements:
            if element.key in seen:
                raise CircuitError(
                    f"duplicate element name {element.name!r} (first on line {seen[element.key].line})",
                    path=self.path,
                    line=element.line,
                )
            seen[element.key] = element

    def __reduce__(self):
        return (
            Circuit,
            (self.title, self.elements, dict(self.models), dict(self.params), dict(self.groups), self.path,
             self.simulator_cards),
        )

    # -- lookups -------------------------------------------------------------
    @property
    def nodes(self) -> tuple[str, ...]:
        """All node names, ground first if present, then in order of appearance."""
        order: dict[str, None] = {}
        for element in self.elements:
            for node in element.nodes:
                order.setdefault(node, None)
        names = list(order)
        if GROUND in order:
            names.remove(GROUND)
            names.insert(0, GROUND)
        return tuple(names)

    def has_element(self, name: str) -> bool:
        """True when an element of that name (any case) exists."""
        return any(e.key == name.lower() for e in self.elements)

    def element(self, name: str) -> Element:
        """The element called ``name`` (case-insensitive).

        Raises
        ------
        CircuitError
            If there is no such element.
        """
        for element in self.elements:
            if element.key == name.lower():
                return element
        raise CircuitError(f"no element named {name!r}", path=self.path)

    def elements_of(self, *kinds: str) -> tuple[Element, ...]:
        """Elements whose kind is one of ``kinds``, in netlist order."""
        return tuple(e for e in self.elements if e.kind in kinds)

    @property
    def devices(self) -> tuple[Element, ...]:
        """Elements that take a ``.model``: transistors and diodes."""
        return self.elements_of(*DEVICE_LETTERS)

    def model_of(self, element: Element) -> Model:
        """The ``.model`` a device refers to."""
        model = self.models.get((element.model or "").lower())
        if model is None:
            raise CircuitError(f"{element.name}: undefined model {element.model!r}", path=self.path, line=element.line)
        return model

    # -- edits return new circuits ------------------------------------------
    def without(self, *names: str) -> "Circuit":
        """A copy with the named elements removed."""
        drop = {n.lower() for n in names}
        return replace(self, elements=tuple(e for e in self.elements if e.key not in drop))

    def with_elements(self, *elements: Element) -> "Circuit":
        """A copy with ``elements`` appended."""
        return replace(self, elements=self.elements + tuple(elements))

    def replace_element(self, element: Element) -> "Circuit":
        """A copy with the element of the same name replaced by ``element``."""
        return replace(self, elements=tuple(element if e.key == element.key else e for e in self.elements))

    # -- graph view ------------------------------------------------------------
    def graph(self):
        """A networkx MultiGraph: nodes are circuit nodes, one edge per conducting terminal pair.

        Pairs come from each kind's ``small_signal_pairs`` in
        :mod:`symbias.elements`: two-terminal elements give one edge,
        controlled sources an edge between their output nodes only (the
        control side draws no current), transistors an edge from their first
        terminal to each other one.  Each edge carries ``element`` (the name)
        and ``kind``.
        """
        import networkx as nx

        graph = nx.MultiGraph()
        graph.add_nodes_from(self.nodes)
        for element in self.elements:
            for a, b in conducting_pairs(element):
                graph.add_edge(a, b, element=element.name, kind=element.kind)
        return graph


def conducting_pairs(element: Element, dc: bool = False) -> list[tuple[str, str]]:
    """Node pairs through which ``element`` conducts, in small signal or (``dc=True``) at DC.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> q = parse_netlist("t\\nV1 c 0 1\\nI1 0 b 1m\\nQ1 c b 0 QN\\n.model QN npn\\n").element("Q1")
    >>> conducting_pairs(q), conducting_pairs(q, dc=True)
    ([('c', 'b'), ('c', '0')], [('c', 'b'), ('b', '0')])
    """
    kind = KINDS[element.kind]
    pairs = kind.dc_pairs if dc else kind.small_signal_pairs
    nodes = element.nodes
    return [(nodes[i], nodes[j]) for i, j in pairs if i < len(nodes) and j < len(nodes)]


def components(nodes: Iterable[str], edges: Iterable[tuple[str, str]]) -> list[set[str]]:
    """Connected groups of ``nodes`` joined by ``edges`` (union-find; no graph library needed).

    Examples
    --------
    >>> sorted(map(sorted, components("abcd", [("a", "b"), ("c", "c")])))
    [['a', 'b'], ['c'], ['d']]
    """
    parent: dict[str, str] = {}

    def root(n: str) -> str:
        parent.setdefault(n, n)
        while parent[n] != n:
            parent[n] = parent[parent[n]]
            n = parent[n]
        return n

    for n in nodes:
        root(n)
    for a, b in edges:
        ra, rb = root(a), root(b)
        if ra != rb:
            parent[ra] = rb
    groups: dict[str, set[str]] = {}
    for n in list(parent):
        groups.setdefault(root(n), set()).add(n)
    return list(groups.values())


def validate(circuit: Circuit) -> tuple[str, ...]:
    """Check a circuit for structural faults; return warnings, raise on errors.

    Errors (:class:`CircuitError`, with the offending line): no ground node; a
    part of the circuit with no connection to ground; a device with an
    undefined model or a model of the wrong type; a controlled source whose
    controlling voltage source does not exist; a loop of elements that fix a
    voltage (V, E, H and inductors at DC); a cut set of elements that force a
    current (a group of nodes reached only through I, G or F).  Warnings
    (returned and also issued as :class:`~symbias.errors.CircuitWarning`): a
    node with a single connection.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> validate(parse_netlist("t\\nI1 0 a 1m\\nR1 a 0 1k\\n"))
    ()
    """
    path = circuit.path
    if not circuit.elements:
        raise CircuitError("the circuit has no elements", path=path, line=1)
    if GROUND not in circuit.nodes:
        raise CircuitError("no ground node (node 0 or gnd)", path=path, line=circuit.elements[0].line)

    for element in circuit.elements:
        kind = KINDS[element.kind]
        if kind.is_device:
            model = circuit.models.get((element.model or "").lower())
            if model is None:
                raise CircuitError(f"{element.name}: undefined model {element.model!r}", path=path, line=element.line)
            if model.type not in kind.model_types:
                raise CircuitError(
                    f"{element.name}: model {model.name!r} is of type {model.type}, "
                    f"expected {' or '.join(kind.model_types)}",
                    path=path,
                    line=element.line,
                )
        if kind.controlled_by_source:
            control = element.control or ""
            if not circuit.has_element(control) or circuit.element(control).kind != "V":
                raise CircuitError(
                    f"{element.name}: controlling voltage source {control!r} does not exist",
                    path=path,
                    line=element.line,
                )

    # control-only nodes (e.g. a sense node of a G element) still need a path to ground
    edges = [pair for element in circuit.elements for pair in conducting_pairs(element)]
    for component in components(circuit.nodes, edges):
        if GROUND not in component:
            culprit = _first_element_touching(circuit, component)
            raise CircuitError(
                f"node(s) {', '.join(sorted(component))} have no connection to ground",
                path=path,
                line=culprit.line if culprit else None,
            )

    _check_voltage_loops(circuit)
    _check_current_cutsets(circuit)

    notes = []
    degree: dict[str, int] = {n: 0 for n in circuit.nodes}
    for element in circuit.elements:
        for node in element.nodes:
            degree[node] += 1
    for node, count in degree.items():
        if count == 1 and node != GROUND:
            culprit = _first_element_touching(circuit, {node})
            message = f"node {node!r} has a single connection ({culprit.name})"
            notes.append(message)
            warnings.warn(f"{path or '<input>'}:{culprit.line}: {message}", CircuitWarning, stacklevel=2)
    return tuple(notes)


def _first_element_touching(circuit: Circuit, nodes) -> Element | None:
    for element in circuit.elements:
        if any(n in nodes for n in element.nodes):
            return element
    return None


def _check_voltage_loops(circuit: Circuit) -> None:
    parent: dict[str, str] = {n: n for n in circuit.nodes}

    def root(n: str) -> str:
        while parent[n] != n:
            parent[n] = parent[parent[n]]
            n = parent[n]
        return n

    for element in circuit.elements:
        if not KINDS[element.kind].fixes_voltage:
            continue
        a, b = root(element.nodes[0]), root(element.nodes[1])
        if a == b:
            raise CircuitError(
                f"{element.name} closes a loop of voltage sources (and inductors)",
                path=circuit.path,
                line=element.line,
            )
        parent[a] = b


def controls_itself(element: Element) -> bool:
    """True for a VCCS sensing the voltage across its own terminals: a conductance (or a negative one).

    Examples
    --------
    >>> controls_itself(Element("G1", "G", ("a", "b", "b", "a"), 1)), controls_itself(Element("G2", "G", ("a", "0", "c", "0"), 1))
    (True, False)
    """
    nodes = element.nodes
    return element.kind == "G" and nodes[0] != nodes[1] and {nodes[0], nodes[1]} == {nodes[2], nodes[3]}


def _check_current_cutsets(circuit: Circuit) -> None:
    """Nodes reached only through elements that force a current; a self-controlled VCCS is a conductance."""
    edges = [pair for element in circuit.elements
             if not KINDS[element.kind].forces_current or controls_itself(element)
             for pair in conducting_pairs(element)]
    for component in components(circuit.nodes, edges):
        if GROUND in component:
            continue
        culprit = next(
            (e for e in circuit.elements if KINDS[e.kind].forces_current and any(n in component for n in e.nodes[:2])),
            None,
        )
        raise CircuitError(
            f"node(s) {', '.join(sorted(component))} are reached only through current sources "
            f"({culprit.name if culprit else 'current sources'}): a cut set of current sources",
            path=circuit.path,
            line=culprit.line if culprit else None,
        )
