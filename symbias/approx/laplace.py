"""Dominant-term approximation of a frequency-dependent result, coefficient by coefficient of ``s``.

Part of :mod:`symbias.approx` (Formula with ``s`` -> :class:`FrequencyApproximation`),
beside :mod:`~symbias.approx.result`, which handles results without ``s``.
The usual technique of hand analysis: write the result as

    H(s) = (a0 + a1 s + a2 s^2 + ...) / (b0 + b1 s + b2 s^2 + ...)

and keep, in each coefficient, the terms that dominate it over the stated
ranges of the symbols (capacitances included).  Then

* the worst relative error ``|H'(j w)/H(j w) - 1|`` (magnitude and phase
  together) is measured over the box points and over a stated frequency band
  (5 points per decade); while it exceeds the tolerance the coefficients are
  fitted more tightly (their own tolerance divided by 4 each round), down to
  the exact form;
* the dominant pole is given in closed form as ``-b0'/b1'`` (the lowest two
  denominator coefficients; ``b1/b0`` is the sum of the open-circuit time
  constants, Gray, Hurst, Lewis, Meyer, 5th ed., ch. 7 -- section from
  memory) and the first zero as ``-a0'/a1'``; each is checked at every point
  against the smallest root of the exact coefficients, and that worst relative
  error is reported too (a large one says the poles are not widely spaced and
  the one-pole picture does not hold).

Points are the box corners (up to 16) and seeded random points (96 by default); their number
is cut so that points times terms stays under :data:`POINT_TERMS`, which keeps
the cost a small multiple of the exact derivation.  No compass refinement is
made: the reported error is the worst found at those points and frequencies.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> deck = "ladder\\nI1 0 a 1\\nR1 a 0 RA\\nC1 a 0 CA\\nR2 a b RB\\nC2 b 0 CB\\n"
>>> z = output_resistance(parse_netlist(deck), "a")
>>> a = approximate_frequency(z, ["RA >> RB", "CA >> CB"], band=(1e3, 1e9))
>>> a.error < 0.1, a.dominant_pole.expr, a.kept
(True, -1/(CA*RA), ((2, 2), (3, 5)))
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields
from functools import cached_property, lru_cache
from types import MappingProxyType
from typing import Any, Iterable, Mapping

import numpy as np

from ..errors import AssumptionError
from ..formula import Formula
from ..frequency import LaplaceTerms, laplace_terms, log_frequencies
from ..symbols import LAPLACE
from .arrays import dot
from .magnitudes import MagnitudeModel, magnitude_model
from .statements import Assumption
from ..linear.polys import TermColumns
from .terms import generator_logs

__all__ = ["FrequencyApproximation", "approximate_frequency", "DEFAULT_BAND", "POINT_TERMS"]

#: Frequency band (Hz) over which the error is measured when none is stated.
DEFAULT_BAND = (1.0, 1e9)
#: Largest number of (point, term) values evaluated; fewer random points for a long result.
POINT_TERMS = 300_000
_MIN_POINTS = 24
_MAX_CORNERS = 16
_ROUNDS = 12
_PER_DECADE = 5


@dataclass(frozen=True, eq=False)
class FrequencyApproximation:
    """A coefficient-by-coefficient approximation of a result in ``s``, with its measured error.

    It answers to the same attributes as :class:`~symbias.approx.Approximation`
    (``formula``, ``expr``, ``text``, ``error``, ``kept``, ``where()``, ...)
    so every renderer shows it, plus the band, the dominant pole and zero.
    The short forms are built from the kept rows on first use.

    Parameters
    ----------
    exact : Formula
        The exact result.
    rows : tuple of numpy.ndarray
        Indices of the kept numerator and denominator terms (rows of
        :attr:`Formula.term_columns <symbias.formula.Formula.term_columns>`).
    error : float
        Worst ``|H'(j w)/H(j w) - 1|`` over the points and the band.
    worst_point : mapping
        Symbol values where it occurs; ``worst_frequency`` (Hz) is the frequency.
    band : (float, float)
        Hz.
    coefficients : tuple
        ``(side, power, kept, total)`` per coefficient (side 0 numerator, 1 denominator).
    pole_rows, zero_rows : tuple of numpy.ndarray, optional
        Kept rows of the two lowest denominator (numerator) coefficients, for
        :attr:`dominant_pole` (:attr:`dominant_zero`).
    pole_error, zero_error : float or None
        Worst relative error of those closed forms against the exact smallest root.
    """

    exact: Formula
    rows: tuple[np.ndarray, np.ndarray]
    error: float
    worst_point: Mapping[str, float]
    worst_frequency: float
    band: tuple[float, float]
    assumptions: tuple[Assumption, ...]
    tolerance: float
    corners: int
    samples: int
    admitted: int
    seed: int
    kept: tuple[tuple[int, int], tuple[int, int]]
    coefficients: tuple[tuple[int, int, int, int], ...] = ()
    pole_rows: tuple[np.ndarray, np.ndarray] | None = None
    zero_rows: tuple[np.ndarray, np.ndarray] | None = None
    pole_error: float | None = None
    zero_error: float | None = None
    model: MagnitudeModel | None = field(default=None, repr=False)
    refined: int = 0

    def __post_init__(self) -> None:
        object.__setattr__(self, "worst_point", MappingProxyType(dict(self.worst_point)))

    def __reduce__(self):
        values = [getattr(self, f.name) for f in fields(self)]
        values[[f.name for f in fields(self)].index("worst_point")] = dict(self.worst_point)
        return (type(self), tuple(values))

    @cached_property
    def formula(self) -> Formula:
        """The kept terms ``N'(s)/D'(s)`` as a formula over the exact one's ring."""
        num, den = (_polynomial(self.exact, side, self.rows[side]) for side in (0, 1))
        return self.exact.with_polynomials(num, den, label=f"{self.exact.label} (approx)", problem=None)

    @cached_property
    def dominant_pole(self) -> Formula | None:
        """``-b_j'/b_(j+1)'`` (rad/s) of the two lowest denominator coefficients, or None."""
        return _root_formula(self.exact, 1, self.pole_rows, "dominant pole")

    @cached_property
    def dominant_zero(self) -> Formula | None:
        """``-a_i'/a_(i+1)'`` (rad/s) of the two lowest numerator coefficients, or None."""
        return _root_formula(self.exact, 0, self.zero_rows, "first zero")

    @cached_property
    def expr(self):
        """The approximation as a sympy expression in ``s``."""
        return self.formula.expr

    @property
    def text(self) -> str:
        """The approximation as text that ``sympy.parse_expr`` reads back."""
        import sympy

        return sympy.sstr(self.expr)

    @property
    def statements(self) -> tuple[str, ...]:
        """The assumptions, each with the range it stands for, and the band."""
        return tuple(a.describe() for a in self.assumptions) + (
            f"f in [{self.band[0]:g}, {self.band[1]:g}] Hz (band of the error)",)

    def evaluate(self, values: Mapping[Any, Any]) -> np.ndarray:
        """Evaluate the approximation (``s`` complex allowed)."""
        return self.formula.evaluate(values, route="polynomial")

    def relative_error(self, values: Mapping[Any, Any]) -> np.ndarray:
        """``|approx/exact - 1|`` at given values (``s`` included)."""
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.abs(self.evaluate(values) / self.exact.evaluate(values) - 1.0)

    @property
    def worst_ratios(self) -> dict[str, float]:
        """The assumed monomials at the worst point."""
        out: dict[str, float] = {}
        for a in self.assumptions:
            if a.origin in ("user", "default", "free") and a.low != a.high and self.worst_point:
                out.setdefault(a.monomial, float(np.prod([self.worst_point[n] ** e for n, e in a.powers])))
        return out

    def where(self) -> str:
        """The worst point as text, with its frequency."""
        point = ", ".join(f"{k}={v:.4g}" for k, v in (self.worst_ratios or self.worst_point).items())
        return f"{point + ', ' if point else ''}f={self.worst_frequency:.4g} Hz"

    def summary(self) -> str:
        """One line: the form, the worst error, where, and the dominant pole's error."""
        pole = "" if self.pole_error is None else f"; dominant pole within {100 * self.pole_error:.3g}%"
        return (f"{self.exact.label} ~ {self.text}; worst relative error {100 * self.error:.3g}% at {self.where()} "
                f"over {self.band[0]:g}-{self.band[1]:g} Hz ({self.admitted} points){pole}")

    def __str__(self) -> str:
        return self.summary()


