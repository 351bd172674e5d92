"""Text of a result written straight from its terms: exact strings, LaTeX, sympy expressions.

Part of :mod:`symbias.formula`, on top of :mod:`~symbias.formula.userform`.
The exact string (the machine interface's ``exact`` field, read back by
``sympy.parse_expr``) is produced as an iterator of chunks
(:func:`polynomial_chunks`), block by block of terms, so a million-term
result is never held as one Python string or as a list of per-term strings,
and no sympy object is built.

Each block is written by array operations: a term is a header (separator and
coefficient) followed by its factors, each a small piece of text from a table;
the pieces of a block are gathered as fixed-width records (padded with NUL
bytes) and the padding is deleted from the bytes.  Coefficients that do not fit in 64
bits take a per-term path.

The text is the one earlier versions wrote term by term: terms joined by
``" + "``, a coefficient first (omitted when it is 1, bracketed when
negative or fractional), then the factors sorted by their text, ``x**e`` for
powers, ``*`` between.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
>>> columns = [f.ring.columns(f.numerator), f.ring.columns(f.denominator)]
>>> form = user_form(f.variables, columns)
>>> ["".join(polynomial_chunks(form, c)) for c in columns]
['RA*RB', 'RB + RA']
"""

from __future__ import annotations

from fractions import Fraction
from typing import Any, Iterator, Mapping, Sequence

import numpy as np

from ..expressions import Symbol
from ..linear.polys import TermColumns
from .userform import UserForm, user_exponents, user_form, user_term_dicts  # noqa: F401  (user_form: doctest)

__all__ = ["polynomial_chunks", "terms_to_text", "terms_to_latex", "terms_to_expr", "CHUNK"]

#: Terms written per block.
CHUNK = 32_768


def polynomial_chunks(form: UserForm, columns: TermColumns, chunk: int = CHUNK) -> Iterator[str]:
    """One polynomial (``"0"`` when it has no term) as text chunks, in term order."""
    if not len(columns):
        yield "0"
        return
    writer = _PieceTable(form)
    for start in range(0, len(columns), chunk):
        stop = min(start + chunk, len(columns))
        numerators, denominators = columns.numerators[start:stop], columns.denominators[start:stop]
        exponents = user_exponents(form, columns.exponents[start:stop], writer.order)
        if numerators.dtype == object or denominators.dtype == object:
            block = TermColumns(columns.exponents[start:stop], numerators, denominators)
            yield (" + " if start else "") + terms_to_text(user_term_dicts(form, block))
        else:
            yield writer.text(exponents, numerators, denominators, first=start == 0)


