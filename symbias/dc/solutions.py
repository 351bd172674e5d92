"""Search for every DC solution of a circuit; flag a zero-current state (start-up check).

Fifth step of the DC side.  Circuits with positive feedback around a mirror
(self-biased sources, bandgap cores) can sit in more than one DC state,
typically the wanted one and a state in which no current flows; the latter
needs a start-up circuit.  :func:`find_solutions` runs Newton from many
starts - devices on, all off (every node and junction at 0 V), source
stepping from zero (the power-up path), gmin stepping, each node set to
fractions of the supply, and seeded random node voltages - and keeps every
distinct converged solution.

A state is *zero-current* when the total transistor current is below
:data:`ZERO_FRACTION` of that of the state carrying the most (or below
:data:`~symbias.devices.nonlinear.ION_MIN` per device).

Leakage: with every device off, reverse-biased junctions (and the GMIN
shunts simulators add) still pass picoamperes, and a MOS device conducts a
little below threshold.  In a loop whose gain at tiny currents exceeds one
(a 1:K pair in a mirror loop), that leakage alone would eventually start the
circuit, so the all-off state is then not an exact DC solution of the
model.  Leakage is not a start-up mechanism to rely on (it varies by orders
of magnitude with process and temperature, and the start-up it gives takes
as long as it takes a picoampere to charge the nodes), so the all-off state
is also reported - as a zero-current state "held by leakage" - when it leaves
no more than :data:`LEAKAGE_LIMIT` unbalanced at any node.

The search cannot prove that no other state exists, and DC alone says
nothing about which states are stable: a state between a zero-current one
and the working one is usually unstable.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist('''core with ideal amplifier
... R1 vo a 10k
... R2 vo b 10k
... R3 b c 1k
... Q1 a a 0 QN
... Q2 c c 0 QN 8
... E1 vo 0 a b 1e4
... .model QN npn (IS=1e-16 BF=100)
... ''')
>>> found = find_solutions(c)
>>> found.needs_startup, len(found.states) >= 2
(True, True)
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import numpy as np

from ..circuit import Circuit
from ..devices.nonlinear import ION_MIN
from ..errors import AnalysisError, SymbiasError
from ..process import Process
from .newton import DcOptions, initial_state, newton, residual
from .operating_point import OperatingPoint, report
from .stepping import Solution, power_up, solve
from .system import DcSystem, build_system

__all__ = ["DcState", "Solutions", "find_solutions", "off_voltages", "ZERO_FRACTION", "LEAKAGE_LIMIT"]

#: A state whose total transistor current is below this fraction of the largest is "zero-current".
ZERO_FRACTION = 1e-3
#: Largest net current (A) at any node for which the all-off state counts as held by leakage.
LEAKAGE_LIMIT = 1e-9


@dataclass(frozen=True)
class DcState:
    """One DC solution found.

    Attributes
    ----------
    point : OperatingPoint
    device_current : float
        Sum of the magnitudes of every transistor's collector/drain current (A).
    supply_current : float
        Sum of the magnitudes of the voltage-source (and E/H/L) branch currents (A).
    zero_current : bool
    starts : tuple of str
        The starts that reached it.
    residual : float
        Largest net current at any node (A): ~0 for an exact solution, up to
        :data:`LEAKAGE_LIMIT` for the all-off state held by leakage.
    exact : bool
        False for the all-off state held only by leakage.
    """

    point: OperatingPoint
    device_current: float
    supply_current: float
    zero_current: bool
    starts: tuple[str, ...]
    residual: float = 0.0
    exact: bool = True

    def to_dict(self) -> dict:
        """Plain-dict form for JSON."""
        return {"zero_current": self.zero_current, "exact": self.exact, "residual": self.residual,
                "device_current": self.device_current, "supply_current": self.supply_current,
                "starts": list(self.starts), **self.point.to_dict()}


@dataclass(frozen=True)
class Solutions:
    """Every distinct DC solution found, ordered by total transistor current (lowest first).

    Attributes
    ----------
    states : tuple of DcState
    tried : int
        Number of starts run.
    """

    states: tuple[DcState, ...]
    tried: int

    @property
    def needs_startup(self) -> bool:
        """True when a zero-current state exists beside a working one."""
        return any(s.zero_current for s in self.states) and any(not s.zero_current for s in self.states)

    @property
    def working(self) -> DcState | None:
        """The state carrying the most current, if it is not a zero-current one."""
        top = self.states[-1] if self.states else None
        return top if top is not None and not top.zero_current else None

    def to_dict(self) -> dict:
        """Plain-dict form for JSON: ``needs_startup``, ``tried`` and ``states``."""
        return {"needs_startup": self.needs_startup, "tried": self.tried,
                "states": [s.to_dict() for s in self.states]}


def off_voltages(circuit: Circuit, values: Mapping[str, float] | None = None,
                 process: Process | None = None) -> dict[str, float]:
    """Node voltages of the all-off state: no current anywhere, every junction at 0 V.

    Voltage sources fix their nodes; a resistor or inductor carrying no
    current puts both ends at the same voltage; a base sits at its emitter,
    a gate at its source, an anode at its cathode (and back) - the ``off``
    relations each element's ``dc`` hook declares.  Collectors and drains are
    left to the other elements; nodes nothing fixes are put at 0 V.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nV1 vcc 0 3\\nQ3 a a vcc QP\\nQ1 b b 0 QN\\nQ4 b a vcc QP\\n"
    ...                   ".model QP pnp\\n.model QN npn\\n")
    >>> off_voltages(c)
    {'0': 0.0, 'vcc': 3.0, 'a': 3.0, 'b': 0.0}
    """
    known = _propagate(build_system(circuit, process, 27.0, values))
    return {node: known.get(node, 0.0) for node in circuit.nodes}


def _propagate(system: DcSystem) -> dict[str, float]:
    known: dict[str, float] = {"0": 0.0}
    changed = True
    while changed:
        changed = False
        for source, target, offset in system.off_relations:
            if source in known and target not in known:
                known[target] = known[source] + float(np.ravel(offset)[0])
                changed = True
    return known


def _off_vector(system: DcSystem) -> np.ndarray:
    x = np.zeros(system.size)
    for node, value in _propagate(system).items():
        if node != "0":
            x[system.node_index[node]] = value
    return x


def _starts(system: DcSystem, random_starts: int, seed: int):
    """(label, x0, starting device state or None) for each plain-Newton start."""
    n = system.size
    n_nodes = system.node_count
    x_off = _off_vector(system)
    # node voltages up to the largest supply, and at least 2 V so a reference
    # driven only by a controlled source (no supply) is covered too
    top = max([float(np.max(np.abs(s.value))) for s in system.sources.values() if s.quantity == "voltage"] + [2.0])
    yield "devices on", np.zeros(n), "on"
    yield "all off", x_off, "off"
    for fraction in (0.25, 0.5, 0.75, 1.0):
        x = np.zeros(n)
        x[:n_nodes] = fraction * top
        yield f"nodes at {fraction:g} x {top:g} V", x, None
    rng = np.random.default_rng(seed)
    for k in range(random_starts):
        x = np.zeros(n)
        x[:n_nodes] = rng.uniform(0.0, top, n_nodes)
        yield f"random start {k + 1}", x, None


def _same(a: np.ndarray, b: np.ndarray, n_nodes: int, tol: float = 1e-5) -> bool:
    return bool(np.all(np.abs(a[:n_nodes] - b[:n_nodes]) <= tol * (1.0 + np.abs(b[:n_nodes]))))


def find_solutions(circuit: Circuit, process: Process | None = None, temperature: float = 27.0,
                   values: Mapping[str, float] | None = None, *, random_starts: int = 12, seed: int = 0,
                   options: DcOptions = DcOptions()) -> Solutions:
    """Find every DC solution reachable from a set of starts (see the module docstring).

    Raises
    ------
    AnalysisError
        When no start converges at all.
    """
    system = build_system(circuit, process, temperature, values)
    rhs = system.rhs()
    n_nodes = system.node_count
    found: list[tuple[Solution, list[str]]] = []
    tried = 0

    def keep(label: str, solution: Solution) -> None:
        for known, labels in found:
            if _same(solution.x, known.x, n_nodes):
                labels.append(label)
                return
        found.append((solution, [label]))

    for label, x0, kind in _starts(system, random_starts, seed):
        tried += 1
        # kind None: the device state the start's node voltages imply
        attempt = newton(system, rhs, x0[None, :], start_kind=kind, max_iterations=options.max_iterations,
                         options=options)
        if attempt.converged[0]:
            keep(label, Solution(attempt.x[0], tuple(s[0] for s in attempt.state), int(attempt.iterations[0]),
                                 label))
    for label, kind in (("source stepping from zero", "off"), ("gmin stepping", "on")):
        tried += 1
        try:
            keep(label, solve(system, start_kind=kind, options=options) if kind == "on"
                 else power_up(system, options))
        except SymbiasError:
            continue
    states = []
    for solution, labels in found:
        try:
            point = report(system, solution)
        except SymbiasError:
            continue  # a start that landed outside the models' validity is not a state of the circuit
        states.append((point, labels, True))
    leak = _held_by_leakage(system, rhs)
    if leak is not None and not any(_same(leak.solution.x, p.solution.x, n_nodes, 1e-2) for p, _, _ in states):
        states.append((leak, ["all off"], False))
    if not states:
        raise AnalysisError("no DC solution found from any start", path=circuit.path)
    totals = [sum(abs(d.output_current) for d in p.devices.values()) for p, _, _ in states]
    largest = max(totals)
    floor = ION_MIN * max(1, len(circuit.devices))
    result = []
    for (point, labels, exact), total in sorted(zip(states, totals), key=lambda item: item[1]):
        zero = total < max(ZERO_FRACTION * largest, floor)
        net = float(np.max(np.abs(residual(system, point.solution.x, rhs)[:n_nodes]), initial=0.0))
        result.append(DcState(point, float(total), point.supply_current, bool(zero), tuple(labels), net, exact))
    return Solutions(tuple(result), tried)


def _held_by_leakage(system: DcSystem, rhs: np.ndarray) -> OperatingPoint | None:
    """The all-off state when it leaves at most :data:`LEAKAGE_LIMIT` unbalanced at every node."""
    x = _off_vector(system)
    n_nodes = system.node_count
    # branch currents of the sources: the least-squares values for the off node voltages
    net = residual(system, x, rhs)
    if n_nodes < system.size:
        a = system.matrix[0, :n_nodes, n_nodes:]
        currents, *_ = np.linalg.lstsq(a, -net[:n_nodes], rcond=None)
        x[n_nodes:] = currents
        net = residual(system, x, rhs)
    if np.max(np.abs(net[:n_nodes]), initial=0.0) > LEAKAGE_LIMIT:
        return None
    try:
        state = tuple(s[0] for s in initial_state(system, "off", x))
        return report(system, Solution(x, state, 0, "all off (held by leakage)"))
    except SymbiasError:
        return None

