"""Newton's method on the nodal equations, batched: one call iterates K operating points at once.

Second step of the DC side: :class:`~symbias.dc.system.DcSystem` -> an
:class:`Attempt` per sample.  Each iteration linearises every device at its
present controlling voltages (after the junction limiting its model
defines), stamps the linear companion models of all samples, and solves the
``(A, n, n)`` stack of linear systems in one ``numpy.linalg.solve`` call.  A
sample stops when no limiting was needed and every unknown moved by less
than ``reltol * |x| + vntol`` (voltages) or ``+ abstol`` (currents); samples
that converge (or fail: singular matrix, non-finite step) drop out of the
active set, so the stragglers cost only their own work.  The fall-backs
(gmin and source stepping) and the whole solve chain are in
:mod:`symbias.dc.stepping`.

Devices are reached only through the interface of
:mod:`symbias.devices.nonlinear` (one :class:`~symbias.dc.system.DeviceBank`
per kind); a device "state" is the array of its controlling voltages at which
it was last linearised, one ``(A, ndev, C)`` array per bank.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.dc.system import build_system
>>> s = build_system(parse_netlist("d\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn (IS=1e-16)\\n"))
>>> attempt = newton(s, s.rhs(), np.zeros((1, 1)), start_kind="on")
>>> bool(attempt.converged[0]), round(float(attempt.x[0, 0]), 4)
(True, 0.774)
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np

from ..devices.nonlinear import take
from ..errors import CircuitError
from .sparse_solve import structured_solve
from .system import DcSystem

__all__ = ["DcOptions", "Attempt", "newton", "device_controls", "bank_numbers", "initial_state", "residual",
           "guess_vector", "rows_of", "START_KINDS"]

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
class Attempt:
    """What a batched Newton run reached, per sample (arrays of length A).

    Attributes
    ----------
    converged : ndarray of bool
    x : ndarray
        ``(A, n)`` last unknowns (the converged ones where converged).
    state : tuple of ndarray
        Per bank ``(A, ndev, C)``: the controls at ``x`` where converged, else
        those of the last linearisation.
    iterations : ndarray of int
    worst : ndarray of int
        Unknown that moved most (relative to its tolerance) in the last step.
    step : ndarray
        How far it moved (inf after a singular or non-finite step).
    """

    converged: np.ndarray
    x: np.ndarray
    state: tuple[np.ndarray, ...]
    iterations: np.ndarray
    worst: np.ndarray
    step: np.ndarray


def rows_of(array: np.ndarray, index: np.ndarray) -> np.ndarray:
    """``array[index]`` along the batch axis, or ``array`` itself when it is shared (length 1).

    Examples
    --------
    >>> rows_of(np.zeros((1, 3)), np.array([4, 7])).shape
    (1, 3)
    """
    return array if array.shape[0] == 1 else array[index]


def device_controls(system: DcSystem, x: np.ndarray) -> tuple[np.ndarray, ...]:
    """Controlling voltages of every bank in the device frame for unknowns ``x`` of shape ``(A, n)``."""
    xe = np.concatenate([np.atleast_2d(x), np.zeros((np.atleast_2d(x).shape[0], 1))], axis=1)
    return tuple(_controls(bank, xe) for bank in system.banks)


def _controls(bank, xe: np.ndarray) -> np.ndarray:
    return bank.sign * (xe[:, bank.plus] - xe[:, bank.minus])


def bank_numbers(system: DcSystem, index: np.ndarray) -> tuple:
    """The numbers of every bank for the samples at positions ``index`` of the system's batch."""
    if system.batch == 1:
        return tuple(bank.numbers for bank in system.banks)
    return tuple(take(bank.numbers, index) for bank in system.banks)


