"""Dominant-term approximation of an exact formula, with a measured error bound.

Sixth step of the symbolic side (:class:`~symbias.formula.Formula` ->
:class:`Approximation`).  An exact result keeps every term; a design note
wants the few that matter.  This module keeps the fewest terms of numerator
and denominator whose worst relative error, measured over the stated
parameter ranges, is within a tolerance.

Magnitude assumptions
---------------------
Every statement is read as a range of a monomial (a product of powers of
symbols), in log space:

=====================  ===================================================
statement              range it stands for
=====================  ===================================================
``A >> B``             ``A/B`` in [30, 1e4]  (:data:`MUCH_GREATER`)
``A << B``             ``B/A`` in [30, 1e4]
``A ~ B``              ``A/B`` in [1/3, 3]   (:data:`COMPARABLE`)
``A in [lo, hi]``      ``A`` in [lo, hi]; also ``lo < A < hi``
``A = v``              ``A`` fixed at ``v``
=====================  ===================================================

Defaults follow hand analysis (:func:`default_assumptions`): per device or
matched group ``gm*ro >> 1``; for bipolar devices ``beta >> 1`` read as beta in
[30, 1000] (:data:`BETA_RANGE`) and ``ro >> rpi`` (``VA/VT`` of tens of volts
over 26 mV is about 1e3, against beta about 1e2); for MOS devices the body
factor ``gmb/gm`` in [0.05, 0.4] (:data:`BODY_RANGE`); devices of an unmatched
circuit are comparable (``gm_Q2 ~ gm_Q1``, ``ro_Q2 ~ ro_Q1``).  A statement of
the user on the same monomial replaces the default.

Ranges and sampling
-------------------
Statements are taken in order (user first); each one whose monomial is
independent of those already taken becomes a *factor*, a coordinate of a box;
the others become *checks* that a point must pass.  The box is completed
with a reference scale (the first transconductance in [1e-5, 1e-2] A/V, or a
resistance in [1e2, 1e5] ohm; it matters only when numbers with units sit in
the formula) and with a wide default range, [1e-2, 1e2] relative to that
scale, for any symbol no statement covers.  The worst error is searched at
every corner of the box (up to :data:`MAX_CORNERS`), at seeded random points
(log-uniform per factor), keeping only points that pass every check, and then
refined by a compass search from the worst points found.  The approximation
reports the worst error, where it occurs and how many points were used.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> from symbias.devices.options import SmallSignalOptions
>>> deck = '''cascode sink
... VB1 g1 0 1
... VB2 g2 0 2
... M1 x g1 0 0 NM
... M2 out g2 x x NM
... Vout out 0 3
... .model NM nmos
... '''
>>> exact = output_resistance(parse_netlist(deck), "Vout", SmallSignalOptions(match=True))
>>> exact.expr
gm*ro**2 + 2*ro
>>> a = approximate(exact)
>>> a.expr
gm*ro**2
>>> a.error < 0.1
True
"""

from __future__ import annotations

import itertools
import math
import re
from dataclasses import dataclass, field
from functools import cached_property
from types import MappingProxyType
from typing import Any, Iterable, Mapping, Sequence

import numpy as np
import sympy

from .errors import AnalysisError, AssumptionError, SymbiasError
from .expressions import Expr
from .formula import Formula
from .symbols import ohm_power, owners, unit_of

#: Device parameters the hand-analysis defaults speak about.
_DEFAULT_PARAMETERS = ("gm", "gmb", "ro", "rpi", "beta")

__all__ = [
    "Assumption",
    "AssumptionError",
    "MagnitudeModel",
    "Approximation",
    "parse_assumption",
    "default_assumptions",
    "nominal_ranges",
    "magnitude_model",
    "approximate",
    "MUCH_GREATER",
    "COMPARABLE",
    "BETA_RANGE",
    "BODY_RANGE",
    "DEFAULT_TOLERANCE",
    "DEFAULT_SAMPLES",
    "MAX_CORNERS",
]

#: Range of ``A/B`` read from ``A >> B``.
MUCH_GREATER = (30.0, 1e4)
#: Range of ``A/B`` read from ``A ~ B``.
COMPARABLE = (1 / 3, 3.0)
#: Range of beta read from the default ``beta >> 1``.
BETA_RANGE = (30.0, 1000.0)
#: Range of the MOS body factor ``gmb/gm`` (about 0.1-0.3 in bulk processes; common practice).
BODY_RANGE = (0.05, 0.4)
#: Absolute range of the reference transconductance (A/V) and resistance (ohm).
REFERENCE_CONDUCTANCE = (1e-5, 1e-2)
REFERENCE_RESISTANCE = (1e2, 1e5)
#: Range of a symbol no statement covers, relative to the reference scale.
FREE_RANGE = (1e-2, 1e2)
DEFAULT_TOLERANCE = 0.10
DEFAULT_SAMPLES = 2000
#: Above this many box corners, a seeded random choice of corners is used.
MAX_CORNERS = 1024

