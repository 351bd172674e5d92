"""Term values: every numerator and denominator term of a formula at many points, in log space.

Third level of :mod:`symbias.approx` (Formula + points of the box -> term
values).  Values come straight from the ring polynomials (exponent matrix
times log generator values, plus log coefficients); no sympy.
"""

from __future__ import annotations

from typing import Sequence

import numpy as np

from ..formula import Formula
from ..linear.numeric import evaluate_expression
from .arrays import dot

__all__ = ["TermValues", "generator_logs"]

_STORE_ENTRIES = 8_000_000  # term values (points x terms) kept in memory; beyond, recomputed on demand
_CHUNK_ENTRIES = 2_000_000  # term values computed in one numpy pass


class TermValues:
    """Numerator and denominator terms of a formula, evaluated in log space.

    A computation helper local to one :func:`~symbias.approx.approximate`
    call (it keeps the values at the prepared points; never sent anywhere).
    Term values are scaled per point by the largest term of their side, so a
    sum of hundreds of terms of very different sizes neither overflows nor
    loses the small ones entirely.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
    >>> terms = TermValues(f, ("RA", "RB"))
    >>> terms.prepare(np.log([[1.0, 3.0]]))  # RA = 1, RB = 3: the denominator is 1/RA + 1/RB
    >>> terms.importance[1].round(2).tolist()
    [0.75, 0.25]
    >>> terms.ratio_at(np.log([[1.0, 3.0]]), ([0], [0])).round(4).tolist()  # RA against RA || RB
    [1.3333]
    """

    def __init__(self, formula: Formula, names: Sequence[str]):
        ring = formula.ring
        self.formula = formula
        self.names = tuple(names)
        ngens = len(formula.variables)
        self.symbol_map, self.special = _symbol_map(formula, self.names)
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
        return _generator_logs(self.formula, self.names, self.symbol_map, self.special, logs)

    def _values(self, side: int, glog: np.ndarray, gsign: np.ndarray, columns, top=None):
        """Signed term values over ``exp(top)`` (top: the largest term log per point by default)."""
        _, _, logc, signc = self.sides[side]
        exps_t = self.exps_t[side]
        if columns is not None:
            exps_t, logc, signc = exps_t[:, columns], logc[columns], signc[columns]
        t = dot(glog, exps_t) + logc
        if top is None:
            top = t.max(axis=1, keepdims=True)
        sign = signc
        if self.special:
            sign = signc * np.where(dot((gsign < 0).astype(float), exps_t) % 2 > 0.5, -1.0, 1.0)
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


def _symbol_map(formula: Formula, names: Sequence[str]) -> tuple[np.ndarray, list[int]]:
    """``log generators = log symbols @ map`` for the x and 1/x generators; the others' indices."""
    index = {n: i for i, n in enumerate(names)}
    symbol_map = np.zeros((len(names), len(formula.variables)))
    special: list[int] = []
    for g, variable in enumerate(formula.variables):
        if variable.power and variable.symbol in index:
            symbol_map[index[variable.symbol], g] = variable.power
        elif not variable.power:
            special.append(g)
    return symbol_map, special


def _generator_logs(formula: Formula, names: Sequence[str], symbol_map: np.ndarray, special: list[int],
                    logs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    glog = dot(logs, symbol_map)
    gsign = np.ones_like(glog)
    if special:
        values = {n: np.exp(logs[:, i]) for i, n in enumerate(names)}
        for g in special:
            v = np.broadcast_to(np.asarray(evaluate_expression(formula.variables[g].meaning, values),
                                           dtype=float), (len(logs),))
            glog[:, g] = np.log(np.abs(v))
            gsign[:, g] = np.sign(v)
    return glog, gsign


def generator_logs(formula: Formula, names: Sequence[str], logs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Log magnitude and sign of every ring generator of ``formula`` at points given as log symbol values.

    Generators of symbols outside ``names`` (``s``) count as 1.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\n"), "a")
    >>> glog, gsign = generator_logs(f, ("RA",), np.log([[2.0]]))
    >>> [v.name for v in f.variables], np.exp(glog).tolist()
    (['1/RA'], [[0.5]])
    """
    symbol_map, special = _symbol_map(formula, tuple(names))
    return _generator_logs(formula, tuple(names), symbol_map, special, logs)
