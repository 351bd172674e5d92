"""Gaussian elimination of a batch of nodal matrices that share one sparsity pattern.

Part of the batched Newton solver (:mod:`symbias.dc.newton`).  Every sample of
a batch stamps the same elements, so its nodal matrix has the same zero
entries; only the values differ.  The elimination is planned once on that
pattern: rows in the partial-pivoting order of the first sample, unless that
order fills in much more than Markowitz's rule with threshold pivoting (least
fill among the pivots within :data:`PIVOT_THRESHOLD` of their column's largest
entry), which then chooses rows and columns and each solve takes one step of
iterative refinement; the fill-in is found symbolically.  It then runs on every
sample at once with the batch as the last, contiguous axis and visits only the
entries that are, or become, non-zero.  For the matrices of bias circuits that
is a small part of the dense work: a mirror with twelve outputs has about forty
unknowns, a base node shared by all of them, and a few entries per row; the
partial-pivoting order of a dense elimination filled a 25 x 25 block there.

A sample whose pivot falls below :data:`PIVOT_THRESHOLD` of its column, or
whose result is not finite, is flagged so the caller can solve it again with
LAPACK.

Examples
--------
>>> import numpy as np
>>> a = np.array([[[4.0, 1.0, 0.0], [1.0, 3.0, 0.0], [0.0, 0.0, 2.0]]] * 2)
>>> a[1, 2, 2] = 5.0
>>> x, ok = structured_solve(a, np.ones((2, 3)))
>>> np.allclose(np.einsum("kij,kj->ki", a, x), 1.0), ok.tolist()
(True, [True, True])
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["EliminationPlan", "plan_elimination", "structured_solve", "PIVOT_THRESHOLD", "REPLAN_FRACTION"]

#: A pivot smaller than this fraction of the largest entry below it in its column flags the sample.
PIVOT_THRESHOLD = 0.1
#: Partial pivoting is kept unless its fill-in makes the store larger than this multiple of Markowitz's.
FILL_TOLERANCE = 1.5
#: A remembered plan is made anew when more than this fraction of a batch flags its pivots.
REPLAN_FRACTION = 0.05
_MAX_PLANS = 64
_PLANS: dict[tuple[int, bytes], "EliminationPlan"] = {}


@dataclass(frozen=True)
class EliminationPlan:
    """Which entries the elimination touches, as slots of a compressed store of the non-zeros.

    Entry ``(i, j)`` of the pivoted matrix (row ``order[i]``, column
    ``column_order[j]`` of the original) lives in slot ``slot[i, j]`` (-1 where
    it stays zero throughout).

    Attributes
    ----------
    order, column_order : tuple of int
        Row and column orders: step ``k`` eliminates unknown ``column_order[k]`` with row ``order[k]``.
    rows, columns : tuple of numpy.ndarray
        For each step ``k``, the rows below and the columns right of ``k`` that hold non-zeros (after fill-in).
    slot : numpy.ndarray of int, shape (n, n)
    refine : bool
        Whether a solve takes one step of iterative refinement (threshold pivoting does; partial pivoting does not).
    """

    order: tuple[int, ...]
    column_order: tuple[int, ...]
    rows: tuple[np.ndarray, ...]
    columns: tuple[np.ndarray, ...]
    slot: np.ndarray
    refine: bool = False

    @property
    def size(self) -> int:
        """Entries stored: the non-zeros and the fill-in."""
        return int((self.slot >= 0).sum())

    @property
    def entries(self) -> tuple[np.ndarray, np.ndarray]:
        """Original (row, column) of every slot, in slot order."""
        i, j = np.nonzero(self.slot >= 0)
        by_slot = np.argsort(self.slot[i, j])
        return np.asarray(self.order)[i[by_slot]], np.asarray(self.column_order)[j[by_slot]]


def _markowitz_order(pattern: np.ndarray, first: np.ndarray) -> tuple[list[int], list[int]]:
    """Row and column orders: at each step the pivot of least fill among those within the threshold.

    Markowitz's rule (the product of the other non-zeros in the pivot's row
    and column) with threshold pivoting on the first sample: a candidate must
    be at least :data:`PIVOT_THRESHOLD` of the largest entry left in its
    column.  Ties go to the larger relative pivot.
    """
    n = len(first)
    m = np.where(pattern, first, 0.0).astype(float)
    filled = pattern.copy()
    active_rows = np.ones(n, dtype=bool)
    active_columns = np.ones(n, dtype=bool)
    rows, columns = [], []
    for _ in range(n):
        live = filled & active_rows[:, None] & active_columns[None, :]
        magnitude = np.where(live, np.abs(m), 0.0)
        top = magnitude.max(axis=0)
        eligible = live & (magnitude > 0) & (magnitude >= PIVOT_THRESHOLD * top[None, :])
        if not eligible.any():  # singular on the first sample: any structural entry will do
            eligible = live if live.any() else (active_rows[:, None] & active_columns[None, :])
        cost = (live.sum(axis=1)[:, None] - 1) * (live.sum(axis=0)[None, :] - 1)
        relative = np.divide(magnitude, top[None, :], out=np.zeros_like(magnitude), where=top[None, :] > 0)
        score = np.where(eligible, cost - 0.5 * relative, np.inf)
        r, c = np.unravel_index(int(np.argmin(score)), score.shape)
        rows.append(int(r))
        columns.append(int(c))
        active_rows[r] = active_columns[c] = False
        below = np.flatnonzero(live[:, c] & active_rows)
        right = np.flatnonzero(live[r] & active_columns)
        if below.size and m[r, c] != 0:
            m[np.ix_(below, right)] -= np.outer(m[below, c] / m[r, c], m[r, right])
        if below.size and right.size:
            filled[np.ix_(below, right)] = True
    return rows, columns


def plan_elimination(pattern: np.ndarray, first: np.ndarray) -> EliminationPlan:
    """The elimination plan of matrices with non-zeros where ``pattern`` is true, pivoted on ``first``.

    Parameters
    ----------
    pattern : numpy.ndarray of bool, shape (n, n)
        True where any sample of the batch has a non-zero entry.
    first : numpy.ndarray, shape (n, n)
        One sample, on which the pivots are chosen.

    Examples
    --------
    >>> import numpy as np
    >>> star = np.array([[4.0, 1, 1, 1], [1, 2, 0, 0], [1, 0, 2, 0], [1, 0, 0, 2]])
    >>> plan = plan_elimination(star != 0, star)
    >>> int((plan.slot >= 0).sum()) == int((star != 0).sum())  # the hub is eliminated last: no fill
    True
    """
    partial = _planned(pattern, _pivot_order(first), list(range(len(first))), refine=False)
    fewest = _planned(pattern, *_markowitz_order(pattern, first), refine=True)
    return partial if partial.size <= FILL_TOLERANCE * fewest.size else fewest


def _planned(pattern: np.ndarray, order: list[int], columns: list[int], refine: bool) -> EliminationPlan:
    """The symbolic elimination in the given orders: the entries each step touches, the fill-in."""
    filled = pattern[np.ix_(order, columns)].copy()
    n = len(order)
    below_k, right_k = [], []
    for k in range(n):
        below = k + 1 + np.flatnonzero(filled[k + 1:, k])
        right = k + 1 + np.flatnonzero(filled[k, k + 1:])
        if below.size and right.size:
            filled[np.ix_(below, right)] = True
        below_k.append(below)
        right_k.append(right)
    slot = np.full((n, n), -1, dtype=np.intp)
    slot[filled] = np.arange(int(filled.sum()))
    return EliminationPlan(tuple(order), tuple(columns), tuple(below_k), tuple(right_k), slot, refine)


def _pivot_order(m: np.ndarray) -> list[int]:
    """Row order partial pivoting gives one matrix."""
    m = m.copy()
    order = list(range(m.shape[0]))
    for k in range(m.shape[0]):
        p = k + int(np.argmax(np.abs(m[k:, k])))
        m[[k, p]] = m[[p, k]]
        order[k], order[p] = order[p], order[k]
        if m[k, k] != 0:
            m[k + 1:, k:] -= np.outer(m[k + 1:, k] / m[k, k], m[k, k:])
    return order


def structured_solve(a: np.ndarray, b: np.ndarray, plan: EliminationPlan | None = None
                     ) -> tuple[np.ndarray, np.ndarray]:
    """Solve ``a[k] x[k] = b[k]`` for every sample ``k`` along the shared sparsity pattern.

    Parameters
    ----------
    a : numpy.ndarray, shape (count, n, n)
    b : numpy.ndarray, shape (count, n)
    plan : EliminationPlan, optional
        By default the last plan made for this sparsity pattern (Newton's
        iterations and the chunks of a Monte Carlo run share it), made anew
        from ``a`` when more than :data:`REPLAN_FRACTION` of the samples flag
        their pivots with it.

    Returns
    -------
    x : numpy.ndarray, shape (count, n)
    ok : numpy.ndarray of bool, shape (count,)
        False where a pivot was too small or the result is not finite.
    """
    if plan is not None:
        return _refined(a, b, plan)
    pattern = np.any(a != 0, axis=0)
    key = (pattern.shape[0], pattern.tobytes())
    plan = _PLANS.get(key)
    if plan is not None:
        x, ok = _refined(a, b, plan)
        if np.count_nonzero(~ok) <= REPLAN_FRACTION * len(ok):
            return x, ok
    plan = plan_elimination(pattern, a[0])
    if len(_PLANS) >= _MAX_PLANS:
        _PLANS.pop(next(iter(_PLANS)))
    _PLANS[key] = plan
    return _refined(a, b, plan)


def _refined(a: np.ndarray, b: np.ndarray, plan: EliminationPlan) -> tuple[np.ndarray, np.ndarray]:
    """The solution, after one step of iterative refinement where the plan asks for it.

    Threshold pivoting trades a little accuracy for sparsity; one correction
    ``x += A^-1 (b - A x)`` with the same elimination brings the result back to
    the accuracy of partial pivoting (the residual is formed in the original
    matrix, which the elimination does not touch).
    """
    x, ok = _solve(a, b, plan)
    if not plan.refine:
        return x, ok
    with np.errstate(invalid="ignore", over="ignore"):
        residual = b - np.einsum("kij,kj->ki", a, x)
    correction, fine = _solve(a, residual, plan)
    return x + correction, ok & fine


def _solve(a: np.ndarray, b: np.ndarray, plan: EliminationPlan) -> tuple[np.ndarray, np.ndarray]:
    count, n = b.shape
    rows, columns = plan.entries
    v = np.ascontiguousarray(a[:, rows, columns].T)  # (slots, count): only the entries that are or become non-zero
    y = np.ascontiguousarray(b[:, list(plan.order)].T)  # (n, count)
    slot = plan.slot
    ok = np.ones(count, dtype=bool)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for k, (below, right) in enumerate(zip(plan.rows, plan.columns)):
            pivot = v[slot[k, k]]
            if not below.size:
                ok &= np.isfinite(pivot) & (pivot != 0)
                continue
            lower = v[slot[below, k]]  # (rows, count)
            ok &= np.abs(pivot) >= PIVOT_THRESHOLD * np.maximum(np.abs(pivot), np.abs(lower).max(axis=0))
            factors = lower * (1.0 / pivot)
            if right.size:
                v[slot[np.ix_(below, right)]] -= factors[:, None, :] * v[slot[k, right]][None, :, :]
            y[below] -= factors * y[k]
        x = np.empty_like(y)
        for k in range(n - 1, -1, -1):
            right = plan.columns[k]
            total = y[k] - np.einsum("jc,jc->c", v[slot[k, right]], x[right]) if right.size else y[k]
            x[k] = total / v[slot[k, k]]
    solution = np.empty((count, n))
    solution[:, list(plan.column_order)] = x.T
    return solution, ok & np.all(np.isfinite(solution), axis=1)
