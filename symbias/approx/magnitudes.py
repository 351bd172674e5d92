"""The magnitude model: statements as a box in log space, its corners and its sampler.

Second level of :mod:`symbias.approx` (statements -> :class:`MagnitudeModel`).
Statements are taken in order (user first); each one whose monomial is
independent (in log space) of those already taken becomes a *factor*, an edge
of the box; the others become *checks* that a point must pass.  The box is
completed with a reference scale (the first transconductance in [1e-5, 1e-2]
A/V, or a resistance in [1e2, 1e5] ohm; it matters only when numbers with
units sit in the formula) and with a wide range, [1e-2, 1e2] relative to that
scale, for any symbol no statement covers.  Units come from
:func:`symbias.symbols.ohm_power`.  Capacitances (unit F, the coefficients of
``s`` in a frequency-dependent result) have a scale of their own: the first
one in [1e-15, 1e-11] F, the others uncovered by a statement within
[1e-2, 1e2] of it; ``s`` itself never enters the box.

A default is dropped where the user's statements already speak: on the same
monomial, or when they determine each of its symbols (a nominal range for
every symbol, as :func:`~symbias.approx.statements.nominal_ranges` gives, says
all there is to know about them).

Points live in the unit box (points x factors, each coordinate in [0, 1]);
:meth:`MagnitudeModel.logs` maps them to log symbol values.

Examples
--------
>>> m = magnitude_model(["gm", "ro"], ["gm in [1m, 2m]", "ro in [100k, 200k]"])
>>> [a.origin for a in m.assumptions]
['user', 'user']
>>> sorted(round(v) for v in m.values(m.corners())["ro"])
[100000, 100000, 200000, 200000]
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Iterable, Mapping, Sequence

import numpy as np

from ..errors import AnalysisError, AssumptionError
from ..symbols import LAPLACE, ohm_power, parameter_of, unit_of
from .arrays import dot
from .statements import Assumption, default_assumptions, parse_assumption

__all__ = [
    "MagnitudeModel",
    "magnitude_model",
    "REFERENCE_CONDUCTANCE",
    "REFERENCE_RESISTANCE",
    "REFERENCE_CAPACITANCE",
    "FREE_RANGE",
    "MAX_CORNERS",
]

#: Absolute range of the reference transconductance (A/V) and resistance (ohm).
REFERENCE_CONDUCTANCE = (1e-5, 1e-2)
REFERENCE_RESISTANCE = (1e2, 1e5)
#: Absolute range of the reference capacitance (F) of a box with capacitances.
REFERENCE_CAPACITANCE = (1e-15, 1e-11)
#: Range of a symbol no statement covers, relative to the reference scale.
FREE_RANGE = (1e-2, 1e2)
#: Above this many box corners, a seeded random choice of corners is used.
MAX_CORNERS = 1024

_SAMPLE_ROWS = 1 << 17  # random points drawn in one numpy pass while sampling
_RANK_TOLERANCE = 1e-9  # relative residual below which a row lies in the span of the rows before it


@dataclass(frozen=True, eq=False)
class MagnitudeModel:
    """The log-space region the assumptions describe.

    Parameters
    ----------
    names : tuple of str
        Symbols, in the order of the log vectors.
    factors : tuple of Assumption
        Independent statements; their log ranges are the edges of a box.
    checks : tuple of Assumption
        Dependent statements a point must also satisfy.

    Examples
    --------
    >>> m = magnitude_model(["beta", "gm", "ro"])
    >>> [a.text for a in m.factors], [a.text for a in m.checks]
    (['gm*ro >> 1', 'beta >> 1', 'gm in [1e-05, 0.01] A/V (reference scale)'], ['ro >> beta/gm'])
    >>> unit, drawn = m.admitted_sample(100, seed=1)
    >>> values = m.values(unit)
    >>> bool(np.all(values["gm"] * values["ro"] / values["beta"] >= 30 * (1 - 1e-9)))
    True
    """

    names: tuple[str, ...]
    factors: tuple[Assumption, ...]
    checks: tuple[Assumption, ...] = ()

    def __post_init__(self) -> None:
        # derived arrays, rebuilt from the three fields after unpickling (see __reduce__)
        matrix = np.array([a.row(self.names) for a in self.factors]).reshape(len(self.factors), len(self.names))
        if matrix.shape[0] != matrix.shape[1] or np.linalg.matrix_rank(matrix) < len(self.names):
            raise AssumptionError("the factors of a magnitude model must determine every symbol")
        object.__setattr__(self, "_inverse", np.linalg.inv(matrix))
        object.__setattr__(self, "_inverse_t", np.ascontiguousarray(self._inverse.T))
        low = np.log([a.low for a in self.factors])
        high = np.log([a.high for a in self.factors])
        object.__setattr__(self, "_low", low)
        object.__setattr__(self, "_width", high - low)
        # every check at once: log values of the checked monomials = logs @ _check_rows
        rows = np.array([a.row(self.names) for a in self.checks]).reshape(len(self.checks), len(self.names))
        object.__setattr__(self, "_check_rows", np.ascontiguousarray(rows.T))
        object.__setattr__(self, "_check_low", np.array([math.log(a.low) - 1e-9 for a in self.checks]))
        object.__setattr__(self, "_check_high", np.array([math.log(a.high) + 1e-9 for a in self.checks]))
        # the same straight from unit-box points, check by check: the factors a check involves, their
        # weights, and its bounds less the part that does not depend on the point
        unit_checks = self._inverse_t @ self._check_rows
        terms = []
        for c in range(len(self.checks)):
            used = np.flatnonzero(np.abs(unit_checks[:, c]) > 1e-13)
            offset = float(self._low @ unit_checks[:, c])
            terms.append((used, unit_checks[used, c] * self._width[used], self._check_low[c] - offset,
                          self._check_high[c] - offset))
        object.__setattr__(self, "_check_terms", tuple(terms))

    def __reduce__(self):
        return (type(self), (self.names, self.factors, self.checks))

    @property
    def assumptions(self) -> tuple[Assumption, ...]:
        """Every statement of the model, factors first."""
        return self.factors + self.checks

    @property
    def free_factors(self) -> tuple[int, ...]:
        """Indices of factors with a non-zero range."""
        return tuple(int(i) for i in np.flatnonzero(self._width > 0))

    def logs(self, unit: np.ndarray) -> np.ndarray:
        """Log symbol values (points x names) of points in the unit box (points x factors)."""
        f = self._low + np.asarray(unit, dtype=float) * self._width
        return dot(f, self._inverse_t) if f.ndim == 2 else f @ self._inverse_t

    def admissible(self, logs: np.ndarray) -> np.ndarray:
        """Mask of points that pass every check (a relative slack of 1e-9)."""
        logs = np.asarray(logs, dtype=float)
        if not self.names:  # nothing varies: every point is the one point
            return np.ones(logs.shape[0] if logs.ndim > 1 else 1, dtype=bool)
        logs = logs.reshape(-1, len(self.names))
        if not self.checks:
            return np.ones(len(logs), dtype=bool)
        values = dot(logs, self._check_rows)
        return np.all((values >= self._check_low) & (values <= self._check_high), axis=1)

    def _passes(self, unit: np.ndarray, order: Sequence[int] | None = None) -> np.ndarray:
        """:meth:`admissible` of unit-box points, check by check on the points still in.

        A check involves a few factors (those of its devices), so each one is
        a short weighted sum over the points that passed the checks before it
        (taken in ``order``, the most selective first); when few points pass
        (many devices), most are dropped after a check or two.
        """
        rows = None
        for c in range(len(self.checks)) if order is None else order:
            used, weights, low, high = self._check_terms[c]
            part = unit if rows is None else unit[rows]
            value = np.zeros(len(part))
            for j, w in zip(used, weights):  # a short sum, not a BLAS call (see arrays.dot)
                value += part[:, j] * w
            keep = np.flatnonzero((value >= low) & (value <= high))
            rows = keep if rows is None else rows[keep]
        passed = np.zeros(len(unit), dtype=bool)
        passed[slice(None) if rows is None else rows] = True
        return passed

    def corners(self, seed: int = 0) -> np.ndarray:
        """Unit-box corners: all of them, or :data:`MAX_CORNERS` seeded ones."""
        free = self.free_factors
        k = len(self.factors)
        if not free:  # every range is a single value: the box is one point
            return np.full((1, k), 0.5)
        if 2 ** len(free) <= MAX_CORNERS:
            # every corner in the order of itertools.product((0, 1), repeat=...): the first factor is the high bit
            index = np.arange(2 ** len(free))[:, None]
            bits = ((index >> np.arange(len(free) - 1, -1, -1)) & 1).astype(float)
        else:
            bits = np.random.default_rng(seed + 7919).integers(0, 2, size=(MAX_CORNERS, len(free))).astype(float)
        unit = np.full((len(bits), k), 0.5)
        unit[:, list(free)] = bits
        return unit

    def sample(self, n: int, seed: int = 0) -> np.ndarray:
        """``n`` seeded random points of the unit box (log-uniform per factor)."""
        return np.random.default_rng(seed).random((n, len(self.factors)))

    def admitted_sample(self, n: int, seed: int = 0, max_draws: int | None = None) -> tuple[np.ndarray, int]:
        """Seeded random unit-box points that pass every check: (up to ``n`` points, points drawn).

        Draws in batches until ``n`` points pass or ``max_draws`` (default
        ``200*n``) were drawn.
        """
        rng = np.random.default_rng(seed)
        limit = 200 * n if max_draws is None else max_draws
        batch, k = max(n, 256), len(self.factors)
        kept, drawn, count = [], 0, 0
        order, buffer = None, np.empty((0, k))
        while count < n and drawn < limit:
            # Several batches are drawn in one block when few points pass (one pass of numpy over
            # many rows instead of hundreds of small ones).  The random stream is the same as batch
            # by batch, and whole batches are used up to the one in which the n-th point passes, so
            # the points and the count drawn do not depend on the block size.
            allowed = -(-(limit - drawn) // batch)
            wanted = 1 if not drawn else math.ceil(1.25 * (n - count) * drawn / max(count, 1) / batch)
            blocks = int(min(allowed, max(1, min(wanted, _SAMPLE_ROWS // batch))))
            if len(buffer) < blocks * batch:
                buffer = np.empty((blocks * batch, k))  # reused: fresh pages cost more than the numbers
            block = rng.random(out=buffer[: blocks * batch])
            if order is None:
                # the most selective checks first (the mask does not depend on the order)
                rates = [self._passes(block, [c]).mean() for c in range(len(self.checks))]
                order = list(np.argsort(rates, kind="stable"))
            passed = self._passes(block, order).reshape(blocks, batch)
            for i in range(blocks):
                if count >= n or drawn >= limit:
                    break
                good = block[i * batch : (i + 1) * batch][passed[i]]
                drawn += batch
                kept.append(good)
                count += len(good)
        unit = np.vstack(kept)[:n] if kept else np.empty((0, k))
        return unit, drawn

    def admitted_points(self, corners: np.ndarray, samples: int, seed: int = 0) -> tuple[np.ndarray, int, int]:
        """The admissible ones of ``corners`` and ``samples`` admitted random points, stacked.

        Returns the unit-box points, how many corners were kept and how many random points were drawn.

        Raises
        ------
        AssumptionError
            When no point satisfies every assumption.
        """
        corners = corners[self.admissible(self.logs(corners))]
        random, drawn = self.admitted_sample(samples, seed)
        unit = np.vstack([corners, random])
        if not len(unit):
            raise AssumptionError("no point satisfies every assumption: "
                                  + "; ".join(a.describe() for a in self.assumptions)
                                  + " (drop a default with an explicit statement or with defaults=False)")
        return unit, len(corners), drawn

    def values(self, unit: np.ndarray) -> dict[str, np.ndarray]:
        """Symbol values at unit-box points."""
        logs = self.logs(unit)
        return {n: np.exp(logs[:, i]) for i, n in enumerate(self.names)}

    def centre(self, seed: int = 0) -> dict[str, float]:
        """A central admissible point: the box centre, or the log-mean of admitted random points.

        The admissible region is convex in log space, so the mean of admitted
        points lies inside it.
        """
        unit = np.full((1, len(self.factors)), 0.5)
        if not self.admissible(self.logs(unit))[0]:
            points, _ = self.admitted_sample(2000, seed)
            if not len(points):
                raise AssumptionError("no point satisfies every assumption: "
                                      + "; ".join(a.describe() for a in self.assumptions))
            unit = points.mean(axis=0, keepdims=True)
        logs = self.logs(unit)[0]
        return {n: float(np.exp(v)) for n, v in zip(self.names, logs)}




def magnitude_model(
    names: Iterable[str],
    assumptions: Iterable[Assumption | str] = (),
    *,
    defaults: bool = True,
    meanings: Mapping[str, object] | None = None,
) -> MagnitudeModel:
    """Build the log-space box for ``names`` from statements (user first, then defaults).

    Statements about symbols outside ``names`` are ignored; a default is
    dropped where the user's statements already speak (see the module
    docstring).

    Raises
    ------
    AssumptionError
        For unreadable statements.
    AnalysisError
        When ``s`` (or another non-resistive symbol) appears.

    Examples
    --------
    >>> m = magnitude_model(["beta", "gm", "ro"])
    >>> [a.text for a in m.factors], [a.text for a in m.checks]
    (['gm*ro >> 1', 'beta >> 1', 'gm in [1e-05, 0.01] A/V (reference scale)'], ['ro >> beta/gm'])
    """
    names = tuple(sorted(set(names)))
    meanings = meanings or {}
    if LAPLACE in names:
        raise AnalysisError("cannot approximate a frequency-dependent result (s appears); evaluate it numerically")
    user = [a for a in map(_statement, assumptions) if a.names <= set(names)]
    statements = user + (_open_defaults(names, user) if defaults else [])
    factors, checks, rows = _factors_and_checks(names, statements)
    capacitances = [n for n in names if unit_of(n, meanings) == "F"]
    reference = _reference([n for n in names if n not in capacitances], meanings)
    scales = [_reference_factor(names, meanings, reference)] if reference is not None else []
    if capacitances:
        scales.append(_capacitance_reference(capacitances[0], meanings))
    for scale in scales:
        if _independent(rows, scale.row(names)):
            factors.append(scale)
            rows.append(scale.row(names))
    for name in names:
        if not _independent(rows, _unit_row(names, name)):
            continue
        if name in capacitances:
            statement = _free_factor(name, meanings, (capacitances[0], 1), capacitance=True)
            if _independent(rows, statement.row(names)):
                factors.append(statement)
                rows.append(statement.row(names))
            continue
        statement = _free_factor(name, meanings, reference)
        if _independent(rows, statement.row(names)):
            factors.append(statement)
            rows.append(statement.row(names))
    return MagnitudeModel(names, tuple(factors), tuple(checks))


def _statement(item: Assumption | str) -> Assumption:
    if isinstance(item, Assumption):
        return item
    if isinstance(item, str):
        return parse_assumption(item)
    raise AssumptionError(f"an assumption is a statement (text) or an Assumption, got {item!r}")


def _open_defaults(names: Sequence[str], user: Sequence[Assumption]) -> list[Assumption]:
    """The hand-analysis defaults the user's statements leave open."""
    rows = _Span(len(names), (a.row(names) for a in user))
    settled = {n for n in names if rows and not _independent(rows, _unit_row(names, n))}
    return [default for default in default_assumptions(names)
            if not default.names <= settled and not any(_parallel(default.row(names), r) for r in rows)]


