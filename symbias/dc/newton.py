"""Newton's method on the nodal equations, with gmin and source stepping as fall-backs.

Second step of the DC side: :class:`~symbias.dc.system.DcSystem` ->
:class:`Solution` (the unknown vector and the device state it was reached
with).  Each iteration linearises every transistor at its present junction
voltages (after limiting: the logarithmic pn-junction limiter for BJTs, a
cap on the gate-voltage step for MOS devices), stamps the linear companion
model and solves the linear system; it stops when no limiting was needed and
every unknown moved by less than ``reltol * |x| + vntol`` (voltages) or
``+ abstol`` (currents).  When plain Newton fails, a conductance from every
node to ground is stepped down from 1 mS to zero (gmin stepping), then all
sources are ramped up from zero (source stepping).  If all fail,
:class:`~symbias.errors.ConvergenceError` names the node that was still
moving and the iteration.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.dc.system import build_system
>>> s = build_system(parse_netlist("d\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn (IS=1e-16)\\n"))
>>> round(float(solve(s).x[0]), 4)
0.774
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import numpy as np

from ..devices.bjt import BjtCurrents, bjt_currents, bjt_limit
from ..devices.mos import MosCurrents, mos_currents, mos_limit
from ..errors import CircuitError, ConvergenceError
from .system import DcSystem

__all__ = ["DcOptions", "DeviceState", "Solution", "solve", "newton", "initial_state", "device_voltages",
           "evaluate", "guess_vector", "state_of", "power_up", "residual", "START_KINDS"]

#: Named starting device states: junctions at their critical voltage ("on") or at zero ("off").
START_KINDS = ("on", "off")


@dataclass(frozen=True)
class DcOptions:
    """Tolerances and iteration limits of the DC solver.

    Examples
    --------
    >>> DcOptions().reltol
    1e-09
    """

    reltol: float = 1e-9
    vntol: float = 1e-9
    abstol: float = 1e-15
    max_iterations: int = 150
    step_iterations: int = 60
    gmin_start: float = 1e-3
    source_min_step: float = 1e-4


@dataclass(frozen=True)
class DeviceState:
    """Junction voltages (npn/nmos frame) at which devices were last linearised."""

    vbe: np.ndarray
    vbc: np.ndarray
    vgs: np.ndarray


@dataclass(frozen=True)
class Solution:
    """A converged DC solution: unknown vector, device state, iterations and method used."""

    x: np.ndarray
    state: DeviceState
    iterations: int
    method: str


@dataclass(frozen=True)
class _Attempt:
    converged: bool
    x: np.ndarray
    state: DeviceState
    iterations: int
    worst: int
    step: float


def device_voltages(system: DcSystem, x: np.ndarray) -> dict[str, np.ndarray]:
    """Junction voltages of every device in its own frame (npn/nmos) for unknowns ``x``.

    Keys: ``vbe``, ``vbc`` (BJT bank), ``vgs``, ``vds``, ``vbs`` (MOS bank).
    """
    xe = np.append(x, 0.0)
    out: dict[str, np.ndarray] = {}
    if system.bjt is not None:
        c, b, e = system.bjt.terminals
        pol = system.bjt.params.polarity
        out["vbe"] = pol * (xe[b] - xe[e])
        out["vbc"] = pol * (xe[b] - xe[c])
    if system.mos is not None:
        d, g, s, b = system.mos.terminals
        pol = system.mos.params.polarity
        out["vgs"] = pol * (xe[g] - xe[s])
        out["vds"] = pol * (xe[d] - xe[s])
        out["vbs"] = pol * (xe[b] - xe[s])
    return out


def initial_state(system: DcSystem, kind: str = "on") -> DeviceState:
    """A starting device state: ``"on"`` puts each junction at its critical voltage and each gate one
    volt above threshold; ``"off"`` puts every junction at 0 V.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.dc.system import build_system
    >>> s = build_system(parse_netlist("d\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn\\n"))
    >>> initial_state(s, "off").vbe.tolist()
    [0.0]
    """
    nb = system.bjt.size if system.bjt is not None else 0
    nm = system.mos.size if system.mos is not None else 0
    if kind == "off" or (nb == 0 and nm == 0):
        return DeviceState(np.zeros(nb), np.zeros(nb), np.zeros(nm))
    vbe = system.bjt.params.vcrit() if nb else np.zeros(0)
    vgs = system.mos.params.vto + 1.0 if nm else np.zeros(0)
    return DeviceState(np.asarray(vbe, dtype=float), np.zeros(nb), np.asarray(vgs, dtype=float))


def evaluate(system: DcSystem, volts: Mapping[str, np.ndarray]) -> tuple[BjtCurrents | None, MosCurrents | None]:
    """Device currents and derivatives at given junction voltages (device frames)."""
    bjt = bjt_currents(volts["vbe"], volts["vbc"], system.bjt.params) if system.bjt is not None else None
    mos = (mos_currents(volts["vgs"], volts["vds"], volts["vbs"], system.mos.params)
           if system.mos is not None else None)
    return bjt, mos


def residual(system: DcSystem, x: np.ndarray, rhs: np.ndarray | None = None) -> np.ndarray:
    """Nodal-equation residual at ``x``: net current leaving each node (A), then each branch equation (V).

    Zero at an exact solution; computed from the device models directly,
    without limiting or linearisation.
    """
    rhs = system.rhs() if rhs is None else rhs
    volts = device_voltages(system, x)
    xe = np.append(x, 0.0)
    out = system.matrix @ xe - rhs
    bjt, mos = evaluate(system, volts)
    if bjt is not None:
        c, b, e = system.bjt.terminals
        pol = system.bjt.params.polarity
        np.add.at(out, c, pol * bjt.ic)
        np.add.at(out, b, pol * bjt.ib)
        np.add.at(out, e, -pol * (bjt.ic + bjt.ib))
    if mos is not None:
        d, _, s, _ = system.mos.terminals
        pol = system.mos.params.polarity
        np.add.at(out, d, pol * mos.id)
        np.add.at(out, s, -pol * mos.id)
    return out[:-1]


def _limit(system: DcSystem, raw: dict[str, np.ndarray], state: DeviceState | None) -> dict[str, np.ndarray]:
    if state is None:
        return raw
    out = dict(raw)
    if system.bjt is not None:
        out["vbe"] = bjt_limit(raw["vbe"], state.vbe, system.bjt.params)
        out["vbc"] = bjt_limit(raw["vbc"], state.vbc, system.bjt.params, reverse=True)
    if system.mos is not None:
        out["vgs"] = mos_limit(raw["vgs"], state.vgs)
    return out


def _stamp(system: DcSystem, volts: dict[str, np.ndarray]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Companion-model stamps: (rows, cols, values) for the matrix and (rows, values) for the rhs."""
    rows: list[np.ndarray] = []
    cols: list[np.ndarray] = []
    vals: list[np.ndarray] = []
    rhs_rows: list[np.ndarray] = []
    rhs_vals: list[np.ndarray] = []
    bjt, mos = evaluate(system, volts)
    if bjt is not None:
        c, b, e = system.bjt.terminals
        pol = system.bjt.params.polarity
        vbe, vbc = volts["vbe"], volts["vbc"]
        ie = -(bjt.ic + bjt.ib)
        terms = (
            (c, bjt.ic, bjt.dic_dvbe, bjt.dic_dvbc),
            (b, bjt.ib, bjt.dib_dvbe, bjt.dib_dvbc),
            (e, ie, -(bjt.dic_dvbe + bjt.dib_dvbe), -(bjt.dic_dvbc + bjt.dib_dvbc)),
        )
        for row, current, g_be, g_bc in terms:
            rows += [row, row, row, row]
            cols += [b, e, b, c]
            vals += [g_be, -g_be, g_bc, -g_bc]
            rhs_rows.append(row)
            rhs_vals.append(-pol * (current - g_be * vbe - g_bc * vbc))
    if mos is not None:
        d, g, s, bb = system.mos.terminals
        pol = system.mos.params.polarity
        gm, gds, gmb = mos.did_dvgs, mos.did_dvds, mos.did_dvbs
        gs_ = gm + gds + gmb
        for row, sign in ((d, 1.0), (s, -1.0)):
            rows += [row, row, row, row]
            cols += [g, d, bb, s]
            vals += [sign * gm, sign * gds, sign * gmb, -sign * gs_]
            rhs_rows.append(row)
            eq = mos.id - gm * volts["vgs"] - gds * volts["vds"] - gmb * volts["vbs"]
            rhs_vals.append(-sign * pol * eq)
    if not rows:
        empty_i, empty_f = np.zeros(0, dtype=int), np.zeros(0)
        return (empty_i, empty_i, empty_f), (empty_i, empty_f)
    return (np.concatenate(rows), np.concatenate(cols), np.concatenate(vals)), (
        np.concatenate(rhs_rows), np.concatenate(rhs_vals))