_LARGEST_SEARCH = 8  # numerator plus denominator terms tried exhaustively
_POOL = 10  # terms per side in the exhaustive search
_GREEDY_POOL = 30  # terms per side the greedy continuation may add
_TIDY_TERMS = 40  # kept terms up to which the form is cancelled and factored for display
_PAIR_BUDGET = 60_000  # candidate (numerator, denominator) sets screened per size before going greedy
_SCREEN_POINTS = 1200  # points used to screen candidates before full verification
_SAMPLE_ROWS = 1 << 17  # random points drawn in one numpy pass while sampling
_STORE_ENTRIES = 8_000_000  # term values (points x terms) kept in memory; beyond, recomputed on demand
_CHUNK_ENTRIES = 2_000_000  # term values computed in one numpy pass
_SMALL_PRODUCT = 8_000_000  # multiply-adds up to which a matrix product is cut into single-thread pieces
_SINGLE_THREAD_PRODUCT = 262_144  # multiply-adds below which OpenBLAS keeps a product on one thread


# ----------------------------------------------------------------------------------------
# statements
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Assumption:
    """A magnitude statement: ``low <= prod(symbol**exponent) <= high``.

    Parameters
    ----------
    text : str
        The statement as written (``"gm*ro >> 1"``).
    powers : tuple of (str, float)
        The monomial, as (symbol name, exponent) pairs sorted by name.
    low, high : float
        Its range, ``0 < low <= high``.
    origin : str
        ``user``, ``default``, ``reference`` (scale of the box) or ``free``
        (a symbol no statement covers).

    Examples
    --------
    >>> a = parse_assumption("gm*ro >> 1")
    >>> a.monomial, a.low, a.high
    ('gm*ro', 30.0, 10000.0)
    >>> str(a)
    'gm*ro >> 1'
    """

    text: str
    powers: tuple[tuple[str, float], ...]
    low: float
    high: float
    origin: str = "user"

    def __post_init__(self) -> None:
        if not self.powers:
            raise AssumptionError(f"{self.text!r} names no symbol")
        if not (0 < self.low <= self.high) or not math.isfinite(self.high):
            raise AssumptionError(f"{self.text!r}: the range must be positive and finite, low <= high")
        object.__setattr__(self, "powers", tuple(sorted((str(n), float(e)) for n, e in self.powers)))

    @property
    def names(self) -> frozenset[str]:
        """Symbols the statement involves."""
        return frozenset(n for n, _ in self.powers)

    @property
    def monomial(self) -> str:
        """The monomial as text (``gm*ro``, ``gmb/gm``)."""
        up = [_power_text(n, e) for n, e in self.powers if e > 0]
        down = [_power_text(n, -e) for n, e in self.powers if e < 0]
        text = "*".join(up) or "1"
        if down:
            text += "/" + (down[0] if len(down) == 1 else "(" + "*".join(down) + ")")
        return text

    def describe(self) -> str:
        """The statement with the range it stands for.

        Examples
        --------
        >>> parse_assumption("RE >> 1/gm").describe()
        'RE >> 1/gm  (RE*gm in [30, 1e+04])'
        """
        if self.origin in ("reference", "free"):
            return self.text
        if self.low == self.high:
            span = f"{self.monomial} = {self.low:.4g}"
        else:
            span = f"{self.monomial} in [{self.low:.4g}, {self.high:.4g}]"
        if self.text.replace(" ", "") in (span.replace(" ", ""),):
            return self.text
        return f"{self.text}  ({span})"

    def row(self, names: Sequence[str]) -> np.ndarray:
        """Exponent vector over ``names`` (the statement in log space)."""
        index = {n: i for i, n in enumerate(names)}
        out = np.zeros(len(names))
        for n, e in self.powers:
            out[index[n]] = e
        return out

    def __str__(self) -> str:
        return self.text


def _power_text(name: str, exponent: float) -> str:
    if exponent == 1:
        return name
    return f"{name}**{int(exponent) if float(exponent).is_integer() else exponent}"


_CHAIN = re.compile(r"^(.+?)(<=|<|>=|>)(.+?)(<=|<|>=|>)(.+)$")
_RANGE = re.compile(r"^(.+?)\s+in\s*\[(.+),(.+)\]$", re.IGNORECASE)