def _factors_and_checks(names: Sequence[str], statements: Sequence[Assumption]):
    """Factors (independent statements, in order), checks (the others) and the factors' rows.

    A statement parallel to a factor with the same range adds nothing and is left out.
    """
    factors: list[Assumption] = []
    checks: list[Assumption] = []
    rows = _Span(len(names))
    for statement in statements:
        row = statement.row(names)
        if _independent(rows, row):
            factors.append(statement)
            rows.append(row)
        elif not any(a.low == statement.low and a.high == statement.high and _parallel(row, r)
                     for a, r in zip(factors, rows)):
            checks.append(statement)
    return factors, checks, rows


def _reference_factor(names: Sequence[str], meanings: Mapping[str, object], reference: tuple[str, int]) -> Assumption:
    """The absolute scale of the box: the reference conductance (or resistance) in its range."""
    name, dim = reference
    low, high = REFERENCE_CONDUCTANCE if dim < 0 else REFERENCE_RESISTANCE
    unit = unit_of(name, meanings) or ("A/V" if dim < 0 else "ohm")
    return Assumption(f"{name} in [{low:g}, {high:g}] {unit} (reference scale)", ((name, 1),), low, high, "reference")


def _capacitance_reference(name: str, meanings: Mapping[str, object]) -> Assumption:
    """The capacitance scale of the box: the first capacitance in its absolute range."""
    low, high = REFERENCE_CAPACITANCE
    return Assumption(f"{name} in [{low:g}, {high:g}] F (reference scale)", ((name, 1),), low, high, "reference")