def _polynomial(formula: Formula, side: int, rows: np.ndarray, clear_laplace: bool = False):
    """The ring polynomial of some terms of one side (``s`` set to 1 with ``clear_laplace``)."""
    columns = formula.term_columns[side]
    rows = np.sort(np.asarray(rows, dtype=np.intp))
    exponents = columns.exponents[rows].copy()
    if clear_laplace:
        for index in laplace_terms(formula).laplace:
            if index >= 0:
                exponents[:, index] = 0
    return formula.ring.from_columns(TermColumns(exponents, columns.numerators[rows], columns.denominators[rows]))


def _root_formula(formula: Formula, side: int, rows, what: str) -> Formula | None:
    if rows is None:
        return None
    low, high = (_polynomial(formula, side, r, clear_laplace=True) for r in rows)
    return formula.with_polynomials(-low, high, quantity=what.replace(" ", "_"), label=f"{what} of {formula.label}",
                                    unit="rad/s", problem=None)


def approximate_frequency(formula: Formula, assumptions: Iterable[Assumption | str] = (), *,
                          tolerance: float = 0.10, defaults: bool = True, samples: int = 96, seed: int = 0,
                          band: tuple[float, float] = DEFAULT_BAND) -> FrequencyApproximation:
    """Keep each coefficient's dominant terms so that ``H'`` stays within ``tolerance`` over the band.

    Parameters
    ----------
    formula : Formula
        A result in ``s``.
    assumptions : iterable of str or Assumption
        Magnitude statements, capacitances included (``cmu << cpi``), or the
        ranges of :func:`~symbias.approx.nominal_ranges` around a bias point.
    tolerance : float
        Largest accepted worst relative error of ``H``.
    defaults : bool
        Add the hand-analysis defaults (capacitances have none).
    samples : int
        Random points (fewer for a long result, see :data:`POINT_TERMS`).
    band : (float, float)
        Frequencies (Hz) over which the error is measured.

    Raises
    ------
    AssumptionError
        For a bad tolerance, sample count or band, or assumptions no point satisfies.
    """
    if not (isinstance(tolerance, (int, float)) and tolerance > 0) or samples < 0:
        raise AssumptionError(f"tolerance must be positive and samples >= 0, got {tolerance!r}, {samples!r}")
    if not (0 < band[0] < band[1] < math.inf):
        raise AssumptionError(f"the band must be 0 < f1 < f2, got {band[0]:g} to {band[1]:g} Hz")
    if not formula.nterms[0]:
        raise AssumptionError(f"{formula.label} is exactly 0: there is nothing to approximate")
    terms = laplace_terms(formula)
    names = [s.name for s in formula.symbols if s.name != LAPLACE]
    model = magnitude_model(names, assumptions, defaults=defaults, meanings=formula.meanings)
    unit, corners, drawn = _points(model, sum(formula.nterms), samples, seed)
    omega = 2 * np.pi * log_frequencies(band[0], band[1], _PER_DECADE)
    with np.errstate(all="ignore"):  # zero, infinite and underflowing terms are handled where they are read
        glog, gsign = generator_logs(formula, model.names, model.logs(unit))
        sides = [_Side(formula.term_columns[side], terms.powers[side], glog, gsign) for side in (0, 1)]
        choice, error, worst = _search(sides, omega, tolerance)
        pole_rows, pole_error = _dominant(sides[1], choice[1])
        zero_rows, zero_error = _dominant(sides[0], choice[0])
    point = {n: float(v[worst[0]]) for n, v in model.values(unit).items()}
    rows = tuple(s.rows(c) for s, c in zip(sides, choice))
    kept = tuple((len(r), s.size) for r, s in zip(rows, sides))
    listing = tuple((side, power, choice[side][power], sides[side].all_terms()[power])
                    for side in (0, 1) for power in sorted(sides[side].groups))
    return FrequencyApproximation(formula, rows, float(error), point, float(omega[worst[1]] / (2 * np.pi)),
                                  (float(band[0]), float(band[1])), model.assumptions, float(tolerance), corners,
                                  drawn, len(unit), seed, kept, listing, pole_rows, zero_rows, pole_error,
                                  zero_error, model)