def parse_assumption(text: str, origin: str = "user") -> Assumption:
    """Read a statement such as ``gm*ro >> 1``, ``RE >> 1/gm``, ``beta in [50, 200]``.

    Sides are read by the restricted expression parser (never ``eval``);
    bounds accept SPICE suffixes (``3m``).  See the module table for the
    meaning of each operator.

    Raises
    ------
    AssumptionError
        If the text has no known operator or the ratio is not a monomial.

    Examples
    --------
    >>> parse_assumption("50 < beta < 200").describe()
    '50 < beta < 200  (beta in [50, 200])'
    >>> parse_assumption("gm_Q2 ~ gm_Q1").monomial
    'gm_Q2/gm_Q1'
    """
    s = " ".join(text.split())
    if not s:
        raise AssumptionError("empty assumption")
    try:
        if ">>" in s or "<<" in s:
            op = ">>" if ">>" in s else "<<"
            left, right = _split(s, op)
            ratio = _side(left) / _side(right) if op == ">>" else _side(right) / _side(left)
            return _statement(s, ratio, *MUCH_GREATER, origin)
        if "~" in s:
            left, right = _split(s, "~")
            return _statement(s, _side(left) / _side(right), *COMPARABLE, origin)
        match = _RANGE.match(s)
        if match:
            return _statement(s, _side(match.group(1)), _bound(match.group(2)), _bound(match.group(3)), origin)
        match = _CHAIN.match(s)
        if match:
            a, op1, b, op2, c = (g.strip() for g in match.groups())
            if op1[0] != op2[0]:
                raise AssumptionError(f"{s!r}: write a range as lo < X < hi")
            low, high = (_bound(a), _bound(c)) if op1[0] == "<" else (_bound(c), _bound(a))
            return _statement(s, _side(b), low, high, origin)
        if "=" in s:
            left, right = _split(s, "=")
            value = _bound(right)
            return _statement(s, _side(left), value, value, origin)
    except SymbiasError as err:
        if isinstance(err, AssumptionError):
            raise
        raise AssumptionError(f"cannot read assumption {s!r}: {err.reason}") from None
    raise AssumptionError(
        f"cannot read assumption {s!r}: expected A >> B, A << B, A ~ B, A in [lo, hi], lo < A < hi or A = v"
    )


def _split(text: str, op: str) -> tuple[str, str]:
    parts = text.split(op)
    if len(parts) != 2 or not parts[0].strip() or not parts[1].strip():
        raise AssumptionError(f"cannot read assumption {text!r}: expected one {op!r} between two sides")
    return parts[0].strip(), parts[1].strip()


def _side(text: str) -> Expr:
    from .expressions import parse_expression, try_parse_number

    number = try_parse_number(text)
    return number if number is not None else parse_expression(text)


def _bound(text: str) -> float:
    value = _side(text.strip())
    if not value.is_number:
        raise AssumptionError(f"bound {text.strip()!r} is not a number")
    return float(value)


def _statement(text: str, ratio: Expr, low: float, high: float, origin: str) -> Assumption:
    from .expressions import Symbol

    terms = ratio.terms()
    if len(terms) != 1:
        raise AssumptionError(f"{text!r}: the ratio of the two sides must be a product of powers of symbols")
    (monomial, coeff), = terms.items()
    if not coeff > 0:
        raise AssumptionError(f"{text!r}: both sides must be positive")
    powers = []
    for base, exponent in monomial:
        if not isinstance(base, Symbol):
            raise AssumptionError(f"{text!r}: the ratio of the two sides must be a product of powers of symbols")
        powers.append((base.name, float(exponent)))
    if not powers:
        raise AssumptionError(f"{text!r} compares numbers only")
    scale = float(coeff)
    return Assumption(text, tuple(powers), low / scale, high / scale, origin)