class _PieceTable:
    """The text pieces of one polynomial's terms, as rows of a NUL-padded byte table."""

    def __init__(self, form: UserForm):
        self.order = sorted(range(len(form.texts)), key=lambda k: form.texts[k])
        self.names = [form.texts[k].encode("utf-8") for k in self.order]
        self.pieces: list[bytes] = []
        self.index: dict[Any, int] = {}
        self._table: np.ndarray | None = None

    def _piece(self, key: Any, text: bytes) -> int:
        if key not in self.index:
            self.index[key] = len(self.pieces)
            self.pieces.append(text)
            self._table = None
        return self.index[key]

    def _factor_ids(self, exponents: np.ndarray) -> np.ndarray:
        """Piece id of factor ``(column, exponent)`` not first in its term; the first one is id + 1."""
        tops = exponents.max(axis=0, initial=0).tolist()
        ids = np.zeros((len(self.names), max(tops, default=0) + 1), dtype=np.int64)
        for column, name in enumerate(self.names):
            for e in range(1, tops[column] + 1):
                text = name if e == 1 else name + f"**{e}".encode()
                if ("f", column, e) not in self.index:
                    self._piece(("f", column, e), b"*" + text)
                    self._piece(("f1", column, e), text)  # always the next id
                ids[column, e] = self.index[("f", column, e)]
        return ids

    def _header_ids(self, numerators, denominators, has_factors, first: bool) -> np.ndarray:
        """Piece id of each term's separator and coefficient."""
        if np.all(denominators == 1):
            values, inverse = np.unique(numerators, return_inverse=True)
            pairs = [(int(v), 1) for v in values.tolist()]
        else:
            values, inverse = np.unique(np.stack([numerators, denominators], axis=1), axis=0, return_inverse=True)
            pairs = [(int(n), int(d)) for n, d in values.tolist()]
        inverse = inverse.reshape(-1)
        table = np.zeros((len(pairs), 2), dtype=np.int64)
        for u, (n, d) in enumerate(pairs):
            coefficient = Fraction(n, d)
            text = f"({coefficient})" if d != 1 or n < 0 else str(coefficient)
            table[u, 1] = self._piece(("h", n, d, 1), (" + " + text + "*").encode() if coefficient != 1 else b" + ")
            table[u, 0] = self._piece(("h", n, d, 0), (" + " + text).encode())
        ids = table[inverse, has_factors.astype(np.intp)]
        if first:  # the first term of the polynomial has no separator
            n, d = pairs[inverse[0]]
            coefficient = Fraction(n, d)
            text = f"({coefficient})" if d != 1 or n < 0 else str(coefficient)
            head = (text + "*" if coefficient != 1 else "") if has_factors[0] else text
            ids[0] = self._piece(("first", n, d, bool(has_factors[0])), head.encode())
        return ids

    def _byte_table(self) -> np.ndarray:
        """One fixed-width record per piece (NUL-padded to a multiple of 8 bytes), gathered as a whole."""
        if self._table is None:
            width = -(-max(1, max(len(p) for p in self.pieces)) // 8) * 8
            table = np.zeros((len(self.pieces), width), dtype=np.uint8)
            for i, piece in enumerate(self.pieces):
                table[i, : len(piece)] = np.frombuffer(piece, dtype=np.uint8)
            self._table = table.view(f"V{width}").reshape(len(self.pieces))
        return self._table

    def text(self, exponents: np.ndarray, numerators, denominators, first: bool) -> str:
        """Text of one block of terms (factor columns already in text order)."""
        present = exponents > 0
        counts = present.sum(axis=1)
        headers = self._header_ids(numerators, denominators, counts > 0, first)
        rows, cols = np.nonzero(present)  # row-major: each term's factors in text order
        leading = np.ones(len(rows), dtype=bool)
        leading[1:] = rows[1:] != rows[:-1]
        table = self._factor_ids(exponents)
        if table.shape[1] == 2:  # no power above 1: the column alone names the piece
            factor_ids = table[:, 1][cols] + leading
        else:
            factor_ids = table[cols, exponents[rows, cols]] + leading
        # each term: its header, then its factors
        header_at = np.arange(len(counts)) + np.concatenate([[0], np.cumsum(counts)[:-1]])
        ids = np.empty(len(counts) + len(rows), dtype=np.int64)
        is_factor = np.ones(len(ids), dtype=bool)
        is_factor[header_at] = False
        ids[header_at] = headers
        ids[is_factor] = factor_ids
        return self._byte_table()[ids].tobytes().translate(None, b"\0").decode("utf-8")


def terms_to_text(terms: Sequence[tuple[Mapping[Any, int], Fraction]]) -> str:
    """Term-by-term text of ``({factor: exponent}, coefficient)`` terms (same form as :func:`polynomial_chunks`)."""
    if not terms:
        return "0"
    names: dict[Any, str] = {}

    def name(key: Any) -> str:
        if key not in names:
            names[key] = key.name if isinstance(key, Symbol) else f"({key})"
        return names[key]

    out = []
    for powers, coeff in terms:
        factors = []
        if coeff != 1 or not powers:
            factors.append(f"({coeff})" if coeff.denominator != 1 or coeff < 0 else str(coeff))
        for text, e in sorted((name(key), e) for key, e in powers.items()):
            factors.append(text if e == 1 else f"{text}**{e}")
        out.append("*".join(factors))
    return " + ".join(out)


def terms_to_latex(terms: Sequence[tuple[Mapping[Any, int], Fraction]], names: Mapping[str, str]) -> str:
    """LaTeX of terms, written term by term (for results too big for sympy's printer)."""
    if not terms:
        return "0"
    cache: dict[Any, str] = {}

    def name(key: Any) -> str:
        if key not in cache:
            import sympy

            if isinstance(key, Symbol):
                cache[key] = names.get(key.name) or sympy.latex(key.to_sympy())
            else:
                cache[key] = rf"\left({sympy.latex(key.to_sympy())}\right)"
        return cache[key]

    parts = []
    for powers, coeff in terms:
        factors = [name(key) if e == 1 else f"{name(key)}^{{{e}}}" for key, e in powers.items()]
        magnitude = abs(coeff)
        text = " ".join(sorted(factors))
        if magnitude != 1 or not factors:
            number = str(magnitude.numerator) if magnitude.denominator == 1 else \
                rf"\frac{{{magnitude.numerator}}}{{{magnitude.denominator}}}"
            text = f"{number} {text}".strip()
        parts.append(("- " if coeff < 0 else "+ ") + text)
    joined = " ".join(parts)
    return joined[2:] if joined.startswith("+ ") else joined


def terms_to_expr(terms: Sequence[tuple[Mapping[Any, int], Fraction]]):
    """A sympy expression of terms (imports sympy; for results within the display budget)."""
    import sympy

    parts = []
    converted: dict[Any, Any] = {}
    for powers, coeff in terms:
        factors = [sympy.Rational(coeff.numerator, coeff.denominator)]
        for key, e in powers.items():
            if key not in converted:
                converted[key] = key.to_sympy()
            factors.append(converted[key] ** e)
        parts.append(sympy.Mul(*factors))
    return sympy.Add(*parts)
