"""The user-facing form of a result: ring generators turned back into the user's symbols.

Part of :mod:`symbias.formula`, below the :class:`~symbias.formula.Formula`
object and the text writers.  A ring generator stands for a symbol ``x``,
its reciprocal ``1/x`` or a non-polynomial sub-expression
(:class:`~symbias.linear.mna.RingVariable`).  The user-facing form multiplies
numerator and denominator by the lowest powers of the symbols that clear
every reciprocal, so both are polynomials in the user's factors: symbols, and
sub-expressions written in brackets.

:class:`UserForm` holds that map once per formula: the factors (``keys``),
their text, the matrix from generator exponents to factor exponents and the
common shift.  It works on :class:`~symbias.linear.polys.TermColumns`, so a
million-term result is converted with a few array operations.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
>>> form = user_form(f.variables, [f.ring.columns(f.numerator), f.ring.columns(f.denominator)])
>>> form.texts, form.shift.tolist()
(('RA', 'RB'), [1, 1])
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property
from fractions import Fraction
from typing import Any, Sequence

import numpy as np

from ..expressions import Power, Symbol
from ..linear.mna import RingVariable
from ..linear.polys import TermColumns

__all__ = ["UserForm", "user_form", "user_exponents", "user_term_dicts"]

#: Terms converted per array operation when the shift is searched for.
CHUNK = 65_536


@dataclass(frozen=True, eq=False)
class UserForm:
    """How generator exponents become exponents of the user's factors.

    Parameters
    ----------
    keys : tuple
        The user factors: :class:`~symbias.expressions.Symbol` or a non-polynomial sub-expression.
    texts : tuple of str
        Each factor as written in an exact string: the symbol name, or ``(expression)``.
    matrix : numpy.ndarray
        ``(generators, factors)``: +1 for ``x``, -1 for ``1/x``.
    shift : numpy.ndarray
        Power of each factor both polynomials are multiplied by (every exponent ends up >= 0).
    """

    keys: tuple[Any, ...]
    texts: tuple[str, ...]
    matrix: np.ndarray
    shift: np.ndarray

    @cached_property
    def sources(self) -> list[list[tuple[int, int]]]:
        """Per factor, its ``(generator, sign)`` pairs (one, or two for ``x`` with ``1/x``)."""
        return [[(int(g), int(self.matrix[g, k])) for g in np.nonzero(self.matrix[:, k])[0]]
                for k in range(self.matrix.shape[1])]

    @cached_property
    def generator_of_factor(self) -> np.ndarray | None:
        """When every factor is one generator to the first power with no shift (a plain product of
        symbols, the common case): the generator of each factor; else None."""
        if np.any(self.shift) or any(len(pairs) != 1 or pairs[0][1] != 1 for pairs in self.sources):
            return None
        return np.array([pairs[0][0] for pairs in self.sources], dtype=np.intp)


def _factor_matrix(variables: Sequence[RingVariable]) -> tuple[list[Any], np.ndarray]:
    """User factors and the matrix mapping generator exponents to their exponents."""
    keys: list[Any] = []
    index: dict[Any, int] = {}
    entries = []
    for v, variable in enumerate(variables):
        if variable.power:
            key, sign = Symbol(variable.symbol), variable.power
        elif isinstance(variable.meaning, Power) and variable.meaning.exponent == -1:
            key, sign = variable.meaning.base, -1
        else:
            key, sign = variable.meaning, 1
        if key not in index:
            index[key] = len(keys)
            keys.append(key)
        entries.append((v, index[key], sign))
    matrix = np.zeros((len(variables), len(keys)), dtype=np.int64)
    for v, k, sign in entries:
        matrix[v, k] = sign
    return keys, matrix


def user_form(variables: Sequence[RingVariable], polynomials: Sequence[TermColumns]) -> UserForm:
    """The :class:`UserForm` of polynomials over the generators ``variables`` (shift over all of them).

    A factor reached only through ``1/x`` needs the highest power of ``1/x``;
    only a factor with both ``x`` and ``1/x`` needs a pass over the terms.
    """
    keys, matrix = _factor_matrix(variables)
    texts = tuple(key.name if isinstance(key, Symbol) else f"({key})" for key in keys)
    form = UserForm(tuple(keys), texts, matrix, np.zeros(len(keys), dtype=np.int64))
    lowest = np.zeros(len(keys), dtype=np.int64)
    for k, sources in enumerate(form.sources):
        for columns in polynomials:
            if not len(columns):
                continue
            if len(sources) == 1:
                generator, sign = sources[0]
                if sign < 0:
                    lowest[k] = min(lowest[k], -int(columns.exponents[:, generator].max()))
                continue
            for start in range(0, len(columns), CHUNK):
                block = _factor_column(columns.exponents[start:start + CHUNK], sources)
                lowest[k] = min(lowest[k], int(block.min()))
    return UserForm(form.keys, texts, matrix, -lowest)


def _factor_column(exponents: np.ndarray, sources: list[tuple[int, int]]) -> np.ndarray:
    total = None
    for generator, sign in sources:
        column = exponents[:, generator].astype(np.int32)
        total = (column if sign > 0 else -column) if total is None else \
            (total + column if sign > 0 else total - column)
    return total


def user_exponents(form: UserForm, exponents: np.ndarray, order: Sequence[int] | None = None) -> np.ndarray:
    """Factor exponents of a block of generator exponent rows (all >= 0), factors taken in ``order``.

    A plain product of symbols is a column selection that keeps the small dtype;
    otherwise exponents are summed in ``int32``.
    """
    direct = form.generator_of_factor
    if direct is not None:
        return exponents[:, direct if order is None else direct[np.asarray(order, dtype=np.intp)]]
    if order is not None:
        return user_exponents(form, exponents)[:, order]
    out = np.empty((len(exponents), len(form.keys)), dtype=np.int32)
    for k, sources in enumerate(form.sources):
        out[:, k] = _factor_column(exponents, sources) + form.shift[k]
    return out


def user_term_dicts(form: UserForm, columns: TermColumns) -> list[tuple[dict[Any, int], Fraction]]:
    """Terms as ``({factor: exponent}, coefficient)``, for small results and display."""
    rows = user_exponents(form, columns.exponents).tolist()
    out = []
    for row, n, d in zip(rows, columns.numerators.tolist(), columns.denominators.tolist()):
        out.append(({form.keys[k]: e for k, e in enumerate(row) if e}, Fraction(int(n), int(d))))
    return out
