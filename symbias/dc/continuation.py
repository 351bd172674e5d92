"""Solve every point of a sweep in a few batches, each point warm-started from solved neighbours.

Fourth step of the DC side, under :mod:`symbias.dc.sweep`.  A sweep is
solved coarse to fine: the first point from scratch (or a guess), the last
point from the first, then the points on a grid of stride ``8**k``, then
``8**(k-1)``, ... down to every point; each level is one batched solve whose
samples start from the linear interpolation of the solved points around
them.  This is continuation - every point starts next to a solution on the
same branch - so a self-biased cell or a bandgap core stays on its
conducting state along the sweep, while the work is a handful of batched
Newton runs instead of one run per point.

On the coarse levels only the warm start is accepted (a point that would
need a fresh start is left for a finer level, with closer neighbours); on
the last level the whole solve chain of :mod:`symbias.dc.stepping` applies,
and a point that still fails is retried from its nearest solved neighbour
before the sweep gives up.

Examples
--------
>>> import numpy as np
>>> from symbias.netlist import parse_netlist
>>> from symbias.dc.system import build_system
>>> c = parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn (IS=1e-16)\\n")
>>> grid = np.linspace(1e-4, 1e-3, 50)
>>> found = solve_sweep(build_system(c), grid, {"I1": grid})
>>> found.size, bool(found.converged.all())
(50, True)
"""

from __future__ import annotations

from typing import Any, Callable, Mapping

import numpy as np

from ..errors import ConvergenceError
from .newton import DcOptions
from .stepping import BatchSolution, solve_batch
from .system import DcSystem

__all__ = ["solve_sweep", "levels", "LEVEL_FACTOR"]

#: Each level of the coarse-to-fine continuation has this many times the points of the one before.
LEVEL_FACTOR = 8


def levels(count: int, factor: int = LEVEL_FACTOR) -> list[int]:
    """Strides of the continuation levels for ``count`` points, coarsest first, ending with 1.

    Examples
    --------
    >>> levels(2001), levels(3)
    ([512, 64, 8, 1], [1])
    """
    stride = 1
    while stride * factor < count - 1:
        stride *= factor
    out = []
    while stride >= 1:
        out.append(stride)
        stride //= factor
    return out


def _subset(overrides: Mapping[str, np.ndarray] | None, points: np.ndarray) -> dict[str, Any] | None:
    if not overrides:
        return None
    return {name: (value[points] if np.ndim(value) else value) for name, value in overrides.items()}


class _Sweep:
    """The points solved so far and their solutions."""

    def __init__(self, system: DcSystem, grid: np.ndarray):
        count = len(grid)
        self.grid = grid
        self.x = np.zeros((count, system.size))
        self.state = [np.zeros((count, bank.size, len(bank.model.controls))) for bank in system.banks]
        self.iterations = np.zeros(count, dtype=int)
        self.methods = np.full(count, "", dtype=object)
        self.solved = np.zeros(count, dtype=bool)

    def keep(self, points: np.ndarray, found: BatchSolution) -> np.ndarray:
        """Store the converged samples; return the points that failed."""
        ok = found.converged
        good = points[ok]
        self.x[good] = found.x[ok]
        for target, value in zip(self.state, found.state):
            target[good] = value[ok]
        self.iterations[good] = found.iterations[ok]
        self.methods[good] = np.asarray(found.methods, dtype=object)[ok]
        self.solved[good] = True
        return points[~ok]

    def seeds(self, points: np.ndarray) -> np.ndarray:
        """Linear interpolation (in the swept value) between the solved points around each of ``points``."""
        known = np.flatnonzero(self.solved)
        place = np.searchsorted(known, points)
        left = known[np.clip(place - 1, 0, known.size - 1)]
        right = known[np.clip(place, 0, known.size - 1)]
        left = np.where(left > points, right, left)
        right = np.where(right < points, left, right)
        span = self.grid[right] - self.grid[left]
        weight = np.where(span != 0, (self.grid[points] - self.grid[left]) / np.where(span != 0, span, 1.0), 0.0)
        return self.x[left] + weight[:, None] * (self.x[right] - self.x[left])

    def result(self) -> BatchSolution:
        return BatchSolution(self.x, tuple(self.state), self.iterations, tuple(self.methods.tolist()))


def solve_sweep(system: DcSystem, grid: np.ndarray, overrides: Mapping[str, np.ndarray] | None = None, *,
                guess: Mapping[str, float] | None = None, options: DcOptions = DcOptions(),
                progress: Callable[[int, int], None] | None = None, variable: str = "point") -> BatchSolution:
    """Solve every point of a sweep (see the module docstring).

    ``grid`` holds the swept values (for the interpolation); ``overrides``
    the source values per point, arrays of the grid's length; the system
    may itself be batched over the points (a temperature sweep).

    Raises
    ------
    ConvergenceError
        For the first point that no start reaches, naming the swept value.
    """
    grid = np.asarray(grid, dtype=float)
    count = len(grid)
    sweep = _Sweep(system, grid)

    def run(points: np.ndarray, start, fallback: bool) -> np.ndarray:
        found = solve_batch(system, overrides=_subset(overrides, points), start=start, guess=guess, options=options,
                            index=points, fallback=fallback)
        failed = sweep.keep(points, found)
        if fallback and failed.size:
            _, error = found.errors[0]
            value = grid[failed[0]]
            raise ConvergenceError(f"{variable} = {value:g}: {error.reason}", error.path, error.line)
        return failed

    run(np.array([0]), None, True)
    for stride in levels(count):
        targets = np.arange(0, count, stride)
        if stride > 1 and not sweep.solved[count - 1]:
            targets = np.append(targets, count - 1)
        targets = targets[~sweep.solved[targets]]
        if targets.size:
            failed = run(targets, sweep.seeds(targets), fallback=False)
            if stride == 1:
                for point in failed:  # the last resort: from the nearest solved neighbour, the whole chain
                    run(np.array([point]), sweep.seeds(np.array([point])), fallback=True)
        if progress is not None:
            progress(int(sweep.solved.sum()), count)
    return sweep.result()