def _tolerances(system: DcSystem, x_new: np.ndarray, x_old: np.ndarray, options: DcOptions) -> np.ndarray:
    n_nodes = len(system.node_index) - 1
    floor = np.full(system.size, options.abstol)
    floor[:n_nodes] = options.vntol
    return options.reltol * np.maximum(np.abs(x_new), np.abs(x_old)) + floor


def state_of(system: DcSystem, volts: dict[str, np.ndarray]) -> DeviceState:
    """The device state made of given junction voltages (keys of :func:`device_voltages`)."""
    empty = np.zeros(0)
    return DeviceState(volts.get("vbe", empty), volts.get("vbc", empty), volts.get("vgs", empty))


def newton(system: DcSystem, rhs: np.ndarray, x: np.ndarray, state: DeviceState | None, *,
           gshunt: float = 0.0, max_iterations: int = 100, options: DcOptions = DcOptions()) -> _Attempt:
    """Run Newton iterations from ``x``; the first linearisation uses ``state`` when given."""
    n = system.size
    base = system.matrix.copy()
    if gshunt:
        n_nodes = len(system.node_index) - 1
        base[np.arange(n_nodes), np.arange(n_nodes)] += gshunt
    previous = state
    worst, step = 0, np.inf
    for iteration in range(1, max_iterations + 1):
        raw = device_voltages(system, x)
        if iteration == 1 and state is not None:
            volts = {**raw, "vbe": state.vbe, "vbc": state.vbc, "vgs": state.vgs} if raw else raw
        else:
            volts = _limit(system, raw, previous)
        limited = any(volts[k] is not raw[k] and bool(np.any(np.abs(volts[k] - raw[k]) > 1e-15))
                      for k in ("vbe", "vbc", "vgs") if k in raw)
        (r, c, v), (rr, rv) = _stamp(system, volts)
        a = base.copy()
        b = rhs.copy()
        np.add.at(a, (r, c), v)
        np.add.at(b, rr, rv)
        try:
            x_new = np.linalg.solve(a[:n, :n], b[:n])
        except np.linalg.LinAlgError:
            return _Attempt(False, x, state_of(system, volts), iteration, worst, np.inf)
        if not np.all(np.isfinite(x_new)):
            return _Attempt(False, x, state_of(system, volts), iteration, worst, np.inf)
        dx = np.abs(x_new - x)
        ratio = dx / _tolerances(system, x_new, x, options)
        worst = int(np.argmax(ratio)) if n else 0
        step = float(dx[worst]) if n else 0.0
        previous = state_of(system, volts)
        x = x_new
        if iteration > 1 and not limited and (n == 0 or ratio[worst] <= 1.0):
            return _Attempt(True, x, state_of(system, device_voltages(system, x)), iteration, worst, step)
    return _Attempt(False, x, previous, max_iterations, worst, step)