def default_assumptions(names: Iterable[str]) -> tuple[Assumption, ...]:
    """Hand-analysis statements for the device symbols among ``names``.

    Examples
    --------
    >>> [a.text for a in default_assumptions(["beta", "gm", "ro"])]
    ['gm*ro >> 1', 'beta >> 1', 'ro >> beta/gm']
    >>> [a.text for a in default_assumptions(["gm_M1", "gm_M2", "gmb_M2", "ro_M1", "ro_M2"])]
    ['gm_M1*ro_M1 >> 1', 'gm_M2 ~ gm_M1', 'ro_M2 ~ ro_M1', 'gm_M2*ro_M2 >> 1', '0.05 < gmb_M2/gm_M2 < 0.4']
    """
    groups = {owner: {k: v for k, v in params.items() if k in _DEFAULT_PARAMETERS}
              for owner, params in owners(names).items()}
    groups = {owner: params for owner, params in groups.items() if params}
    own: dict[str, list[Assumption]] = {}
    late: list[Assumption] = []
    for suffix in sorted(groups):
        p = groups[suffix]
        gm, ro, rpi, beta, gmb = (p.get(k) for k in ("gm", "ro", "rpi", "beta", "gmb"))
        mine = own.setdefault(suffix, [])
        if gm and ro:
            mine.append(Assumption(f"{gm}*{ro} >> 1", ((gm, 1), (ro, 1)), *MUCH_GREATER, "default"))
        if beta:
            mine.append(Assumption(f"{beta} >> 1", ((beta, 1),), *BETA_RANGE, "default"))
        if rpi and gm:
            mine.append(Assumption(f"{rpi} >> 1/{gm}", ((rpi, 1), (gm, 1)), *BETA_RANGE, "default"))
        if gmb and gm:
            mine.append(Assumption(f"{BODY_RANGE[0]:g} < {gmb}/{gm} < {BODY_RANGE[1]:g}", ((gmb, 1), (gm, -1)),
                                   *BODY_RANGE, "default"))
        if ro and rpi:
            late.append(Assumption(f"{ro} >> {rpi}", ((ro, 1), (rpi, -1)), *MUCH_GREATER, "default"))
        elif ro and beta and gm:
            late.append(Assumption(f"{ro} >> {beta}/{gm}", ((ro, 1), (gm, 1), (beta, -1)), *MUCH_GREATER, "default"))
    cross: list[Assumption] = []
    for parameter in ("gm", "ro", "rpi", "beta"):
        members = [groups[s][parameter] for s in sorted(groups) if parameter in groups[s]]
        for other in members[1:]:
            cross.append(Assumption(f"{other} ~ {members[0]}", ((other, 1), (members[0], -1)), *COMPARABLE,
                                    "default"))
    # the first device's ranges and the comparisons to it span the box; the other devices' own
    # statements then act as checks, which keeps most random points admissible
    ordered = list(own.get(min(own), [])) if own else []
    ordered += cross
    for suffix in sorted(own)[1:]:
        ordered += own[suffix]
    return tuple(ordered + late)


def nominal_ranges(values: Mapping[str, float], spread: float = 0.3) -> tuple[Assumption, ...]:
    """Range statements around a numeric nominal point (e.g. from an operating point).

    Each symbol ranges over ``[v*(1-spread), v*(1+spread)]``.

    Examples
    --------
    >>> [a.describe() for a in nominal_ranges({"gm": 4e-3}, 0.25)]
    ['gm in [0.003, 0.005]']
    """
    if not 0 <= spread < 1:
        raise AssumptionError(f"spread must be in [0, 1), got {spread}")
    out = []
    for name, value in sorted(values.items()):
        value = float(value)
        if value <= 0:
            raise AssumptionError(f"nominal value of {name} must be positive, got {value:g}")
        low, high = value * (1 - spread), value * (1 + spread)
        out.append(Assumption(f"{name} in [{low:.4g}, {high:.4g}]", ((name, 1),), low, high, "user"))
    return tuple(out)


# ----------------------------------------------------------------------------------------
# the box of magnitudes
# ----------------------------------------------------------------------------------------
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
        return _dot(f, self._inverse_t) if f.ndim == 2 else f @ self._inverse_t

    def admissible(self, logs: np.ndarray) -> np.ndarray:
        """Mask of points that pass every check (a relative slack of 1e-9)."""
        logs = np.asarray(logs, dtype=float).reshape(-1, len(self.names))
        if not self.checks:
            return np.ones(len(logs), dtype=bool)
        values = _dot(logs, self._check_rows)
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
            for j, w in zip(used, weights):  # a short sum, not a BLAS call (see _dot)
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
        if 2 ** len(free) <= MAX_CORNERS:
            bits = np.array(list(itertools.product((0.0, 1.0), repeat=len(free)))).reshape(-1, len(free))
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


def _dimension(name: str, meanings: Mapping[str, object]) -> int:
    """Power of ohm in the unit of a symbol: resistance 1, conductance -1, ratio 0."""
    power = ohm_power(name, meanings)
    if power is None:
        raise AnalysisError(f"cannot approximate over {name} [{unit_of(name, meanings)}]: only resistive results "
                            "are supported; evaluate frequency-dependent results numerically")
    return power


