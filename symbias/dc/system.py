"""Compile a circuit into numeric nodal (MNA) equations for the DC solver.

First step of the DC side: :class:`~symbias.circuit.Circuit` + process +
temperature (+ samples) -> :class:`DcSystem`, a frozen bundle of numpy
arrays.  Every element is stamped by the ``dc`` hook its kind names in
:mod:`symbias.elements`; this module only assembles what the hooks return
(:class:`~symbias.devices.dc_context.DcStamp`).  The unknowns are the node
voltages (ground excluded, then the internal nodes devices add) followed by
the branch currents (voltage sources, inductors, E and H sources).  Linear
elements go into a constant matrix; independent sources into a right-hand
side that the solver can scale (source stepping) or override (sweeps);
nonlinear devices into one :class:`DeviceBank` per device kind, evaluated in
one vectorised call per Newton step through the interface of
:mod:`symbias.devices.nonlinear`.

Batches: when a symbol value, a sample or the temperature is an array of
length K, the system describes K circuits at once.  Arrays that depend on
the batch have a leading axis of length K; the others have length 1.

Conventions: a branch current flows from the element's first node through
the element to its second node (for a voltage source that is SPICE's sign:
positive into the + terminal).  Capacitors are open; inductors are shorts.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> s = build_system(parse_netlist("d\\nV1 a 0 2\\nR1 a b 1k\\nR2 b 0 1k\\n"))
>>> s.unknowns, s.matrix.shape
(('a', 'b', 'I(V1)'), (1, 3, 3))
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields
from types import MappingProxyType
from typing import Any, Mapping

import numpy as np

from ..circuit import GROUND, Circuit, Element, components, conducting_pairs
from ..devices.dc_context import (Branch, DcStamp, StampContext, batch_size, element_number,
                                  resolved_model_parameters)
from ..devices.nonlinear import DeviceModel, stack_parameters
from ..elements import KINDS
from ..errors import CircuitError
from ..process import Process

__all__ = ["DcSystem", "DeviceBank", "Source", "ElementCurrent", "StampLayout", "build_system", "element_number",
           "resolved_model_parameters", "dc_paths"]


@dataclass(frozen=True)
class Source:
    """An independent source: what it sets (voltage or current), value ``(B,)`` and right-hand-side pattern ``(n,)``."""

    quantity: str
    value: np.ndarray
    pattern: np.ndarray


@dataclass(frozen=True)
class ElementCurrent:
    """An element's current: ``sum(coefficient * x[index])`` (``(B, m)`` coefficients), or a source's value."""

    index: np.ndarray
    coefficient: np.ndarray
    source: str | None = None


@dataclass(frozen=True)
class DeviceBank:
    """Every device of one kind: names, where they connect, and their numbers.

    Attributes
    ----------
    model : DeviceModel
    names, types : tuple of str
        Element names as written; model types.
    lines : tuple of int
    terminals : ndarray
        ``(ndev, T)`` unknown index of each terminal the model is evaluated
        at (ground maps to ``n``, one past the last unknown).
    pins : ndarray
        ``(ndev, P)`` unknown index of each of the element's own nodes.
    polarity : ndarray
        ``(ndev,)`` +1 or -1.
    numbers : object
        The model's numbers at temperature (arrays ``(B, ndev)``).
    plus, minus : ndarray
        ``(ndev, C)`` unknown index of the plus and minus terminal of each control (derived).
    """

    model: DeviceModel
    names: tuple[str, ...]
    types: tuple[str, ...]
    lines: tuple[int, ...]
    terminals: np.ndarray
    pins: np.ndarray
    polarity: np.ndarray
    numbers: Any
    plus: np.ndarray = field(init=False, repr=False)
    minus: np.ndarray = field(init=False, repr=False)
    sign: np.ndarray = field(init=False, repr=False)

    def __post_init__(self) -> None:
        # derived once: (ndev, C) unknown index of each control's plus and minus terminal, polarity as a column
        object.__setattr__(self, "plus", self.terminals[:, self.model.plus])
        object.__setattr__(self, "minus", self.terminals[:, self.model.minus])
        object.__setattr__(self, "sign", self.polarity[:, None])

    def __reduce__(self):
        return (DeviceBank, (self.model, self.names, self.types, self.lines, self.terminals, self.pins, self.polarity,
                             self.numbers))

    @property
    def size(self) -> int:
        """Number of devices in the bank."""
        return len(self.names)


@dataclass(frozen=True)
class StampLayout:
    """Where the companion-model entries of every bank land, precomputed once per system.

    The Jacobians of all banks, each flattened to ``(A, ndev*R*C)`` and
    concatenated, times ``matrix_scatter`` (+1 where an entry lands at a
    control's plus terminal, -1 at its minus, summed over entries landing on
    one position) give the additions at the flat matrix positions
    ``matrix_targets`` (ground dropped): one small matrix product per Newton
    step for the whole batch.  The right-hand side likewise from the
    flattened ``(A, ndev*R)`` linearised currents, signed by minus the
    polarity.
    """

    matrix_scatter: np.ndarray
    matrix_targets: np.ndarray
    rhs_scatter: np.ndarray
    rhs_targets: np.ndarray


def _frozen(data: Mapping) -> Mapping:
    return MappingProxyType(dict(data))


@dataclass(frozen=True)
class DcSystem:
    """Numeric nodal equations of a circuit (at one temperature, or over a batch).

    Attributes
    ----------
    circuit : Circuit
    temperature : float or ndarray
        degC (an array of length ``batch`` for a batch over temperature).
    batch : int
        Number of circuits the system describes (1 without samples).
    unknowns : tuple of str
        Node names (circuit nodes, then internal ones), then ``I(<element>)``
        for each branch current.
    node_count : int
        How many unknowns are node voltages.
    node_index, branch_index : mapping
        Node name -> unknown index (ground maps to ``n``); element key -> index
        of its branch current.
    matrix : ndarray
        ``(B, n, n)`` constant part of the nodal matrix.
    sources : mapping
        Source key (lower case) -> :class:`Source`.
    currents : mapping
        Element name as written -> :class:`ElementCurrent` (R, I, G, F).
    banks : tuple of DeviceBank
    layout : StampLayout
    off_relations : tuple of (str, str, value)
        ``V(to) = V(from) + value`` when nothing conducts (see
        :func:`symbias.dc.solutions.off_voltages`).
    process : Process or None
    values : mapping
        The numbers given for free symbols.
    samples : mapping
        The per-batch overrides given.
    """

    circuit: Circuit
    temperature: Any
    batch: int
    unknowns: tuple[str, ...]
    node_count: int
    node_index: Mapping[str, int]
    branch_index: Mapping[str, int]
    matrix: np.ndarray
    sources: Mapping[str, Source]
    currents: Mapping[str, ElementCurrent]
    banks: tuple[DeviceBank, ...]
    layout: StampLayout
    off_relations: tuple[tuple[str, str, Any], ...] = ()
    process: Process | None = None
    values: Mapping[str, Any] = field(default_factory=dict)
    samples: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        for name in ("node_index", "branch_index", "sources", "currents", "values", "samples"):
            object.__setattr__(self, name, _frozen(getattr(self, name)))

    def __reduce__(self):  # MappingProxyType does not pickle
        items = {f.name: getattr(self, f.name) for f in fields(self)}
        for name in ("node_index", "branch_index", "sources", "currents", "values", "samples"):
            items[name] = dict(items[name])
        return (_rebuild_system, (items,))

    @property
    def size(self) -> int:
        """Number of unknowns n."""
        return len(self.unknowns)

    def rhs(self, scale: float = 1.0, overrides: Mapping[str, Any] | None = None,
            index: np.ndarray | None = None) -> np.ndarray:
        """Right-hand side ``(B, n)`` with every source scaled by ``scale``; ``overrides`` set source values.

        An override may be an array over the samples solved; ``index`` picks
        those samples' rows of batched source values.

        Raises
        ------
        CircuitError
            For an override naming no independent source.

        Examples
        --------
        >>> from symbias.netlist import parse_netlist
        >>> s = build_system(parse_netlist("d\\nV1 a 0 2\\nR1 a 0 1k\\n"))
        >>> s.rhs(0.5, {"V1": 4.0}).tolist()
        [[0.0, 2.0]]
        """
        given = {k.lower(): v for k, v in (overrides or {}).items()}
        for name in given:
            self.source_value(name)
        values = {}
        for name, source in self.sources.items():
            value = np.asarray(given.get(name, source.value), dtype=float).reshape(-1)
            if name not in given and index is not None and value.size > 1:
                value = value[index]
            values[name] = value
        rows = batch_size(*values.values(), what="source values", path=self.circuit.path)
        b = np.zeros((rows, self.size))
        for name, source in self.sources.items():
            b += (scale * values[name].reshape(-1, 1)) * source.pattern
        return b

    def with_temperature(self, temperature) -> "DcSystem":
        """The same circuit compiled at another temperature (degC, or an array over the batch)."""
        return build_system(self.circuit, self.process, temperature, self.values, samples=self.samples)

    def source_value(self, name: str):
        """Value of an independent source (a float, or an array over the batch).

        Raises
        ------
        CircuitError
            If there is no independent source of that name.
        """
        source = self.sources.get(name.lower())
        if source is None:
            known = ", ".join(sorted(self.sources)) or "none"
            raise CircuitError(f"no independent source {name!r} (sources: {known})", path=self.circuit.path)
        return float(source.value[0]) if source.value.size == 1 else source.value


def _rebuild_system(items: dict) -> DcSystem:
    return DcSystem(**items)


def dc_paths(circuit: Circuit) -> None:
    """Check that every node has a DC path to ground; raise :class:`CircuitError` otherwise.

    Capacitors, MOS gates, current sources and the sensing side of controlled
    sources carry no DC current (the ``dc_pairs`` of :mod:`symbias.elements`),
    so a node reached only through them has no defined DC voltage.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> dc_paths(parse_netlist("t\\nV1 a 0 1\\nR1 a b 1k\\nC1 b c 1p\\nR2 c 0 1k\\n"))
    """
    edges = [pair for element in circuit.elements for pair in conducting_pairs(element, dc=True)]
    groups = components(circuit.nodes, edges)
    for group in sorted(groups, key=lambda g: min(circuit.nodes.index(n) for n in g)):
        if GROUND in group:
            continue
        culprit = next((e for e in circuit.elements if any(n in group for n in e.nodes)), None)
        raise CircuitError(
            f"node(s) {', '.join(sorted(group))} have no DC path to ground "
            f"(only capacitors, gates or current sources reach them)",
            path=circuit.path,
            line=culprit.line if culprit else None,
        )


def build_system(circuit: Circuit, process: Process | None = None, temperature=27.0,
                 values: Mapping[str, Any] | None = None, *, samples: Mapping[str, Any] | None = None) -> DcSystem:
    """Compile ``circuit`` into nodal equations (at ``temperature`` degC, or over a batch).

    Parameters
    ----------
    circuit : Circuit
    process : Process, optional
        Device parameters; the netlist's ``.model`` cards override them.
    temperature : float or array, default 27
    values : mapping, optional
        Numbers for free symbols in element values (``{"RE": 1e3}``); arrays make a batch.
    samples : mapping, optional
        Per-batch overrides of element values and model parameters (see
        :mod:`symbias.devices.dc_context`).

    Raises
    ------
    CircuitError
        A node without a DC path, a symbol without a number, a zero resistor,
        a sample naming nothing in the circuit.
    """
    dc_paths(circuit)
    context = StampContext.create(circuit, process, temperature, values, samples)
    stamps = [(element, KINDS[element.kind].hook("dc")(element, context)) for element in circuit.elements]
    nodes = [n for n in circuit.nodes if n != GROUND] + [n for _, s in stamps for n in s.internal_nodes]
    branches = [element for element, stamp in stamps if stamp.branch]
    node_count = len(nodes)
    n = node_count + len(branches)
    index: dict[Any, int] = {node: i for i, node in enumerate(nodes)}
    index[GROUND] = n
    index.update({Branch(e.key): node_count + i for i, e in enumerate(branches)})
    return DcSystem(
        circuit=circuit,
        temperature=context.temperature,
        batch=context.batch,
        unknowns=tuple(nodes) + tuple(f"I({e.name})" for e in branches),
        node_count=node_count,
        node_index={k: v for k, v in index.items() if isinstance(k, str)},
        branch_index={k.element: v for k, v in index.items() if isinstance(k, Branch)},
        matrix=_matrix(stamps, index, n),
        sources=_sources(stamps, index, n),
        currents=_currents(stamps, index),
        banks=(banks := _banks(stamps, index, context)),
        layout=_layout(banks, n),
        off_relations=tuple(r for _, stamp in stamps for r in stamp.off),
        process=process,
        values=dict(values or {}),
        samples=dict(samples or {}),
    )


def _rows(values) -> int:
    return max([1] + [np.size(v) for v in values])


def _matrix(stamps: list[tuple[Element, DcStamp]], index: dict, n: int) -> np.ndarray:
    entries = [entry for _, stamp in stamps for entry in stamp.entries]
    a = np.zeros((_rows(v for _, _, v in entries), n + 1, n + 1))
    for row, col, value in entries:
        a[:, index[row], index[col]] += value
    return a[:, :n, :n].copy()


def _sources(stamps: list[tuple[Element, DcStamp]], index: dict, n: int) -> dict[str, Source]:
    out = {}
    for element, stamp in stamps:
        if stamp.source is None:
            continue
        pattern = np.zeros(n + 1)
        for row, coefficient in stamp.source.pattern:
            pattern[index[row]] += coefficient
        out[element.key] = Source(stamp.source.quantity, np.atleast_1d(np.asarray(stamp.source.value, dtype=float)),
                                  pattern[:n])
    return out


def _currents(stamps: list[tuple[Element, DcStamp]], index: dict) -> dict[str, ElementCurrent]:
    out = {}
    for element, stamp in stamps:
        if stamp.current is None:
            continue
        source = element.key if stamp.source is not None and stamp.source.quantity == "current" else None
        columns = np.array([index[node] for node, _ in stamp.current], dtype=int)
        rows = _rows(c for _, c in stamp.current)
        coefficient = np.zeros((rows, len(columns)))
        for j, (_, c) in enumerate(stamp.current):
            coefficient[:, j] = c
        out[element.name] = ElementCurrent(columns, coefficient, source)
    return out


def _banks(stamps: list[tuple[Element, DcStamp]], index: dict, context: StampContext) -> tuple[DeviceBank, ...]:
    grouped: dict[str, list[tuple[Element, Any]]] = {}
    for element, stamp in stamps:
        if stamp.device is not None:
            grouped.setdefault(stamp.device.model.letter, []).append((element, stamp.device))
    celsius = np.asarray(context.temperature, dtype=float)
    if celsius.ndim:
        celsius = celsius[:, None]
    banks = []
    for items in grouped.values():
        model = items[0][1].model
        numbers = model.numbers(stack_parameters([d.params for _, d in items]), celsius)
        # polarity never varies over the batch: the first row holds it
        polarity = np.broadcast_to(np.atleast_2d(np.asarray(numbers.polarity, dtype=float))[:1], (1, len(items)))[0].copy()
        banks.append(DeviceBank(
            model=model,
            names=tuple(e.name for e, _ in items),
            types=tuple(d.type for _, d in items),
            lines=tuple(e.line for e, _ in items),
            terminals=np.array([[index[t] for t in d.terminals] for _, d in items], dtype=int),
            pins=np.array([[index[p] for p in d.pins] for _, d in items], dtype=int),
            polarity=polarity,
            numbers=numbers,
        ))
    return tuple(banks)


def _scatter(destinations: list[int], sources: list[int], signs: list[float], width: int):
    """Dense signed map from flattened entries (``width`` of them) to their unique destinations."""
    targets, column = np.unique(np.array(destinations, dtype=int), return_inverse=True)
    scatter = np.zeros((width, targets.size))
    np.add.at(scatter, (np.array(sources, dtype=int), column), np.array(signs, dtype=float))
    return scatter, targets


def _layout(banks: tuple[DeviceBank, ...], n: int) -> StampLayout:
    matrix: tuple[list, list, list] = ([], [], [])  # destination, source, sign
    rhs: tuple[list, list, list] = ([], [], [])
    jacobian_offset = current_offset = 0
    for bank in banks:
        ndev = bank.size
        terminals = len(bank.model.current_terminals)
        controls = len(bank.model.controls)
        for d in range(ndev):
            for r, t in enumerate(bank.model.current_terminals):
                row = bank.terminals[d, t]
                if row >= n:
                    continue
                for target, value in zip(rhs, (row, current_offset + d * terminals + r, -bank.polarity[d])):
                    target.append(value)
                for c in range(controls):
                    flat = jacobian_offset + (d * terminals + r) * controls + c
                    for column, sign in ((bank.plus[d, c], 1.0), (bank.minus[d, c], -1.0)):
                        if column < n:
                            for target, value in zip(matrix, (row * n + column, flat, sign)):
                                target.append(value)
        jacobian_offset += ndev * terminals * controls
        current_offset += ndev * terminals
    return StampLayout(*_scatter(*matrix, jacobian_offset), *_scatter(*rhs, current_offset))