def guess_vector(system: DcSystem, guess: Mapping[str, float] | None) -> np.ndarray:
    """Unknown vector holding the guessed node voltages (others zero), like a simulator's nodeset.

    Raises
    ------
    CircuitError
        If a guessed node does not exist.
    """
    x = np.zeros(system.size)
    for node, value in (guess or {}).items():
        index = system.node_index.get(node.lower())
        if index is None or index == system.size:
            raise CircuitError(f"guess for unknown node {node!r}", path=system.circuit.path)
        x[index] = float(value)
    return x


def solve(system: DcSystem, *, overrides: Mapping[str, float] | None = None, start: Solution | None = None,
          start_kind: str | None = None, guess: Mapping[str, float] | None = None,
          options: DcOptions = DcOptions()) -> Solution:
    """Find a DC solution of ``system`` (sources set by ``overrides`` where given).

    Tries Newton from ``start`` (a previous solution: warm start) if given,
    then from scratch (node voltages from ``guess``, zero elsewhere; device
    state ``start_kind``, by default the junction voltages the guess implies
    when there is one, else ``"on"``), then gmin stepping, then source
    stepping.

    Raises
    ------
    ConvergenceError
        Naming the node (or branch) still moving and the iteration reached.
    """
    rhs = system.rhs(1.0, overrides)
    zero = guess_vector(system, guess)
    if start_kind is None:
        start_kind = "guess" if guess else "on"
    first: _Attempt | None = None
    if start is not None:
        attempt = newton(system, rhs, start.x, start.state, max_iterations=options.max_iterations, options=options)
        if attempt.converged:
            return Solution(attempt.x, attempt.state, attempt.iterations, "newton (warm start)")
        first = attempt
    state = state_of(system, device_voltages(system, zero)) if start_kind == "guess" else initial_state(
        system, start_kind)
    attempt = newton(system, rhs, zero, state, max_iterations=options.max_iterations, options=options)
    if attempt.converged:
        return Solution(attempt.x, attempt.state, attempt.iterations, "newton")
    first = first or attempt
    for method in (_gmin_stepping, _source_stepping):
        found = method(system, rhs, "off" if start_kind == "off" else "on", options)
        if found is not None:
            return found
    raise _convergence_error(system, first)


