"""Compile a circuit into numeric nodal (MNA) equations for the DC solver.

First step of the DC side: :class:`~symbias.circuit.Circuit` + process +
temperature -> :class:`DcSystem`, a frozen bundle of numpy arrays.  The
unknowns are the node voltages (ground excluded) followed by the branch
currents of voltage sources, inductors (shorts at DC) and E/H sources.  Linear
elements go into a constant matrix; independent sources into a right-hand
side that the solver can scale (source stepping) or override (sweeps);
transistors into two banks (all BJTs, all MOS devices) evaluated in one
vectorised call each.

Conventions: a branch current flows from the element's first node through
the element to its second node (for a voltage source that is SPICE's sign:
positive into the + terminal).  Capacitors are open; inductors are shorts.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> s = build_system(parse_netlist("d\\nV1 a 0 2\\nR1 a b 1k\\nR2 b 0 1k\\n"))
>>> s.unknowns
('a', 'b', 'I(V1)')
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Mapping

import numpy as np

from ..circuit import GROUND, Circuit, Element
from ..devices.bjt import GMIN, BjtAtTemperature, BjtModel, stack_bjts
from ..devices.mos import MosAtTemperature, MosModel, stack_mos
from ..errors import CircuitError
from ..process import Process

__all__ = ["DcSystem", "DeviceBank", "build_system", "element_number", "resolved_model_parameters", "dc_paths"]

_BRANCH_KINDS = ("V", "L", "E", "H")


@dataclass(frozen=True)
class DeviceBank:
    """All transistors of one kind: names, terminal indices (ground = n) and parameters.

    ``terminals`` has one row per terminal (BJT: c, b, e; MOS: d, g, s, b) and
    one column per device.
    """

    names: tuple[str, ...]
    terminals: np.ndarray
    params: object  # BjtAtTemperature or MosAtTemperature of arrays
    models: tuple[object, ...]  # BjtModel / MosModel per device (for reports)
    lines: tuple[int, ...]

    @property
    def size(self) -> int:
        """Number of devices in the bank."""
        return len(self.names)


@dataclass(frozen=True)
class DcSystem:
    """Numeric nodal equations of a circuit at one temperature.

    Attributes
    ----------
    circuit : Circuit
        The circuit compiled.
    temperature : float
        degC.
    unknowns : tuple of str
        Node names, then ``I(<element>)`` for each branch current.
    node_index : mapping
        Node name -> unknown index (ground maps to ``n``, one past the end).
    branch_index : mapping
        Element name (lower case) -> unknown index of its branch current.
    matrix : ndarray
        (n+1, n+1) constant part, ground row/column last (ignored).
    sources : mapping
        Independent source name (lower case) -> (kind, value, pattern) with
        ``pattern`` an (n+1,) vector: the right-hand side is
        ``sum(value * pattern)``.
    resistors : mapping
        Resistor name (lower case) -> resistance at this temperature (ohm).
    bjt, mos : DeviceBank or None
    process : Process or None
    values : mapping
        The numbers given for free symbols.
    """

    circuit: Circuit
    temperature: float
    unknowns: tuple[str, ...]
    node_index: Mapping[str, int]
    branch_index: Mapping[str, int]
    matrix: np.ndarray
    sources: Mapping[str, tuple[str, float, np.ndarray]]
    resistors: Mapping[str, float] = field(default_factory=dict)
    bjt: DeviceBank | None = None
    mos: DeviceBank | None = None
    process: Process | None = None
    values: Mapping[str, float] = field(default_factory=dict)

    @property
    def size(self) -> int:
        """Number of unknowns n."""
        return len(self.unknowns)

    def rhs(self, scale: float = 1.0, overrides: Mapping[str, float] | None = None) -> np.ndarray:
        """Right-hand side with every source scaled by ``scale``; ``overrides`` set source values.

        Examples
        --------
        >>> from symbias.netlist import parse_netlist
        >>> s = build_system(parse_netlist("d\\nV1 a 0 2\\nR1 a 0 1k\\n"))
        >>> s.rhs(0.5, {"V1": 4.0}).tolist()
        [0.0, 2.0, 0.0]
        """
        overrides = {k.lower(): v for k, v in (overrides or {}).items()}
        b = np.zeros(self.size + 1)
        for name, (_, value, pattern) in self.sources.items():
            b += scale * overrides.get(name, value) * pattern
        return b

    def with_temperature(self, temperature: float) -> "DcSystem":
        """The same circuit compiled at another temperature (degC)."""
        return build_system(self.circuit, self.process, temperature, self.values)

    def source_value(self, name: str) -> float:
        """Present value of an independent source.

        Raises
        ------
        CircuitError
            If there is no independent source of that name.
        """
        try:
            return self.sources[name.lower()][1]
        except KeyError:
            known = ", ".join(sorted(self.sources)) or "none"
            raise CircuitError(f"no independent source {name!r} (sources: {known})", path=self.circuit.path) from None


def element_number(element: Element, expr, values: Mapping[str, float] | None, path: str | None, what: str) -> float:
    """A float for ``expr`` (an element's value or parameter), using ``values`` for free symbols.

    Raises
    ------
    CircuitError
        Naming the element and its line when a symbol has no value.

    Examples
    --------
    >>> from symbias.expressions import Symbol
    >>> e = Element("R1", "R", ("a", "0"), Symbol("RE"), line=3)
    >>> element_number(e, e.value, {"RE": 1e3}, "x.cir", "value")
    1000.0
    """
    if isinstance(expr, (int, float)):
        return float(expr)
    free = sorted(expr.names)
    lookup = {k.lower(): v for k, v in (values or {}).items()}
    missing = [s for s in free if s.lower() not in lookup]
    if missing:
        raise CircuitError(
            f"{element.name}: {what} {expr} has no number for {', '.join(missing)} "
            f"(give it in the netlist or pass values for it)",
            path=path,
            line=element.line,
        )
    try:
        number = expr.evaluate({s: float(lookup[s.lower()]) for s in free})
        number = float(number)
    except (TypeError, ValueError, OverflowError, ZeroDivisionError):
        number = math.nan
    if not math.isfinite(number):
        raise CircuitError(f"{element.name}: {what} {expr} is not a finite real number", path=path,
                           line=element.line)
    return number


def dc_paths(circuit: Circuit) -> None:
    """Check that every node has a DC path to ground; raise :class:`CircuitError` otherwise.

    Capacitors, MOS gates, current sources and the sensing side of controlled
    sources carry no DC current, so a node reached only through them has no
    defined DC voltage.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> dc_paths(parse_netlist("t\\nV1 a 0 1\\nR1 a b 1k\\nC1 b c 1p\\nR2 c 0 1k\\n"))
    """
    import networkx as nx

    graph = nx.Graph()
    graph.add_nodes_from(circuit.nodes)
    for element in circuit.elements:
        nodes = element.nodes
        if element.kind in ("R", "V", "L", "E", "H"):
            graph.add_edge(nodes[0], nodes[1])
        elif element.kind == "Q":
            graph.add_edge(nodes[0], nodes[1])
            graph.add_edge(nodes[1], nodes[2])
        elif element.kind == "M":
            graph.add_edge(nodes[0], nodes[3])
            graph.add_edge(nodes[2], nodes[3])
    for component in nx.connected_components(graph):
        if GROUND in component:
            continue
        culprit = next((e for e in circuit.elements if any(n in component for n in e.nodes)), None)
        raise CircuitError(
            f"node(s) {', '.join(sorted(component))} have no DC path to ground "
            f"(only capacitors, gates or current sources reach them)",
            path=circuit.path,
            line=culprit.line if culprit else None,
        )


def resolved_model_parameters(circuit: Circuit, element: Element, process: Process | None,
                              values: Mapping[str, float] | None) -> tuple[str, dict[str, float], float]:
    """Model type, parameters (process entry overridden by the ``.model`` card) and TNOM (degC).

    The process entry is the device of the model's name, or failing that the
    only process device of the model's type.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nV1 c 0 1\\nQ1 c c 0 QX\\n.model QX npn (BF=50)\\n")
    >>> resolved_model_parameters(c, c.element("Q1"), None, None)
    ('npn', {'BF': 50.0}, 27.0)
    """
    model = circuit.model_of(element)
    params: dict[str, float] = {}
    tnom = 27.0
    if process is not None:
        tnom = process.tnom
        entry = process.device(model.name, model.type)
        if entry is not None:
            if entry.type != model.type:
                raise CircuitError(
                    f"{element.name}: model {model.name} is {model.type} but the process device is {entry.type}",
                    path=circuit.path, line=model.line or element.line,
                )
            params.update(entry.params)
    for key, expr in model.params.items():
        params[key] = element_number(element, expr, values, circuit.path, f"model parameter {key}")
    if "TNOM" in params:
        tnom = params.pop("TNOM")
    return model.type, params, tnom


def _resistance(element: Element, circuit: Circuit, process: Process | None, values, temperature: float) -> float:
    r = element_number(element, element.value, values, circuit.path, "resistance")
    if r == 0:
        raise CircuitError(f"{element.name}: zero resistance (use a 0 V source for a short)", path=circuit.path,
                           line=element.line)
    tc1 = tc2 = 0.0
    tnom = process.tnom if process is not None else 27.0
    if "layer" in element.params:
        if process is None:
            raise CircuitError(f"{element.name}: layer={element.params['layer']} needs a process file",
                               path=circuit.path, line=element.line)
        layer = process.resistor(str(element.params["layer"]))
        tc1, tc2 = layer.tc1, layer.tc2
    if "tc1" in element.params:
        tc1 = element_number(element, element.params["tc1"], values, circuit.path, "tc1")
    if "tc2" in element.params:
        tc2 = element_number(element, element.params["tc2"], values, circuit.path, "tc2")
    dt = temperature - tnom
    return r * (1.0 + tc1 * dt + tc2 * dt * dt)


def build_system(circuit: Circuit, process: Process | None = None, temperature: float = 27.0,
                 values: Mapping[str, float] | None = None) -> DcSystem:
    """Compile ``circuit`` at ``temperature`` (degC) into nodal equations.

    Parameters
    ----------
    circuit : Circuit
    process : Process, optional
        Device parameters; the netlist's ``.model`` cards override them.
    temperature : float, default 27
    values : mapping, optional
        Numbers for free symbols in element values (``{"RE": 1e3}``).

    Raises
    ------
    CircuitError
        A node without a DC path, a symbol without a number, a zero resistor.
    """
    dc_paths(circuit)
    path = circuit.path
    nodes = [n for n in circuit.nodes if n != GROUND]
    branches = [e for e in circuit.elements if e.kind in _BRANCH_KINDS]
    n = len(nodes) + len(branches)
    node_index = {node: i for i, node in enumerate(nodes)}
    node_index[GROUND] = n
    branch_index = {e.key: len(nodes) + i for i, e in enumerate(branches)}
    a = np.zeros((n + 1, n + 1))
    sources: dict[str, tuple[str, float, np.ndarray]] = {}
    resistors: dict[str, float] = {}
    bjts: list[tuple[Element, BjtModel, BjtAtTemperature]] = []
    moses: list[tuple[Element, MosModel, MosAtTemperature]] = []
    idx = node_index.__getitem__

    for element in circuit.elements:
        kind, nd = element.kind, element.nodes
        if kind == "R":
            r = _resistance(element, circuit, process, values, temperature)
            resistors[element.key] = r
            _stamp_conductance(a, idx(nd[0]), idx(nd[1]), 1.0 / r)
        elif kind in _BRANCH_KINDS:
            k = branch_index[element.key]
            p, m = idx(nd[0]), idx(nd[1])
            a[p, k] += 1.0
            a[m, k] -= 1.0
            a[k, p] += 1.0
            a[k, m] -= 1.0
            if kind == "V":
                pattern = np.zeros(n + 1)
                pattern[k] = 1.0
                sources[element.key] = ("V", element_number(element, element.value, values, path, "value"), pattern)
            elif kind == "E":
                gain = element_number(element, element.value, values, path, "gain")
                a[k, idx(nd[2])] -= gain
                a[k, idx(nd[3])] += gain
            elif kind == "H":
                gain = element_number(element, element.value, values, path, "transresistance")
                a[k, branch_index[element.control.lower()]] -= gain
        elif kind == "I":
            pattern = np.zeros(n + 1)
            pattern[idx(nd[0])] -= 1.0
            pattern[idx(nd[1])] += 1.0
            sources[element.key] = ("I", element_number(element, element.value, values, path, "value"), pattern)
        elif kind == "G":
            g = element_number(element, element.value, values, path, "transconductance")
            p, m, cp, cm = (idx(x) for x in nd)
            a[p, cp] += g
            a[p, cm] -= g
            a[m, cp] -= g
            a[m, cm] += g
        elif kind == "F":
            gain = element_number(element, element.value, values, path, "gain")
            k = branch_index[element.control.lower()]
            a[idx(nd[0]), k] += gain
            a[idx(nd[1]), k] -= gain
        elif kind == "Q":
            type_, params, tnom = resolved_model_parameters(circuit, element, process, values)
            model = BjtModel.from_params(type_, params, tnom)
            mult = _multiplier(element, ("m", "area"), values, path)
            bjts.append((element, model, model.at(temperature, mult)))
        elif kind == "M":
            type_, params, tnom = resolved_model_parameters(circuit, element, process, values)
            model = MosModel.from_params(type_, params, tnom)
            w = element_number(element, element.params["w"], values, path, "w") if "w" in element.params else 1.0
            l = element_number(element, element.params["l"], values, path, "l") if "l" in element.params else 1.0
            if w <= 0 or l <= 0:
                raise CircuitError(f"{element.name}: w and l must be positive", path=path, line=element.line)
            mult = _multiplier(element, ("m",), values, path)
            moses.append((element, model, model.at(temperature, w, l, mult)))
            # simulators put GMIN across the bulk junctions; it also keeps an off device's nodes defined
            _stamp_conductance(a, idx(nd[0]), idx(nd[3]), GMIN)
            _stamp_conductance(a, idx(nd[2]), idx(nd[3]), GMIN)
        # C: open at DC

    return DcSystem(
        circuit=circuit,
        temperature=float(temperature),
        unknowns=tuple(nodes) + tuple(f"I({e.name})" for e in branches),
        node_index=MappingProxyType(node_index),
        branch_index=MappingProxyType(branch_index),
        matrix=a,
        sources=MappingProxyType(sources),
        resistors=MappingProxyType(resistors),
        bjt=_bank(bjts, node_index, stack_bjts, 3),
        mos=_bank(moses, node_index, stack_mos, 4),
        process=process,
        values=MappingProxyType(dict(values or {})),
    )


def _multiplier(element: Element, keys: tuple[str, ...], values, path) -> float:
    factor = 1.0
    for key in keys:
        if key in element.params:
            factor *= element_number(element, element.params[key], values, path, key)
    if factor <= 0:
        raise CircuitError(f"{element.name}: {'/'.join(keys)} must be positive", path=path, line=element.line)
    return factor


def _stamp_conductance(a: np.ndarray, p: int, m: int, g: float) -> None:
    a[p, p] += g
    a[m, m] += g
    a[p, m] -= g
    a[m, p] -= g


def _bank(items, node_index, stack, count: int) -> DeviceBank | None:
    if not items:
        return None
    terminals = np.array([[node_index[e.nodes[i]] for e, _, _ in items] for i in range(count)], dtype=int)
    return DeviceBank(
        names=tuple(e.name for e, _, _ in items),
        terminals=terminals,
        params=stack([t for _, _, t in items]),
        models=tuple(m for _, m, _ in items),
        lines=tuple(e.line for e, _, _ in items),
    )