def initial_state(system: DcSystem, kind: str = "on", x: np.ndarray | None = None,
                  index: np.ndarray | None = None) -> tuple[np.ndarray, ...]:
    """A starting device state: ``"on"`` puts each junction at its critical voltage (a MOS gate one volt
    above threshold), ``"off"`` every junction at 0 V; other controls are those ``x`` gives.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.dc.system import build_system
    >>> s = build_system(parse_netlist("d\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn\\n"))
    >>> initial_state(s, "off")[0].tolist()
    [[[0.0, 0.0]]]
    """
    x = np.zeros((1, system.size)) if x is None else np.atleast_2d(x)
    index = np.arange(x.shape[0]) if index is None else index
    raw = device_controls(system, x)
    return tuple(bank.model.start(numbers, kind, r)
                 for bank, numbers, r in zip(system.banks, bank_numbers(system, index), raw))


def _floor(system: DcSystem, options: DcOptions) -> np.ndarray:
    floor = np.full(system.size, options.abstol)
    floor[:system.node_count] = options.vntol
    return floor


#: Multiply-adds per matrix product below which OpenBLAS stays on one thread (its default threshold):
#: the products here are tiny per sample, gain nothing from threads and, on a busy machine, lose much.
_BLOCK_WORK = 1 << 18