def _gmin_stepping(system: DcSystem, rhs: np.ndarray, start_kind: str, options: DcOptions) -> Solution | None:
    x, state = np.zeros(system.size), initial_state(system, start_kind)
    total = 0
    gshunt = options.gmin_start
    factor = 10.0
    while True:
        attempt = newton(system, rhs, x, state, gshunt=gshunt, max_iterations=options.step_iterations,
                         options=options)
        total += attempt.iterations
        if attempt.converged:
            x, state = attempt.x, attempt.state
            if gshunt == 0.0:
                return Solution(x, state, total, "gmin stepping")
            gshunt = gshunt / factor if gshunt / factor >= 1e-13 else 0.0
            continue
        if gshunt == options.gmin_start or factor < 1.01:
            return None
        # back off: take a smaller step down from the last converged shunt
        last = gshunt * factor if gshunt else 1e-13
        factor = np.sqrt(factor)
        gshunt = last / factor


def _source_stepping(system: DcSystem, rhs: np.ndarray, start_kind: str, options: DcOptions) -> Solution | None:
    x, state = np.zeros(system.size), initial_state(system, "off")
    scale, step, total = 0.0, 0.1, 0
    while scale < 1.0:
        target = min(1.0, scale + step)
        attempt = newton(system, rhs * target, x, state, max_iterations=options.step_iterations, options=options)
        total += attempt.iterations
        if attempt.converged:
            x, state, scale = attempt.x, attempt.state, target
            step = min(step * 2.0, 0.25)
        else:
            step /= 2.0
            if step < options.source_min_step:
                return None
    return Solution(x, state, total, "source stepping")


def power_up(system: DcSystem, options: DcOptions = DcOptions()) -> Solution:
    """Ramp every source up from zero with all devices off: the path a circuit takes at power-up.

    Raises
    ------
    ConvergenceError
        When the ramp cannot continue.
    """
    found = _source_stepping(system, system.rhs(), "off", options)
    if found is None:
        raise ConvergenceError("source stepping from zero did not converge", path=system.circuit.path)
    return found


def _convergence_error(system: DcSystem, attempt: _Attempt) -> ConvergenceError:
    name = system.unknowns[attempt.worst] if system.size else "?"
    n_nodes = len(system.node_index) - 1
    what = f"node {name!r}" if attempt.worst < n_nodes else f"branch current {name}"
    line = None
    bare = name[2:-1].lower() if name.startswith("I(") else name
    for element in system.circuit.elements:
        if (attempt.worst < n_nodes and name in element.nodes) or element.key == bare:
            line = element.line
            break
    return ConvergenceError(
        f"no DC operating point: Newton, gmin stepping and source stepping failed; {what} was still moving "
        f"by {attempt.step:.3g} at iteration {attempt.iterations}",
        path=system.circuit.path,
        line=line,
    )
