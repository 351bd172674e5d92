"""The term search: the fewest terms whose worst relative error is within the tolerance.

Fourth level of :mod:`symbias.approx` (term values + box -> kept term sets).
A candidate keeps some numerator terms N' and denominator terms D'; its error
is ``|(N'/N)/(D'/D) - 1|``.  Candidates of 2 to 8 terms, drawn from the 10 most
important terms of each side (importance: the largest share of a term in its
sum over the points), are screened exhaustively in order of size; among those
within the tolerance the one with the fewest symbols, then the smallest
error, is verified at every point and refined by a compass search from the
worst points (axis and, up to 8 factors, diagonal moves, which follow a
check boundary).  Beyond that, or when the screened sets grow too many,
terms are added greedily (the one that lowers the worst error most); the
exact form itself (error 0) is the last resort.

Examples
--------
>>> subset_sums(np.array([[1.0, 2.0, 4.0]]), [(0, 1), (1, 2)]).tolist()
[[3.0, 6.0]]
"""

from __future__ import annotations

import itertools
import math
from typing import Sequence

import numpy as np

from .arrays import relative_errors
from .magnitudes import MagnitudeModel
from .terms import TermValues

__all__ = ["TermSearch", "subset_sums", "pair_errors"]

_LARGEST_SEARCH = 8  # numerator plus denominator terms tried exhaustively
_POOL = 10  # terms per side in the exhaustive search
_GREEDY_POOL = 30  # terms per side the greedy continuation may add
_PAIR_BUDGET = 60_000  # candidate (numerator, denominator) sets screened per size before going greedy
_SCREEN_POINTS = 1200  # points used to screen candidates before full verification