def _free_factor(name: str, meanings: Mapping[str, object], reference: tuple[str, int] | None,
                 capacitance: bool = False) -> Assumption:
    """A wide range for a symbol no statement covers, relative to the reference scale in its unit."""
    powers: list[tuple[str, float]] = [(name, 1.0)]
    dim = 1 if capacitance else _dimension(name, meanings)
    if reference is not None and dim:
        ref, ref_dim = reference
        powers.append((ref, float(-dim * ref_dim)))
    monomial = Assumption("x", tuple(powers), *FREE_RANGE).monomial
    return Assumption(f"{monomial} in [{FREE_RANGE[0]:g}, {FREE_RANGE[1]:g}] (no assumption given)",
                      tuple(powers), *FREE_RANGE, "free")


def _dimension(name: str, meanings: Mapping[str, object]) -> int:
    """Power of ohm in the unit of a symbol: resistance 1, conductance -1, ratio 0."""
    power = ohm_power(name, meanings)
    if power is None:
        raise AnalysisError(f"cannot approximate over {name} [{unit_of(name, meanings)}]: only resistive results "
                            "are supported; evaluate frequency-dependent results numerically")
    return power


def _reference(names: Sequence[str], meanings: Mapping[str, object]) -> tuple[str, int] | None:
    """The symbol that sets the absolute scale: a transconductance first, else a conductance, else a resistance."""
    dimensions = {n: _dimension(n, meanings) for n in names}
    conductances = [n for n in names if dimensions[n] == -1]
    resistances = [n for n in names if dimensions[n] == 1]
    preferred = [n for n in conductances if parameter_of(n) == "gm"]
    if preferred:
        return preferred[0], -1
    if conductances:
        return conductances[0], -1
    if resistances:
        return resistances[0], 1
    return None