def _product(values: np.ndarray, scatter: np.ndarray) -> np.ndarray:
    """``values @ scatter`` in row blocks small enough for single-threaded BLAS."""
    rows = max(1, _BLOCK_WORK // max(1, scatter.size))
    if values.shape[0] <= rows:
        return values @ scatter
    out = np.empty((values.shape[0], scatter.shape[1]))
    for start in range(0, values.shape[0], rows):
        np.matmul(values[start:start + rows], scatter, out=out[start:start + rows])
    return out


def _assemble(system: DcSystem, matrix: np.ndarray, numbers: tuple, rhs: np.ndarray, volts: Sequence[np.ndarray],
              gshunt: np.ndarray | None, count: int) -> tuple[np.ndarray, np.ndarray]:
    """The linearised nodal equations ``a x = b`` of ``count`` samples at device controls ``volts``."""
    n = system.size
    a = np.array(np.broadcast_to(matrix, (count, n, n)))
    b = np.array(np.broadcast_to(rhs, (count, n)))
    layout = system.layout
    if volts and layout.matrix_targets.size:
        jacobians, currents = [], []
        for bank, own, v in zip(system.banks, numbers, volts):
            current, jacobian = bank.model.evaluate(own, v)  # current terminals only
            jacobians.append(jacobian.reshape(count, -1))
            linear = current.copy()
            for c in range(v.shape[-1]):  # minus the Jacobian times the controls, one control at a time
                linear -= jacobian[..., c] * v[..., None, c]
            currents.append(linear.reshape(count, -1))
        flat = jacobians[0] if len(jacobians) == 1 else np.concatenate(jacobians, axis=1)
        a.reshape(count, -1)[:, layout.matrix_targets] += _product(flat, layout.matrix_scatter)
        flat = currents[0] if len(currents) == 1 else np.concatenate(currents, axis=1)
        b[:, layout.rhs_targets] += _product(flat, layout.rhs_scatter)
    if gshunt is not None:
        diagonal = np.arange(system.node_count)
        a[:, diagonal, diagonal] += gshunt[:, None]
    return a, b


#: Batches at least this large are solved by elimination across the batch along the matrices' shared
#: sparsity pattern (:mod:`symbias.dc.sparse_solve`, one pivot order for every sample, checked sample by
#: sample); smaller ones, and samples the shared order does not suit, by LAPACK.
_SHARED_MIN_BATCH = 64


def _linear_solve(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Solve the stack ``a x = b``; a singular matrix fails its own sample only."""
    count, n = b.shape
    if count < _SHARED_MIN_BATCH or n == 0:
        return _lapack_solve(a, b)
    x, ok = structured_solve(a, b)
    if not ok.all():
        redo = np.flatnonzero(~ok)
        x[redo], ok[redo] = _lapack_solve(a[redo], b[redo])
    return x, ok


def _lapack_solve(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    try:
        return np.linalg.solve(a, b[..., None])[..., 0], np.ones(b.shape[0], dtype=bool)
    except np.linalg.LinAlgError:
        x = np.full_like(b, np.nan)
        ok = np.zeros(b.shape[0], dtype=bool)
        for i in range(b.shape[0]):
            try:
                x[i] = np.linalg.solve(a[i], b[i])
                ok[i] = True
            except np.linalg.LinAlgError:
                ok[i] = False  # recorded as a failed sample by the caller
        return x, ok


class _Record:
    """Per-sample results of one Newton run, filled as samples finish."""

    def __init__(self, system: DcSystem, x: np.ndarray, max_iterations: int):
        count = x.shape[0]
        self.x = x.copy()
        self.converged = np.zeros(count, dtype=bool)
        self.iterations = np.full(count, max_iterations)
        self.worst = np.zeros(count, dtype=int)
        self.step = np.full(count, np.inf)
        self.state = [np.zeros((count, bank.size, len(bank.model.controls))) for bank in system.banks]

    def finish(self, where: np.ndarray, x, state, iterations, worst, step, converged: bool) -> None:
        self.x[where] = x
        self.converged[where] = converged
        self.iterations[where] = iterations
        self.worst[where] = worst
        self.step[where] = step
        for target, value in zip(self.state, state):
            target[where] = value

    def attempt(self) -> Attempt:
        return Attempt(self.converged, self.x, tuple(self.state), self.iterations, self.worst, self.step)


def newton(system: DcSystem, rhs: np.ndarray, x: np.ndarray, state: Sequence[np.ndarray] | None = None, *,
           start_kind: str | None = None, fresh: np.ndarray | None = None, index: np.ndarray | None = None,
           gshunt=None, max_iterations: int = 100, options: DcOptions = DcOptions()) -> Attempt:
    """Run Newton iterations from ``x`` (``(A, n)``) for A samples at once.

    Parameters
    ----------
    rhs : ndarray
        ``(A, n)`` or ``(1, n)`` right-hand sides.
    state : tuple of ndarray, optional
        Device controls for the first linearisation (default: those ``x`` gives).
    start_kind : {"on", "off"}, optional
        Take the first linearisation from the model's starting state instead
        (for the samples where ``fresh`` is true, default all).
    index : ndarray, optional
        Positions of the samples in the system's batch (default ``arange(A)``).
    gshunt : float or ndarray, optional
        Conductance from every node to ground (gmin stepping), per sample.
    """
    count, n = x.shape
    index = np.arange(count) if index is None else np.asarray(index)
    record = _Record(system, x, max_iterations)
    shunt = None if gshunt is None else np.broadcast_to(np.asarray(gshunt, dtype=float), (count,)).copy()
    active = np.arange(count)
    xe = np.concatenate([x, np.zeros((count, 1))], axis=1)
    matrix, numbers = rows_of(system.matrix, index), bank_numbers(system, index)
    rows = rhs
    previous = _first_state(system, numbers, xe, state, start_kind, fresh)
    floor = _floor(system, options)
    worst = np.zeros(count, dtype=int)
    step = np.zeros(count)
    for iteration in range(1, max_iterations + 1):
        volts, limited = _linearisation(system, numbers, xe, previous, iteration)
        a, b = _assemble(system, matrix, numbers, rows, volts, shunt, len(active))
        x_new, ok = _linear_solve(a, b)
        x_old = xe[:, :n]
        ok, new_worst, step, small = _measure(x_new, x_old, ok, floor, options)
        done = ok & (iteration > 1) & ~limited & small
        failed = ~ok
        if failed.any():
            record.finish(active[failed], x_old[failed], [v[failed] for v in volts], iteration, worst[failed],
                          np.inf, False)
        if done.any():
            settled = np.concatenate([x_new[done], np.zeros((int(done.sum()), 1))], axis=1)
            record.finish(active[done], x_new[done], [_controls(bank, settled) for bank in system.banks], iteration,
                          new_worst[done], step[done], True)
        xe[:, :n] = np.where(ok[:, None], x_new, x_old)
        previous, worst = volts, new_worst
        keep = ~(done | failed)
        if not keep.all():
            active, xe, worst, step = active[keep], xe[keep], worst[keep], step[keep]
            previous = [p[keep] for p in previous]
            rows = rows_of(rows, keep)
            shunt = None if shunt is None else shunt[keep]
            matrix, numbers = rows_of(system.matrix, index[active]), bank_numbers(system, index[active])
        if not active.size:
            break
    if active.size:
        record.finish(active, xe[:, :n], previous, max_iterations, worst, step, False)
    return record.attempt()


def _first_state(system: DcSystem, numbers: tuple, xe: np.ndarray, state, start_kind: str | None,
                 fresh: np.ndarray | None):
    """Device controls for the first linearisation: given, a starting kind's, or None (those ``xe`` gives)."""
    previous = None if state is None else [np.asarray(s, dtype=float) for s in state]
    if start_kind is None:
        return previous
    raw = [_controls(bank, xe) for bank in system.banks]
    started = [bank.model.start(num, start_kind, r) for bank, num, r in zip(system.banks, numbers, raw)]
    return started if fresh is None else [np.where(fresh[:, None, None], s, r) for s, r in zip(started, raw)]


def _linearisation(system: DcSystem, numbers: tuple, xe: np.ndarray, previous, iteration: int):
    """Controls to linearise at (limited against the previous ones) and which samples were limited."""
    raw = [_controls(bank, xe) for bank in system.banks]
    if iteration == 1 and previous is not None:
        volts = previous
    elif previous is None:
        volts = raw
    else:
        volts = [bank.model.limit(num, r, p) for bank, num, r, p in zip(system.banks, numbers, raw, previous)]
    limited = np.zeros(xe.shape[0], dtype=bool)
    for v, r in zip(volts, raw):
        if v is not r:
            limited |= (np.abs(v - r) > 1e-15).reshape(xe.shape[0], -1).any(axis=1)
    return volts, limited


def _measure(x_new: np.ndarray, x_old: np.ndarray, ok: np.ndarray, floor: np.ndarray, options: DcOptions):
    """Finite steps, the unknown that moved most against its tolerance, how far, and whether all moved little."""
    count, n = x_new.shape
    ok = ok & np.all(np.isfinite(x_new), axis=1)
    if not n:
        return ok, np.zeros(count, dtype=int), np.zeros(count), np.ones(count, dtype=bool)
    with np.errstate(invalid="ignore", over="ignore"):  # a non-finite step fails its sample
        dx = np.abs(x_new - x_old)
        ratio = dx / (options.reltol * np.maximum(np.abs(x_new), np.abs(x_old)) + floor)
    worst = np.argmax(ratio, axis=1)
    picked = np.arange(count)
    return ok, worst, dx[picked, worst], ratio[picked, worst] <= 1.0


def residual(system: DcSystem, x: np.ndarray, rhs: np.ndarray | None = None) -> np.ndarray:
    """Nodal-equation residual at ``x``: net current leaving each node (A), then each branch equation (V).

    Zero at an exact solution; computed from the device models directly,
    without limiting or linearisation.  ``x`` may be one vector ``(n,)`` or a
    stack ``(A, n)`` (the result has the same shape).
    """
    single = np.ndim(x) == 1
    x2 = np.atleast_2d(np.asarray(x, dtype=float))
    count, n = x2.shape
    rhs = system.rhs() if rhs is None else np.atleast_2d(rhs)
    out = np.concatenate([np.einsum("bij,aj->ai", system.matrix, x2) if system.matrix.shape[0] == 1
                          else np.einsum("aij,aj->ai", system.matrix, x2), np.zeros((count, 1))], axis=1)
    out[:, :n] -= rhs
    xe = np.concatenate([x2, np.zeros((count, 1))], axis=1)
    index = np.arange(count)
    for bank, numbers in zip(system.banks, bank_numbers(system, index)):
        current, _ = bank.model.evaluate(numbers, _controls(bank, xe))
        signed = bank.polarity[:, None] * current  # (A, ndev, R)
        for r, t in enumerate(bank.model.current_terminals):
            np.add.at(out, (slice(None), bank.terminals[:, t]), signed[:, :, r])
    return out[0, :n] if single else out[:, :n]


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