def _search(sides: list["_Side"], omega: np.ndarray, tolerance: float):
    """Tighten the coefficients' own tolerance until ``H'`` is within ``tolerance`` over the band."""
    exact_matrices = [s.matrix(None) for s in sides]
    scales = [_frequency_scale(*m) for m in exact_matrices]
    exact = [_evaluate(*m, omega, w) for m, w in zip(exact_matrices, scales)]
    for round_ in range(_ROUNDS):
        choice = [s.choose(tolerance / 4.0 ** round_) for s in sides]
        approx = [_evaluate(*s.matrix(c), omega, w) for s, c, w in zip(sides, choice, scales)]
        error, worst = _band_error(exact, approx)
        if error <= tolerance:
            return choice, error, worst
    return [s.all_terms() for s in sides], 0.0, (0, 0)


def _points(model: MagnitudeModel, size: int, samples: int, seed: int) -> tuple[np.ndarray, int, int]:
    """Admitted corners (at most 64) and random points, fewer for a long result."""
    corners = model.corners(seed)
    if len(corners) > _MAX_CORNERS:
        corners = corners[np.random.default_rng(seed + 1).choice(len(corners), _MAX_CORNERS, replace=False)]
    corners = corners[model.admissible(model.logs(corners))]  # the random points fill up to the admitted corners
    wanted = max(_MIN_POINTS, min(samples, POINT_TERMS // max(1, size) - len(corners)))
    return model.admitted_points(corners, wanted, seed)


class _Side:
    """One side's terms at the points, grouped by power of s and ordered by importance within each group.

    A helper local to one call.  Importance is a term's largest share of its
    coefficient over the points.  For each coefficient the worst relative error
    over the points of its first 1-8 terms, then of geometrically growing
    prefixes, is computed once; :meth:`choose` bisects between the two
    candidates around a tolerance (the error falls nearly monotonically with
    the prefix).  Arrays are terms x points, so that a group of terms, a
    prefix and a reordering are runs of whole rows.
    """

    def __init__(self, columns: TermColumns, powers: np.ndarray, glog: np.ndarray, gsign: np.ndarray):
        grouped = np.argsort(powers, kind="stable")
        sorted_powers = powers[grouped]
        starts = np.flatnonzero(np.r_[True, sorted_powers[1:] != sorted_powers[:-1]])
        coefficient = columns.numerators[grouped].astype(float) / columns.denominators[grouped].astype(float)
        self.size = len(coefficient)
        self.degree = int(powers.max(initial=0))
        logs = _exponent_product(columns.exponents, grouped, glog)
        logs += np.log(np.abs(coefficient))[:, None]
        signs = np.sign(coefficient)[:, None]
        if np.any(gsign < 0):  # a negative sub-expression generator flips the terms with an odd power of it
            odd = _exponent_product(columns.exponents, grouped, (gsign < 0).astype(float)) % 2 > 0.5
            signs = signs * np.where(odd, -1.0, 1.0)
        sizes = np.diff(np.r_[starts, self.size])
        spans = [slice(int(first), int(first + size)) for first, size in zip(starts, sizes)]
        # per group: a maximum over whole rows (numpy's reduceat along the first axis goes row by row)
        top = np.array([logs[span].max(axis=0) for span in spans])
        top = np.where(np.isfinite(top), top, 0.0)
        values = logs  # in place: these arrays are terms x points
        for g, span in enumerate(spans):
            values[span] -= top[g]
        np.exp(values, out=values)
        values *= signs
        total = np.add.reduceat(values, starts, axis=0)
        scale = np.abs(total)
        share = np.empty(self.size)
        within = np.empty(self.size, dtype=np.intp)  # groups kept together, most important first
        with np.errstate(divide="ignore"):
            inverse = 1.0 / scale
        buffer = np.empty((min(self.size, _ROWS), values.shape[1]))
        for g, span in enumerate(spans):
            for start in range(span.start, span.stop, _ROWS):  # through a small buffer: no second terms x points array
                rows = slice(start, min(span.stop, start + _ROWS))
                part = np.abs(values[rows], out=buffer[: rows.stop - rows.start])
                part *= inverse[g]
                share[rows] = part.max(axis=1) if part.shape[1] else np.nan
            within[span] = span.start + np.argsort(-np.nan_to_num(share[span], nan=np.inf), kind="stable")
        self.rows_by_rank = grouped[within]  # original term index of each ranked position
        self._values, self._within = values, within  # partial sums are read from these on demand
        self.groups: dict[int, slice] = {}
        self.top, self.total, self.candidates, self.worst, self.scale = {}, {}, {}, {}, {}
        self._partial: dict[int, dict[int, np.ndarray]] = {}  # per power: count -> sum of its first count terms
        for g, span in enumerate(spans):
            k = int(sorted_powers[span.start])
            self.groups[k] = span
            self.top[k], self.total[k], self.scale[k] = top[g], total[g], scale[g]
            self.candidates[k] = _candidates(span.stop - span.start)
            self._partial[k] = {}
            self._running(k, 0, int(self.candidates[k][-1]), self.candidates[k])
            self.worst[k] = self._errors(k, self.candidates[k])

    def _running(self, k: int, first: int, last: int, wanted: np.ndarray | None = None) -> None:
        """Store the sums of the first ``first+1 .. last`` ranked terms of coefficient ``k`` (only the
        counts in ``wanted`` when given).

        They are the running sums ``numpy.cumsum`` gives over the ranked terms (the same additions in
        the same order), taken a block of rows at a time and continued from the known sum of the first
        ``first`` terms, so no sorted copy of the whole side is made.
        """
        start_row, known = self.groups[k].start, self._partial[k]
        running = known[first] if first else None
        for start in range(first, last, _ROWS):
            stop = min(last, start + _ROWS)
            chunk = self._values[self._within[start_row + start:start_row + stop]]
            if running is not None:
                chunk[0] += running
            np.cumsum(chunk, axis=0, out=chunk)
            running = chunk[-1]
            counts = np.arange(start + 1, stop + 1) if wanted is None else \
                wanted[(wanted > start) & (wanted <= stop)]
            known.update(zip(counts.tolist(), chunk[counts - start - 1]))

    def _sum(self, k: int, count: int) -> np.ndarray:
        """The sum of the first ``count`` ranked terms of coefficient ``k`` at every point."""
        known = self._partial[k]
        if count not in known:  # between two candidates: every count of that stretch, once
            candidates = self.candidates[k]
            position = int(np.searchsorted(candidates, count))
            low = int(candidates[position - 1]) if position else 0
            self._running(k, low, int(candidates[position]))
        return known[count]

    def _errors(self, k: int, counts: np.ndarray) -> np.ndarray:
        """Worst relative error over the points of the first ``counts`` terms of coefficient ``k``."""
        partial = np.array([self._sum(k, int(c)) for c in counts])
        errors = np.abs(partial - self.total[k]) / self.scale[k]
        errors = np.where(np.isfinite(errors), errors, np.where(partial == self.total[k], 0.0, np.inf))
        return errors.max(axis=1) if errors.shape[1] else np.zeros(len(counts))

    def all_terms(self) -> dict[int, int]:
        return {k: span.stop - span.start for k, span in self.groups.items()}

    def choose(self, tolerance: float) -> dict[int, int]:
        """Per power, how many of its terms (in importance order) are kept."""
        out = {}
        for k, span in self.groups.items():
            good = np.flatnonzero(self.worst[k] <= tolerance)
            if not len(good):
                out[k] = span.stop - span.start
                continue
            high = int(self.candidates[k][good[0]])
            low = int(self.candidates[k][good[0] - 1]) if good[0] > 0 else 0
            while high - low > 1:
                middle = (low + high) // 2
                if self._errors(k, np.array([middle]))[0] <= tolerance:
                    high = middle
                else:
                    low = middle
            out[k] = high
        return out

    def matrix(self, choice: dict[int, int] | None) -> tuple[np.ndarray, np.ndarray]:
        """(mantissa, log scale) of every coefficient at every point: exact (None) or of the kept terms."""
        points = len(next(iter(self.top.values())))
        mantissa = np.zeros((points, self.degree + 1))
        top = np.zeros((points, self.degree + 1))
        for k in self.groups:
            top[:, k] = self.top[k]
            mantissa[:, k] = self.total[k] if choice is None else self._sum(k, choice[k])
        return mantissa, top

    def rows(self, choice, powers: Iterable[int] | None = None) -> np.ndarray:
        """Indices (into the side's terms) of the kept terms of some powers (all by default)."""
        parts = [self.rows_by_rank[self.groups[k].start:self.groups[k].start + choice[k]]
                 for k in (self.groups if powers is None else powers)]
        return np.sort(np.concatenate(parts)) if parts else np.zeros(0, dtype=np.intp)


#: Rows (terms) handled at once where a terms x points temporary would otherwise be made: a large fresh
#: array costs a page fault per 4 KiB, more than the arithmetic done in it.
_ROWS = 4096


def _exponent_product(exponents: np.ndarray, order: np.ndarray, right: np.ndarray) -> np.ndarray:
    """``exponents[order] @ right.T`` (terms x points), the exponents turned to floats a block of rows at a time.

    The blocks are sized like :func:`~symbias.approx.arrays.dot`'s, so BLAS stays on the calling thread.
    """
    right_t = np.ascontiguousarray(right.T)
    out = np.empty((len(order), right_t.shape[1]))
    rows = max(1, min(_ROWS, 262_144 // max(1, right_t.size)))
    for start in range(0, len(order), rows):
        block = order[start:start + rows]
        np.matmul(exponents[block].astype(float), right_t, out=out[start:start + len(block)])
    return out


@lru_cache(maxsize=1024)
def _candidates(count: int) -> np.ndarray:
    """Prefix lengths whose error is computed up front: 1 to 8, then about 24 geometric steps to ``count``."""
    steps = np.unique(np.r_[np.arange(1, min(count, 8) + 1), np.geomspace(8, max(count, 8), 24).astype(int), count])
    steps = steps[(steps >= 1) & (steps <= count)]
    steps.setflags(write=False)
    return steps


def _frequency_scale(mantissa: np.ndarray, top: np.ndarray) -> np.ndarray:
    """Per point, the log of a frequency w0 that brings the lowest and highest coefficients level."""
    used = np.flatnonzero(np.any(mantissa != 0, axis=0))
    low, high = int(used[0]), int(used[-1])
    if high == low:
        return np.zeros(len(mantissa))
    with np.errstate(divide="ignore", invalid="ignore"):
        logs = top + np.log(np.abs(mantissa))
        scale = (logs[:, low] - logs[:, high]) / (high - low)
    return np.where(np.isfinite(scale), scale, 0.0)


def _evaluate(mantissa: np.ndarray, top: np.ndarray, omega: np.ndarray, log_w0: np.ndarray):
    """``sum_k c_k (j w)^k`` at every point and frequency as (complex value, log scale per point).

    The coefficients are scaled per point by ``w0**k`` (Horner in ``j w/w0``), so
    products of many small capacitances and conductances stay within range.
    """
    k = np.arange(mantissa.shape[1])
    logs = np.where(mantissa != 0, top + k * log_w0[:, None], -np.inf)
    scale = logs.max(axis=1)
    scale = np.where(np.isfinite(scale), scale, 0.0)
    with np.errstate(under="ignore"):
        scaled = mantissa * np.exp(np.where(mantissa != 0, logs, 0.0) - scale[:, None])
    x = 1j * omega[None, :] * np.exp(-log_w0)[:, None]
    value = np.broadcast_to(scaled[:, -1:], x.shape).astype(complex)
    for power in range(mantissa.shape[1] - 2, -1, -1):
        value = value * x + scaled[:, power:power + 1]
    return value, scale


def _band_error(exact, approx) -> tuple[float, tuple[int, int]]:
    (n, n_log), (d, d_log) = exact
    (n2, n2_log), (d2, d2_log) = approx
    with np.errstate(divide="ignore", invalid="ignore", over="ignore", under="ignore"):
        ratio = (n2 / n) / (d2 / d) * np.exp(n2_log - n_log - d2_log + d_log)[:, None]
        errors = np.abs(ratio - 1.0)
    errors = np.where(np.isfinite(errors), errors, np.where(np.isnan(errors) & (n == 0) & (n2 == 0), 0.0, np.inf))
    index = np.unravel_index(int(np.argmax(errors)), errors.shape)
    return float(errors[index]), (int(index[0]), int(index[1]))


def _dominant(side: "_Side", choice) -> tuple[tuple[np.ndarray, np.ndarray] | None, float | None]:
    """Kept rows of the two lowest coefficients and the worst error of ``-c_j'/c_(j+1)'`` against the exact root."""
    powers = sorted(side.groups)
    if len(powers) < 2 or powers[1] != powers[0] + 1:
        return None, None
    j = powers[0]
    mantissa, top = side.matrix(choice)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        closed = -(mantissa[:, j] / mantissa[:, j + 1]) * np.exp(top[:, j] - top[:, j + 1])
        errors = np.abs(closed / _smallest_roots(side, j) - 1.0)
    errors = np.where(np.isfinite(errors), errors, np.inf)
    return (side.rows(choice, [j]), side.rows(choice, [j + 1])), float(errors.max())


def _smallest_roots(side: "_Side", lowest: int) -> np.ndarray:
    """The exact root of smallest magnitude (other than s = 0) at every point, by batched companion matrices."""
    mantissa, top = side.matrix(None)
    mantissa, top = mantissa[:, lowest:], top[:, lowest:]
    used = np.flatnonzero(np.any(mantissa != 0, axis=0))
    high = int(used[-1])
    with np.errstate(divide="ignore", invalid="ignore"):
        log_w0 = (top[:, 0] - top[:, high] + np.log(np.abs(mantissa[:, 0] / mantissa[:, high]))) / high
    k = np.arange(high + 1)
    logs = top[:, : high + 1] + k * log_w0[:, None]
    logs = logs - np.where(mantissa[:, : high + 1] != 0, logs, -np.inf).max(axis=1, keepdims=True)
    with np.errstate(under="ignore", invalid="ignore"):
        scaled = mantissa[:, : high + 1] * np.exp(logs)
    companion = np.zeros((len(scaled), high, high))
    companion[:, 0, :] = -scaled[:, high - 1::-1] / scaled[:, high:high + 1]
    if high > 1:
        companion[:, np.arange(1, high), np.arange(high - 1)] = 1.0
    finite = np.all(np.isfinite(companion), axis=(1, 2))
    out = np.full(len(scaled), np.nan, dtype=complex)
    if finite.any():
        roots = np.linalg.eigvals(companion[finite]) * np.exp(log_w0[finite])[:, None]
        out[finite] = roots[np.arange(len(roots)), np.argmin(np.abs(roots), axis=1)]
    return out