def magnitude_model(
    names: Iterable[str],
    assumptions: Iterable[Assumption | str] = (),
    *,
    defaults: bool = True,
    meanings: Mapping[str, str] | None = None,
) -> MagnitudeModel:
    """Build the log-space box for ``names`` from statements (user first, then defaults).

    Statements about symbols outside ``names`` are ignored; a default on the
    same monomial as a user statement is dropped.

    Raises
    ------
    AssumptionError
        For unreadable statements.
    AnalysisError
        When ``s`` (or another non-resistive symbol) appears.
    """
    names = tuple(sorted(set(names)))
    meanings = meanings or {}
    if "s" in names:
        raise AnalysisError("cannot approximate a frequency-dependent result (s appears); evaluate it numerically")
    user = [parse_assumption(a) if isinstance(a, str) else a for a in assumptions]
    user = [a for a in user if a.names <= set(names)]
    statements = list(user)
    if defaults:
        for default in default_assumptions(names):
            if not any(_parallel(default.row(names), a.row(names)) for a in user):
                statements.append(default)
    factors: list[Assumption] = []
    checks: list[Assumption] = []
    rows: list[np.ndarray] = []
    for statement in statements:
        row = statement.row(names)
        if _independent(rows, row):
            factors.append(statement)
            rows.append(row)
        elif not any(_parallel(row, r) and a.low == statement.low and a.high == statement.high
                     for a, r in zip(factors, rows)):
            checks.append(statement)
    reference = _reference(names, meanings)
    if reference is not None:
        name, dim = reference
        row = np.zeros(len(names))
        row[names.index(name)] = 1
        if _independent(rows, row):
            low, high = REFERENCE_CONDUCTANCE if dim < 0 else REFERENCE_RESISTANCE
            unit = "A/V" if dim < 0 else "ohm"
            factors.append(Assumption(f"{name} in [{low:g}, {high:g}] {unit} (reference scale)", ((name, 1),), low,
                                      high, "reference"))
            rows.append(row)
    for name in names:
        row = np.zeros(len(names))
        row[names.index(name)] = 1
        if not _independent(rows, row):
            continue
        powers: list[tuple[str, float]] = [(name, 1.0)]
        dim = _dimension(name, meanings)
        if reference is not None and dim:
            ref, ref_dim = reference
            powers.append((ref, float(-dim * ref_dim)))
        monomial = Assumption("x", tuple(powers), *FREE_RANGE).monomial
        statement = Assumption(f"{monomial} in [{FREE_RANGE[0]:g}, {FREE_RANGE[1]:g}] (no assumption given)",
                               tuple(powers), *FREE_RANGE, "free")
        statement_row = statement.row(names)
        if _independent(rows, statement_row):
            factors.append(statement)
            rows.append(statement_row)
    return MagnitudeModel(names, tuple(factors), tuple(checks))


def _reference(names: Sequence[str], meanings: Mapping[str, str]) -> tuple[str, int] | None:
    conductances = [n for n in names if _dimension(n, meanings) == -1]
    resistances = [n for n in names if _dimension(n, meanings) == 1]
    preferred = [n for n in conductances if n == "gm" or n.startswith("gm_")]
    if preferred:
        return preferred[0], -1
    if conductances:
        return conductances[0], -1
    if resistances:
        return resistances[0], 1
    return None


def _independent(rows: list[np.ndarray], row: np.ndarray) -> bool:
    if not np.any(row):
        return False
    if not rows:
        return True
    return np.linalg.matrix_rank(np.vstack(rows + [row])) > len(rows)


def _parallel(a: np.ndarray, b: np.ndarray) -> bool:
    return bool(np.any(a)) and bool(np.any(b)) and np.linalg.matrix_rank(np.vstack([a, b])) == 1