def _unit_row(names: Sequence[str], name: str) -> np.ndarray:
    row = np.zeros(len(names))
    row[list(names).index(name)] = 1
    return row


class _Span:
    """Log-space rows taken in order, with an orthonormal basis of their span.

    Why: the rank test runs for every statement and every symbol; one SVD of
    the stacked rows each time cost milliseconds per model.  Projecting a new
    row on the basis gives the same answer (the rows are small integers or
    halves, either clearly inside the span or clearly outside).
    """

    def __init__(self, size: int, rows: Iterable[np.ndarray] = ()):
        self.rows: list[np.ndarray] = []
        self._basis = np.zeros((0, size))
        for row in rows:
            self.append(row)

    def __iter__(self):
        return iter(self.rows)

    def __len__(self) -> int:
        return len(self.rows)

    def _residual(self, row: np.ndarray) -> np.ndarray:
        residual = np.asarray(row, dtype=float)
        for _ in range(2):  # twice: classical Gram-Schmidt loses orthogonality once
            residual = residual - (self._basis @ residual) @ self._basis
        return residual

    def independent(self, row: np.ndarray) -> bool:
        """True when the rows and ``row`` have a rank above the number of rows (so never for a zero row)."""
        if not np.any(row):
            return False
        if len(self._basis) < len(self.rows):  # dependent rows already: one more cannot lift the rank past the count
            return False
        return bool(np.linalg.norm(self._residual(row)) > _RANK_TOLERANCE * np.linalg.norm(row))

    def append(self, row: np.ndarray) -> None:
        if np.any(row):
            residual = self._residual(row)
            size = np.linalg.norm(residual)
            if size > _RANK_TOLERANCE * np.linalg.norm(row):
                self._basis = np.vstack([self._basis, residual / size])
        self.rows.append(row)


def _independent(rows: _Span, row: np.ndarray) -> bool:
    return rows.independent(row)


def _parallel(a: np.ndarray, b: np.ndarray) -> bool:
    if not (np.any(a) and np.any(b)):
        return False
    # two non-zero rows are parallel when |a.b| = |a||b| (to rounding)
    return bool(abs(float(a @ b)) >= (1 - 1e-12) * float(np.linalg.norm(a) * np.linalg.norm(b)))