class TermSearch:
    """Exhaustive search over small term sets, then greedy growth; local to one call.

    :meth:`run` returns ``(kept, error, worst unit point, refinement points)``
    where ``kept`` holds the indices of the kept numerator and denominator
    terms.
    """

    def __init__(self, terms: TermValues, tolerance: float, model: MagnitudeModel, unit: np.ndarray):
        self.terms = terms
        self.tolerance = tolerance
        self.model = model
        self.unit = unit
        n = len(unit)
        self.screen = np.arange(n) if n <= _SCREEN_POINTS else np.unique(
            np.concatenate([np.arange(min(n, _SCREEN_POINTS // 2)),
                            np.random.default_rng(1).choice(n, _SCREEN_POINTS // 2, replace=False)]))
        self.order = [np.argsort(-terms.importance[s], kind="stable") for s in (0, 1)]
        self.refined = 0

    def run(self):
        """Search; returns ``(kept, error, worst unit point, refinement points)``."""
        pools = [list(self.order[s][:_POOL]) for s in (0, 1)]
        cols = [self.terms.columns(s, pools[s]) / self.terms.sums[s][:, None] for s in (0, 1)]
        screened = [c[self.screen] for c in cols]
        best_failed = None
        sizes = range(2, min(_LARGEST_SEARCH, len(pools[0]) + len(pools[1])) + 1)
        for size in sizes:
            pairs = sum(math.comb(len(pools[0]), a) * math.comb(len(pools[1]), size - a) for a in range(1, size))
            if pairs > _PAIR_BUDGET:
                break
            found = []
            for a in range(1, size):
                b = size - a
                if a > len(pools[0]) or b > len(pools[1]):
                    continue
                combos = [list(itertools.combinations(range(len(pools[s])), k)) for s, k in ((0, a), (1, b))]
                rn, rd = (subset_sums(screened[s], combos[s]) for s in (0, 1))
                worst = pair_errors(rn, rd, self.tolerance)
                for i, j in zip(*np.nonzero(worst <= self.tolerance)):
                    kept = ([pools[0][x] for x in combos[0][i]], [pools[1][x] for x in combos[1][j]])
                    found.append((self.terms.symbol_count(kept), float(worst[i, j]), kept))
                i, j = np.unravel_index(np.argmin(worst), worst.shape)
                if best_failed is None or worst[i, j] < best_failed[0]:
                    best_failed = (float(worst[i, j]),
                                   ([pools[0][x] for x in combos[0][i]], [pools[1][x] for x in combos[1][j]]))
            found.sort(key=lambda item: (item[0], item[1]))
            for _, _, kept in found[:20]:
                verdict = self.verify(kept)
                if verdict is not None:
                    return (kept, *verdict, self.refined)
        start = best_failed[1] if best_failed else ([self.order[0][0]], [self.order[1][0]])
        return self.grow(start)

    def verify(self, kept):
        """Full-point error plus compass refinement; None if above tolerance."""
        cols = [self.terms.columns(s, kept[s]).sum(axis=1) / self.terms.sums[s] for s in (0, 1)]
        with np.errstate(divide="ignore", invalid="ignore"):
            err = relative_errors(cols[0] / cols[1])
        if err.max() > self.tolerance:
            return None
        worst, where = self.refine(kept, err, limit=self.tolerance)
        if worst > self.tolerance:
            return None
        return worst, where

    def refine(self, kept, err: np.ndarray, starts: int = 4, iterations: int = 80, limit: float = np.inf):
        """Compass search in the unit box from the worst points; returns (worst error, unit point).

        The search stops early once an error above ``limit`` is found (the
        candidate is rejected whatever the rest of the search would find).
        """
        order = np.argsort(-err)[:starts]
        points = self.unit[order].copy()
        values = err[order].copy()
        k = points.shape[1]
        free = list(self.model.free_factors)
        directions = []
        for f in free:
            d = np.zeros(k)
            d[f] = 1.0
            directions += [d, -d]
        if len(free) <= 8:
            # diagonal moves follow a check boundary that no single factor runs along
            for f, g in itertools.combinations(free, 2):
                for sf, sg in ((1, 1), (1, -1), (-1, 1), (-1, -1)):
                    d = np.zeros(k)
                    d[f], d[g] = sf, sg
                    directions.append(d)
        directions = np.array(directions).reshape(-1, k)
        step = np.full(len(points), 0.25)
        for _ in range(iterations):
            active = np.flatnonzero(step > 1e-4)
            if not len(active) or not free:
                break
            # every move of every active start, start by start (the order decides ties)
            trial = np.clip(points[active, None, :] + step[active, None, None] * directions[None], 0.0, 1.0)
            trial = trial.reshape(-1, k)
            logs = self.model.logs(trial)
            e = relative_errors(self.terms.ratio_at(logs, kept))
            e[~self.model.admissible(logs)] = -np.inf
            self.refined += len(trial)
            e = e.reshape(len(active), len(directions))
            for row, p in enumerate(active):
                best = int(np.argmax(e[row]))
                if e[row, best] > values[p] * (1 + 1e-12):
                    values[p], points[p] = e[row, best], trial[row * len(directions) + best]
                else:
                    step[p] /= 2
            if values.max() > limit:
                break
        best = int(np.argmax(values))
        if values[best] >= err.max():
            return float(values[best]), points[best]
        top = int(np.argmax(err))
        return float(err[top]), self.unit[top]

    def grow(self, start):
        """Add the term that lowers the worst error most until within tolerance (or exact)."""
        kept = [list(start[0]), list(start[1])]
        candidates = [[int(i) for i in self.order[s][:_GREEDY_POOL] if int(i) not in kept[s]] for s in (0, 1)]
        totals = [len(self.terms.sides[s][0]) for s in (0, 1)]
        cols = {}

        def column(side, index):
            if (side, index) not in cols:
                cols[side, index] = self.terms.columns(side, [index])[:, 0] / self.terms.sums[side]
            return cols[side, index]

        current = [sum(column(s, i) for i in kept[s]) for s in (0, 1)]
        pool = [self.terms.columns(s, candidates[s]) / self.terms.sums[s][:, None] for s in (0, 1)]
        where = [{index: c for c, index in enumerate(candidates[s])} for s in (0, 1)]
        while candidates[0] or candidates[1]:
            # every candidate of a side at once: a column per candidate, the worst error per column
            options = []
            for side in (0, 1):
                if not candidates[side]:
                    continue
                added = pool[side][:, [where[side][i] for i in candidates[side]]]
                with np.errstate(divide="ignore", invalid="ignore"):
                    if side == 0:
                        ratio = (current[0][:, None] + added) / current[1][:, None]
                    else:
                        ratio = current[0][:, None] / (current[1][:, None] + added)
                worst = relative_errors(ratio).max(axis=0)
                options += [(float(w), side, index) for w, index in zip(worst, candidates[side])]
            error, side, index = min(options)
            kept[side].append(index)
            candidates[side].remove(index)
            current[side] = current[side] + column(side, index)
            if error <= self.tolerance:
                verdict = self.verify((kept[0], kept[1]))
                if verdict is not None:
                    return (kept[0], kept[1]), *verdict, self.refined
        everything = (list(range(totals[0])), list(range(totals[1])))
        return everything, 0.0, self.unit[0], self.refined


def subset_sums(columns: np.ndarray, subsets: Sequence[Sequence[int]]) -> np.ndarray:
    """Per point, the sum of the columns of each subset (points x subsets), all subsets of one size.

    Examples
    --------
    >>> subset_sums(np.array([[1.0, 2.0, 4.0]]), [(0, 1), (0, 2), (1, 2)]).tolist()
    [[3.0, 5.0, 6.0]]
    """
    index = np.asarray(subsets, dtype=int).reshape(len(subsets), -1)
    total = columns[:, index[:, 0]]
    for j in range(1, index.shape[1]):
        total = total + columns[:, index[:, j]]  # term by term, as a sum over each subset would add them
    return total


def pair_errors(rn: np.ndarray, rd: np.ndarray, tolerance: float = np.inf, budget: int = 4_000_000) -> np.ndarray:
    """max over points of |rn[:, i]/rd[:, j] - 1| for every pair (i, j), where it matters.

    Exact for every pair within ``tolerance`` and for the pairs that decide
    the smallest value (and where it occurs); any other entry holds a lower
    bound that is above both.  The bounds come from a few probe points (where
    some column is largest or smallest), so most pairs are never evaluated at
    every point; the bounds are then raised to exact values in order until
    none is below the best exact value.

    Examples
    --------
    >>> rn = np.array([[1.0, 2.0], [1.0, 1.5]])
    >>> rd = np.array([[1.0], [1.2]])
    >>> pair_errors(rn, rd).round(3).tolist()
    [[0.167], [1.0]]
    """
    points, ni = rn.shape
    nj = rd.shape[1]
    chosen = np.zeros(points, dtype=bool)
    for extreme in (rn.argmax(axis=0), rn.argmin(axis=0), rd.argmax(axis=0), rd.argmin(axis=0)):
        chosen[extreme] = True
    probe = np.flatnonzero(chosen)
    if points <= 4 * len(probe) or ni * nj <= 64:
        return _all_pair_errors(rn, rd, budget)
    bound = _all_pair_errors(rn[probe], rd[probe], budget).reshape(-1)  # flat index i*nj + j
    exact = np.zeros(ni * nj, dtype=bool)

    def settle(flat: np.ndarray) -> None:
        chunk = max(1, budget // points)
        for start in range(0, len(flat), chunk):
            part = flat[start : start + chunk]
            i, j = np.divmod(part, nj)
            with np.errstate(divide="ignore", invalid="ignore"):
                err = np.abs(rn[:, i] / rd[:, j] - 1.0)
            bound[part] = np.where(np.isfinite(err), err, np.inf).max(axis=0)
            exact[part] = True

    settle(np.flatnonzero(bound <= tolerance))
    best = bound[exact].min() if exact.any() else np.inf
    while True:
        open_ = np.flatnonzero(~exact & (bound <= best))
        if not len(open_):
            return bound.reshape(ni, nj)
        settle(open_[np.argsort(bound[open_], kind="stable")[:256]])
        best = bound[exact].min()


def _all_pair_errors(rn: np.ndarray, rd: np.ndarray, budget: int) -> np.ndarray:
    """max over points of |rn[:, i]/rd[:, j] - 1| for every pair (i, j), all evaluated."""
    points, ni = rn.shape
    nj = rd.shape[1]
    out = np.empty((ni, nj))
    step = max(1, budget // max(1, points * nj))
    for start in range(0, ni, step):
        with np.errstate(divide="ignore", invalid="ignore"):
            block = rn[:, start : start + step, None] / rd[:, None, :]
            err = np.abs(block - 1.0)
        err = np.where(np.isfinite(err), err, np.inf)
        out[start : start + step] = err.max(axis=0)
    return out