# ----------------------------------------------------------------------------------------
# term values
# ----------------------------------------------------------------------------------------
class _Terms:
    """Numerator and denominator terms of a formula, evaluated in log space.

    A computation helper local to one :func:`approximate` call.
    """

    def __init__(self, formula: Formula, names: Sequence[str]):
        ring = formula.ring
        self.formula = formula
        self.names = tuple(names)
        index = {n: i for i, n in enumerate(self.names)}
        ngens = len(formula.variables)
        self.symbol_map = np.zeros((len(self.names), ngens))  # log generator = log symbols @ symbol_map
        self.special: list[int] = []
        for g, variable in enumerate(formula.variables):
            if variable.power and variable.symbol in index:
                self.symbol_map[index[variable.symbol], g] = variable.power
            elif not variable.power:
                self.special.append(g)
        self.sides = []
        for poly in (formula.numerator, formula.denominator):
            terms = ring.terms(poly)
            exps = np.array([e for e, _ in terms], dtype=float).reshape(len(terms), ngens)
            coeffs = np.array([float(c) for _, c in terms])
            self.sides.append((terms, exps, np.log(np.abs(coeffs)), np.sign(coeffs)))
        self.exps_t = [np.ascontiguousarray(exps.T) for _, exps, _, _ in self.sides]
        # exponents of each term in the user symbols (generators of sub-expressions count as used)
        self.user_exps = [exps @ self.symbol_map.T for _, exps, _, _ in self.sides]
        self.stored: list[np.ndarray | None] = [None, None]

    def generator_logs(self, logs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Log magnitude and sign of every generator at the points."""
        glog = _dot(logs, self.symbol_map)
        gsign = np.ones_like(glog)
        if self.special:
            from .linear.numeric import evaluate_expression

            values = {n: np.exp(logs[:, i]) for i, n in enumerate(self.names)}
            for g in self.special:
                v = np.broadcast_to(np.asarray(evaluate_expression(self.formula.variables[g].meaning, values),
                                               dtype=float), (len(logs),))
                glog[:, g] = np.log(np.abs(v))
                gsign[:, g] = np.sign(v)
        return glog, gsign

    def _values(self, side: int, glog: np.ndarray, gsign: np.ndarray, columns, top=None):
        """Signed term values over ``exp(top)`` (top: the largest term log per point by default)."""
        _, _, logc, signc = self.sides[side]
        exps_t = self.exps_t[side]
        if columns is not None:
            exps_t, logc, signc = exps_t[:, columns], logc[columns], signc[columns]
        t = _dot(glog, exps_t) + logc
        if top is None:
            top = t.max(axis=1, keepdims=True)
        sign = signc
        if self.special:
            sign = signc * np.where(_dot((gsign < 0).astype(float), exps_t) % 2 > 0.5, -1.0, 1.0)
        return sign * np.exp(t - top), top

    def prepare(self, logs: np.ndarray) -> None:
        """Store per point the largest term log, the scaled sums and each term's importance.

        The scaled value of every term at every point is kept too (points x
        terms) when it fits :data:`_STORE_ENTRIES`, so that the search reads
        columns instead of recomputing them.
        """
        self.glog, self.gsign = self.generator_logs(logs)
        self.tops, self.sums, self.importance = [], [], []
        store = len(logs) * (len(self.sides[0][0]) + len(self.sides[1][0])) <= _STORE_ENTRIES
        for side in (0, 1):
            tops, sums, parts = [], [], []
            importance = np.zeros(len(self.sides[side][0]))
            chunk = max(1, _CHUNK_ENTRIES // max(1, len(self.sides[side][0])))
            for start in range(0, len(logs), chunk):
                part = slice(start, start + chunk)
                values, top = self._values(side, self.glog[part], self.gsign[part], None)
                total = values.sum(axis=1)
                with np.errstate(divide="ignore", invalid="ignore"):
                    share = np.abs(values) / np.abs(total)[:, None]
                importance = np.maximum(importance, np.nan_to_num(share, nan=np.inf).max(axis=0))
                tops.append(top)
                sums.append(total)
                if store:
                    parts.append(values)
            self.tops.append(np.vstack(tops))
            self.sums.append(np.concatenate(sums))
            self.importance.append(importance)
            self.stored[side] = np.vstack(parts) if store else None

    def columns(self, side: int, columns: Sequence[int]) -> np.ndarray:
        """Scaled values of some terms at the prepared points (same scale as :attr:`sums`)."""
        stored = self.stored[side]
        if stored is not None:
            return stored[:, list(columns)]
        return self._values(side, self.glog, self.gsign, list(columns), self.tops[side])[0]

    def ratio_at(self, logs: np.ndarray, kept: tuple[Sequence[int], Sequence[int]]) -> np.ndarray:
        """approx/exact at new points for kept term index sets."""
        glog, gsign = self.generator_logs(logs)
        out = []
        for side in (0, 1):
            values = self._values(side, glog, gsign, None)[0]
            out.append(values[:, list(kept[side])].sum(axis=1) / values.sum(axis=1))
        with np.errstate(divide="ignore", invalid="ignore"):
            return out[0] / out[1]

    def symbol_count(self, kept: tuple[Sequence[int], Sequence[int]]) -> int:
        """Symbols left in approx = N'/D' once the common monomial is cancelled."""
        rows = np.vstack([self.user_exps[0][list(kept[0])], self.user_exps[1][list(kept[1])]])
        used = np.any(rows != rows.min(axis=0), axis=0)
        special = 0
        for side in (0, 1):
            _, exps, _, _ = self.sides[side]
            if self.special:
                special |= int(np.any(exps[list(kept[side])][:, self.special]))
        return int(used.sum()) + special


def _dot(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """``a @ b``, cut into row blocks that BLAS runs on the calling thread when it is mid-sized.

    Why: a multi-threaded BLAS (OpenBLAS: above about 2.6e5 multiply-adds)
    wakes its threads for every product; on a busy machine a wake-up costs
    milliseconds, far more than the arithmetic of the many mid-sized products
    the search makes.  Small and large products go to BLAS as they are.  The
    result is the same product whatever BLAS decides.

    Examples
    --------
    >>> _dot(np.eye(2), np.array([[1.0, 2.0], [3.0, 4.0]]))
    array([[1., 2.],
           [3., 4.]])
    """
    m, k = a.shape
    n = b.shape[1]
    rows = _SINGLE_THREAD_PRODUCT // max(1, k * n)
    if m * k * n <= _SINGLE_THREAD_PRODUCT or m * k * n > _SMALL_PRODUCT or rows < 1:
        return a @ b
    out = np.empty((m, n), dtype=np.result_type(a, b))
    for start in range(0, m, rows):
        np.matmul(a[start : start + rows], b, out=out[start : start + rows])
    return out


def _errors(ratio: np.ndarray) -> np.ndarray:
    with np.errstate(invalid="ignore"):
        err = np.abs(ratio - 1.0)
    return np.where(np.isfinite(err), err, np.inf)


# ----------------------------------------------------------------------------------------
# the result
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class Approximation:
    """A dominant-term form of an exact formula and its measured worst error.

    Parameters
    ----------
    exact : Formula
        The exact result.
    formula : Formula
        The kept terms ``N'/D'`` over the same ring (for evaluation).
    error : float
        Worst relative error ``|approx/exact - 1|`` found.
    worst_point : mapping of str to float
        Symbol values where it occurs.
    assumptions : tuple of Assumption
        Every statement that shaped the ranges (factors, then checks).
    tolerance : float
    corners, samples, refined : int
        Box corners evaluated, random points drawn and compass-search points.
    admitted : int
        Corners and samples that passed every check.
    seed : int
    kept : tuple of (int, int)
        ``((kept numerator terms, all), (kept denominator terms, all))``.

    Attributes
    ----------
    expr : sympy.Expr
        The approximation, common factors cancelled (for display and export);
        built on first use, since a caller that only needs the error or the
        kept counts should not pay for a long sympy expression.
    """

    exact: Formula
    formula: Formula
    error: float
    worst_point: Mapping[str, float]
    assumptions: tuple[Assumption, ...]
    tolerance: float
    corners: int
    samples: int
    refined: int
    admitted: int
    seed: int
    kept: tuple[tuple[int, int], tuple[int, int]]
    model: MagnitudeModel | None = field(default=None, repr=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "worst_point", MappingProxyType(dict(self.worst_point)))

    @cached_property
    def expr(self) -> sympy.Expr:
        """The approximation, common factors cancelled (for display and export)."""
        if self.formula is self.exact:
            return self.exact.expr
        # factoring is for display of a short form; it costs minutes on a long one
        if sum(k for k, _ in self.kept) <= _TIDY_TERMS:
            return _tidy(self.formula.expr)
        return self.formula.expr

    @property
    def text(self) -> str:
        """The approximation as text that ``sympy.parse_expr`` reads back."""
        return sympy.sstr(self.expr)

    @property
    def statements(self) -> tuple[str, ...]:
        """The assumptions, each with the range it stands for."""
        return tuple(a.describe() for a in self.assumptions)

    def evaluate(self, values: Mapping[Any, Any]) -> np.ndarray:
        """Evaluate the approximation (numbers or numpy arrays)."""
        return self.formula.evaluate(values, route="polynomial")

    def relative_error(self, values: Mapping[Any, Any]) -> np.ndarray:
        """``|approx/exact - 1|`` at given values."""
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.abs(self.evaluate(values) / self.exact.evaluate(values) - 1.0)

    @property
    def worst_ratios(self) -> dict[str, float]:
        """The assumed monomials (``gm*ro``, ``beta`` ...) at the worst point."""
        out: dict[str, float] = {}
        if not self.worst_point:
            return out
        for a in self.assumptions:
            if a.origin in ("user", "default", "free") and a.low != a.high:
                out.setdefault(a.monomial, float(np.prod([self.worst_point[n] ** e for n, e in a.powers])))
        return out

    def where(self) -> str:
        """The worst point as text, in the assumed monomials (``gm*ro=900, beta=30``)."""
        return ", ".join(f"{k}={v:.4g}" for k, v in (self.worst_ratios or self.worst_point).items()) or "every point"

    def summary(self) -> str:
        """One line: the form, the worst error and where it occurs.

        Examples
        --------
        >>> from symbias.netlist import parse_netlist
        >>> from symbias.analyses import output_resistance
        >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
        >>> a = approximate(f, ["RA >> RB"])
        >>> a.summary().split(";")[0]
        'Rout at a ~ RB'
        """
        return (f"{self.exact.label} ~ {self.text}; worst relative error {100 * self.error:.3g}% at {self.where()} "
                f"({self.corners} corners + {self.samples} random points, {self.admitted} admitted, "
                f"{self.refined} refinement points)")

    def __str__(self) -> str:
        return self.summary()


def approximate(
    formula: Formula,
    assumptions: Iterable[Assumption | str] = (),
    *,
    tolerance: float = DEFAULT_TOLERANCE,
    defaults: bool = True,
    samples: int = DEFAULT_SAMPLES,
    seed: int = 0,
) -> Approximation:
    """The simplest dominant-term form within ``tolerance`` over the assumed ranges.

    Simplest means fewest numerator plus denominator terms, then fewest
    symbols, then smallest error.  Forms of up to 8 terms (from the 10 most
    important terms of each side) are tried exhaustively; beyond that terms
    are added greedily, up to the exact form itself (error 0).

    Parameters
    ----------
    formula : Formula
    assumptions : iterable of str or Assumption
        Extra statements (see the module docstring); they override a default
        on the same monomial.
    tolerance : float
        Largest accepted worst relative error (0.1 = 10 %).
    defaults : bool
        Add the hand-analysis defaults of :func:`default_assumptions`.
    samples : int
        Random points drawn in addition to the box corners.
    seed : int

    Raises
    ------
    AssumptionError
        If no point satisfies every assumption.
    AnalysisError
        For frequency-dependent results.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
    >>> approximate(f, ["RA ~ RB"]).expr
    RA*RB/(RA + RB)
    """
    if not tolerance > 0:
        raise AssumptionError(f"tolerance must be positive, got {tolerance}")
    if samples < 0:
        raise AssumptionError(f"samples must be >= 0, got {samples}")
    names = [s.name for s in formula.symbols]
    nN, nD = formula.nterms
    if not names or (nN <= 1 and nD <= 1):
        return _whole(formula, tolerance, seed, assumptions)
    model = magnitude_model(names, assumptions, defaults=defaults, meanings=formula.meanings)
    corners = model.corners(seed)
    corners = corners[model.admissible(model.logs(corners))]
    random, drawn = model.admitted_sample(samples, seed)
    unit = np.vstack([corners, random])
    if not len(unit):
        raise AssumptionError("no point satisfies every assumption: "
                              + "; ".join(a.describe() for a in model.assumptions)
                              + " (drop a default with an explicit statement or with defaults=False)")
    terms = _Terms(formula, model.names)
    terms.prepare(model.logs(unit))
    search = _Search(terms, tolerance, model, unit)
    kept, error, worst_unit, refined = search.run()
    return _result(formula, terms, model, kept, error, worst_unit, tolerance, len(corners), drawn, refined,
                   len(unit), seed)


def _whole(formula: Formula, tolerance: float, seed: int, assumptions) -> Approximation:
    """A result that is already a single term (or a number) is its own approximation."""
    nN, nD = formula.nterms
    return Approximation(formula, formula, 0.0, {}, (), tolerance, 0, 0, 0, 0, seed, ((nN, nN), (nD, nD)))


def _result(formula, terms: _Terms, model, kept, error, worst_unit, tolerance, corners, samples, refined,
            admitted, seed) -> Approximation:
    ring = formula.ring
    polys = []
    for side in (0, 1):
        all_terms = terms.sides[side][0]
        polys.append(ring.from_terms([all_terms[i] for i in sorted(kept[side])]))
    approx = formula.with_polynomials(polys[0], polys[1], label=f"{formula.label} (approx)",
                                      quantity=formula.quantity, problem=None)
    point = {n: float(v[0]) for n, v in model.values(worst_unit[None, :]).items()}
    nN, nD = formula.nterms
    return Approximation(formula, approx, float(error), point, model.assumptions, tolerance, corners,
                         samples, refined, admitted, seed, ((len(kept[0]), nN), (len(kept[1]), nD)), model)


def _tidy(expr: sympy.Expr) -> sympy.Expr:
    """Cancel and factor a small expression; keep the cancelled form when factoring adds nothing."""
    cancelled = sympy.cancel(expr)
    factored = sympy.factor(cancelled)
    return factored if sympy.count_ops(factored) <= sympy.count_ops(cancelled) else cancelled


class _Search:
    """Exhaustive search over small term sets, then greedy growth; local to one call."""

    def __init__(self, terms: _Terms, tolerance: float, model: MagnitudeModel, unit: np.ndarray):
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
                rn, rd = (_subset_sums(screened[s], combos[s]) for s in (0, 1))
                worst = _pair_errors(rn, rd, self.tolerance)
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
            err = _errors(cols[0] / cols[1])
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
            e = _errors(self.terms.ratio_at(logs, kept))
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
                worst = _errors(ratio).max(axis=0)
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


def _subset_sums(columns: np.ndarray, subsets: Sequence[Sequence[int]]) -> np.ndarray:
    """Per point, the sum of the columns of each subset (points x subsets), all subsets of one size.

    Examples
    --------
    >>> _subset_sums(np.array([[1.0, 2.0, 4.0]]), [(0, 1), (0, 2), (1, 2)]).tolist()
    [[3.0, 5.0, 6.0]]
    """
    index = np.asarray(subsets, dtype=int).reshape(len(subsets), -1)
    total = columns[:, index[:, 0]]
    for j in range(1, index.shape[1]):
        total = total + columns[:, index[:, j]]  # term by term, as a sum over each subset would add them
    return total


def _pair_errors(rn: np.ndarray, rd: np.ndarray, tolerance: float = np.inf, budget: int = 4_000_000) -> np.ndarray:
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
    >>> _pair_errors(rn, rd).round(3).tolist()
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
