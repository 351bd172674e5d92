"""The DC solve chain, per sample over a batch: warm start, Newton, gmin stepping, source stepping.

Second step of the DC side, above :mod:`symbias.dc.newton`.  For each sample
that has not converged yet, in order:

1. Newton from a previous solution (``start``: sweeps, Monte Carlo from the
   nominal point);
2. Newton from node voltages 0 (or a ``guess``) with the devices in their
   starting state (``"on"`` by default);
3. gmin stepping: a conductance from every node to ground, 1 mS down to 0,
   decade by decade (smaller steps after a failure), each sample on its own
   schedule;
4. source stepping: every source ramped from 0 to its value, adaptive step,
   each sample on its own schedule.

A sample that still fails is reported by index with its cause
(:class:`~symbias.errors.ConvergenceError` naming the node still moving);
it is never silently kept.  :func:`solve` is the one-sample case.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.dc.system import build_system
>>> s = build_system(parse_netlist("d\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn (IS=1e-16)\\n"))
>>> round(float(solve(s).x[0]), 4)
0.774
>>> found = solve_batch(s, overrides={"I1": [1e-4, 1e-3]})
>>> found.x[:, 0].round(4).tolist(), found.methods
([0.7144, 0.774], ('newton', 'newton'))
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import numpy as np

from ..errors import CircuitError, ConvergenceError, SymbiasError
from .heap import keep_heap_headroom
from .newton import Attempt, DcOptions, guess_vector, newton, rows_of
from .system import DcSystem

__all__ = ["Solution", "BatchSolution", "solve", "solve_batch", "power_up"]


@dataclass(frozen=True)
class Solution:
    """A converged DC solution: unknown vector, device state (per bank ``(ndev, C)``), iterations, method."""

    x: np.ndarray
    state: tuple[np.ndarray, ...]
    iterations: int
    method: str


@dataclass(frozen=True)
class BatchSolution:
    """The DC solutions of K samples.

    Attributes
    ----------
    x : ndarray
        ``(K, n)`` unknowns (those of a failed sample are its last iterate).
    state : tuple of ndarray
        Per bank ``(K, ndev, C)`` device controls.
    iterations : ndarray of int
    methods : tuple of str
        How each sample got there (empty for a failed one).
    errors : tuple of (int, SymbiasError)
        The failed samples and why.
    """

    x: np.ndarray
    state: tuple[np.ndarray, ...]
    iterations: np.ndarray
    methods: tuple[str, ...]
    errors: tuple[tuple[int, SymbiasError], ...] = ()

    @property
    def size(self) -> int:
        """Number of samples K."""
        return self.x.shape[0]

    @property
    def converged(self) -> np.ndarray:
        """``(K,)`` True where a sample converged."""
        ok = np.ones(self.size, dtype=bool)
        ok[[i for i, _ in self.errors]] = False
        return ok

    def solution(self, i: int) -> Solution:
        """The solution of sample ``i``.

        Raises
        ------
        SymbiasError
            The error that sample failed with.
        """
        for index, error in self.errors:
            if index == i:
                raise error
        return Solution(self.x[i], tuple(s[i] for s in self.state), int(self.iterations[i]), self.methods[i])


class _Collector:
    """Accumulates per-sample outcomes across the stages of the chain."""

    def __init__(self, system: DcSystem, count: int):
        n = system.size
        self.x = np.zeros((count, n))
        self.state = [np.zeros((count, bank.size, len(bank.model.controls))) for bank in system.banks]
        self.iterations = np.zeros(count, dtype=int)
        self.methods = np.full(count, "", dtype=object)
        self.first: dict[str, np.ndarray] = {"worst": np.zeros(count, dtype=int), "step": np.full(count, np.inf),
                                             "iterations": np.zeros(count, dtype=int)}
        self.tried = np.zeros(count, dtype=bool)

    def take(self, where: np.ndarray, attempt: Attempt, method: str, first: bool = True) -> np.ndarray:
        ok = attempt.converged
        good = where[ok]
        self.x[good] = attempt.x[ok]
        for target, value in zip(self.state, attempt.state):
            target[good] = value[ok]
        self.iterations[good] = attempt.iterations[ok]
        self.methods[good] = method
        if first:
            fresh = ~self.tried[where] & ~ok
            for key in ("worst", "step", "iterations"):
                self.first[key][where[fresh]] = getattr(attempt, key)[fresh]
            self.tried[where] = True
        return where[~ok]

    def finish(self, system: DcSystem, failed: np.ndarray, attempts: dict[int, np.ndarray]) -> BatchSolution:
        errors = tuple((int(i), _convergence_error(system, int(self.first["worst"][i]), float(self.first["step"][i]),
                                                   int(self.first["iterations"][i]))) for i in failed)
        for i in failed:
            self.x[i] = attempts.get(int(i), self.x[i])
        return BatchSolution(self.x, tuple(self.state), self.iterations, tuple(self.methods.tolist()), errors)


def _start_vector(start, count: int, n: int) -> np.ndarray | None:
    if start is None:
        return None
    x = np.atleast_2d(np.asarray(start.x if hasattr(start, "x") else start, dtype=float))
    return np.broadcast_to(x, (count, n)).copy()


def solve_batch(system: DcSystem, *, overrides: Mapping[str, object] | None = None, start=None,
                start_kind: str | None = None, guess: Mapping[str, float] | None = None,
                options: DcOptions = DcOptions(), index: np.ndarray | None = None,
                fallback: bool = True) -> BatchSolution:
    """Find a DC solution of every sample of ``system`` (sources set by ``overrides``, arrays allowed).

    ``start`` is a :class:`Solution`, a :class:`BatchSolution` or an array of
    unknowns (one vector for all samples, or one per sample) to start from.
    The batch size is the largest of the system's (or of ``index``, the
    positions in the system's batch to solve), the overrides' and the
    start's.  With ``fallback=False`` only the warm start is tried (sweep
    continuation: a point that needs a fresh start may land on another
    branch).  Failed samples are listed in :attr:`BatchSolution.errors`.
    """
    rhs = system.rhs(1.0, overrides, index)
    n = system.size
    start_rows = 0 if start is None else np.atleast_2d(np.asarray(getattr(start, "x", start))).shape[0]
    count = max(system.batch if index is None else len(index), rhs.shape[0], start_rows)
    keep_heap_headroom(count)
    positions = np.arange(count) if index is None else np.asarray(index, dtype=int)
    collect = _Collector(system, count)
    todo = np.arange(count)
    last: dict[int, np.ndarray] = {}
    x_start = _start_vector(start, count, n)
    if x_start is not None:
        attempt = newton(system, rhs, x_start, index=positions, max_iterations=options.max_iterations,
                         options=options)
        todo = collect.take(todo, attempt, "newton (warm start)")
        if not fallback:
            return collect.finish(system, todo, last)
    if todo.size:
        kind = start_kind or ("guess" if guess else "on")
        x0 = np.broadcast_to(guess_vector(system, guess), (todo.size, n)).copy()
        attempt = newton(system, rows_of(rhs, todo), x0, start_kind=None if kind == "guess" else kind,
                         index=positions[todo], max_iterations=options.max_iterations, options=options)
        last.update(zip(todo.tolist(), attempt.x))
        todo = collect.take(todo, attempt, "newton")
    if todo.size:
        attempt = _gmin_stepping(system, rows_of(rhs, todo), positions[todo], "off" if start_kind == "off" else "on",
                                 options)
        todo = collect.take(todo, attempt, "gmin stepping", first=False)
    if todo.size:
        attempt = _source_stepping(system, rows_of(rhs, todo), positions[todo], options)
        todo = collect.take(todo, attempt, "source stepping", first=False)
    return collect.finish(system, todo, last)


def solve(system: DcSystem, *, overrides: Mapping[str, float] | None = None, start: Solution | None = None,
          start_kind: str | None = None, guess: Mapping[str, float] | None = None,
          options: DcOptions = DcOptions()) -> Solution:
    """Find a DC solution of a one-sample ``system`` (see the module docstring for the chain).

    Raises
    ------
    ConvergenceError
        Naming the node (or branch) still moving and the iteration reached.
    CircuitError
        For a batched system (use :func:`solve_batch`).
    """
    found = solve_batch(system, overrides=overrides, start=start, start_kind=start_kind, guess=guess,
                        options=options)
    if found.size != 1:
        raise CircuitError(f"solve() takes one sample, the system holds {found.size}: use solve_batch()",
                           path=system.circuit.path)
    return found.solution(0)


def _blank_state(system: DcSystem, count: int) -> list[np.ndarray]:
    return [np.zeros((count, bank.size, len(bank.model.controls))) for bank in system.banks]


def _gmin_stepping(system: DcSystem, rhs: np.ndarray, todo: np.ndarray, kind: str, options: DcOptions) -> Attempt:
    """Each sample: shunt every node by 1 mS, solve, divide the shunt by ten, ...; back off after a failure."""
    count = todo.size
    x = np.zeros((count, system.size))
    state = _blank_state(system, count)
    fresh = np.ones(count, dtype=bool)
    success = np.zeros(count, dtype=bool)
    gshunt = np.full(count, options.gmin_start)
    factor = np.full(count, 10.0)
    total = np.zeros(count, dtype=int)
    running = np.arange(count)
    while running.size:
        attempt = newton(system, rows_of(rhs, running), x[running], start_kind=kind, fresh=fresh[running],
                         index=todo[running], gshunt=gshunt[running], max_iterations=options.step_iterations,
                         options=options)
        total[running] += attempt.iterations
        ok = attempt.converged
        good, bad = running[ok], running[~ok]
        x[good] = attempt.x[ok]
        for target, value in zip(state, attempt.state):
            target[good] = value[ok]
        fresh[good] = False
        finished = gshunt[good] == 0.0
        success[good[finished]] = True
        reduced = gshunt[good] / factor[good]
        gshunt[good] = np.where(reduced >= 1e-13, reduced, 0.0)
        give_up = (gshunt[bad] == options.gmin_start) | (factor[bad] < 1.01)
        # back off: a smaller step down from the last converged shunt
        last = np.where(gshunt[bad] != 0.0, gshunt[bad] * factor[bad], 1e-13)
        smaller = np.sqrt(factor[bad])
        gshunt[bad] = np.where(give_up, gshunt[bad], last / smaller)
        factor[bad] = np.where(give_up, factor[bad], smaller)
        running = np.sort(np.concatenate([good[~finished], bad[~give_up]]))
    return Attempt(success, x, tuple(state), total, np.zeros(count, dtype=int), np.full(count, np.inf))


def _source_stepping(system: DcSystem, rhs: np.ndarray, todo: np.ndarray, options: DcOptions) -> Attempt:
    """Each sample: ramp every source up from zero with devices off, doubling the step after a success."""
    count = todo.size
    x = np.zeros((count, system.size))
    state = _blank_state(system, count)
    fresh = np.ones(count, dtype=bool)
    scale = np.zeros(count)
    step = np.full(count, 0.1)
    total = np.zeros(count, dtype=int)
    failed = np.zeros(count, dtype=bool)
    running = np.arange(count)
    while running.size:
        target = np.minimum(1.0, scale[running] + step[running])
        attempt = newton(system, rows_of(rhs, running) * target[:, None], x[running], start_kind="off",
                         fresh=fresh[running], index=todo[running], max_iterations=options.step_iterations,
                         options=options)
        total[running] += attempt.iterations
        ok = attempt.converged
        good, bad = running[ok], running[~ok]
        x[good] = attempt.x[ok]
        for target_state, value in zip(state, attempt.state):
            target_state[good] = value[ok]
        fresh[good] = False
        scale[good] = target[ok]
        step[good] = np.minimum(step[good] * 2.0, 0.25)
        step[bad] /= 2.0
        failed[bad[step[bad] < options.source_min_step]] = True
        running = running[(scale[running] < 1.0) & ~failed[running]]
    return Attempt(~failed, x, tuple(state), total, np.zeros(count, dtype=int), np.full(count, np.inf))


def power_up(system: DcSystem, options: DcOptions = DcOptions()) -> Solution:
    """Ramp every source up from zero with all devices off: the path a circuit takes at power-up.

    Raises
    ------
    ConvergenceError
        When the ramp cannot continue.
    """
    found = _source_stepping(system, system.rhs(), np.zeros(1, dtype=int), options)
    if not found.converged[0]:
        raise ConvergenceError("source stepping from zero did not converge", path=system.circuit.path)
    return Solution(found.x[0], tuple(s[0] for s in found.state), int(found.iterations[0]), "source stepping")


def _convergence_error(system: DcSystem, worst: int, step: float, iterations: int) -> ConvergenceError:
    name = system.unknowns[worst] if system.size else "?"
    what = f"node {name!r}" if worst < system.node_count else f"branch current {name}"
    line = None
    bare = name[2:-1].lower() if name.startswith("I(") else name
    for element in system.circuit.elements:
        if (worst < system.node_count and name in element.nodes) or element.key == bare:
            line = element.line
            break
    return ConvergenceError(
        f"no DC operating point: Newton, gmin stepping and source stepping failed; {what} was still moving "
        f"by {step:.3g} at iteration {iterations}",
        path=system.circuit.path,
        line=line,
    )
