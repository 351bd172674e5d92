"""Multivariate polynomial rings behind one small interface.

Lowest level of the symbolic side.  The cofactor solver (:mod:`symbias.linear.mna`)
and :class:`~symbias.formula.Formula` only use the operations of
:class:`Ring`; two backends implement them:

* ``"flint"``: FLINT's ``fmpq_mpoly`` through python-flint (fast, default);
* ``"sympy"``: sympy's sparse polynomial ring over QQ (pure Python fallback).

Polynomials of both backends support ``+ - *`` with each other and with
integers.  Coefficients are exact rationals.

Examples
--------
>>> ring = make_ring(("a", "b"), "sympy")
>>> a, b = ring.gens
>>> ring.terms((a + b) * a)
[((2, 0), Fraction(1, 1)), ((1, 1), Fraction(1, 1))]
"""

from __future__ import annotations

from fractions import Fraction
from typing import Any, Sequence

import numpy as np

from ..errors import UsageError
from .columns import TermColumns, _exponent_dtype, _int_array

__all__ = ["Ring", "FlintRing", "SympyRing", "TermColumns", "make_ring", "BACKENDS", "default_backend"]

BACKENDS = ("flint", "sympy")


def default_backend() -> str:
    """``"flint"`` when python-flint imports, else ``"sympy"``."""
    try:
        import flint  # noqa: F401
    except ImportError:  # pragma: no cover - flint is a declared dependency
        return "sympy"
    return "flint"


class Ring:
    """Interface of a polynomial ring over QQ with named generators."""

    backend: str = ""
    names: tuple[str, ...] = ()

    @property
    def gens(self) -> tuple[Any, ...]:
        raise NotImplementedError

    def constant(self, value: Fraction | int) -> Any:
        raise NotImplementedError

    def terms(self, poly: Any) -> list[tuple[tuple[int, ...], Fraction]]:
        """(exponent tuple, coefficient) pairs of ``poly``."""
        raise NotImplementedError

    def from_terms(self, terms: Sequence[tuple[tuple[int, ...], Fraction]]) -> Any:
        raise NotImplementedError

    def nterms(self, poly: Any) -> int:
        return len(poly)

    def is_zero(self, poly: Any) -> bool:
        raise NotImplementedError

    def derivative(self, poly: Any, index: int) -> Any:
        raise NotImplementedError

    def degrees(self, poly: Any) -> tuple[int, ...]:
        """Highest exponent of each generator in ``poly``."""
        raise NotImplementedError

    def leading_coefficient(self, poly: Any) -> Fraction:
        """Coefficient of the leading term (in the ring's term order)."""
        raise NotImplementedError

    def scale(self, poly: Any, factor: Fraction) -> Any:
        """``poly`` times a rational constant."""
        return poly * self.constant(factor)

    def coefficients(self, poly: Any) -> tuple[list[int], list[int]]:
        """Numerators and denominators of the coefficients, without reading any exponent."""
        terms = self.terms(poly)
        return [c.numerator for _, c in terms], [c.denominator for _, c in terms]

    def columns(self, poly: Any) -> TermColumns:
        """The terms of ``poly`` as arrays (:class:`TermColumns`), in term order."""
        return TermColumns.from_terms(self.terms(poly), len(self.names))

    def from_columns(self, columns: TermColumns) -> Any:
        """The polynomial with the given terms (inverse of :meth:`columns`)."""
        return self.from_terms(columns.terms())

    def pack(self, poly: Any) -> TermColumns:
        """A picklable form of ``poly`` (its :meth:`columns`); :meth:`unpack` rebuilds it."""
        return self.columns(poly)

    def unpack(self, packed: TermColumns) -> Any:
        """The polynomial of :meth:`pack`."""
        return self.from_columns(packed)

    def gcd(self, p: Any, q: Any) -> Any:
        raise NotImplementedError

    def term_content(self, poly: Any) -> Any:
        """The largest monomial (coefficient 1) dividing every term of a non-zero ``poly``."""
        lowest = None
        for exponents, _ in self.terms(poly):
            lowest = list(exponents) if lowest is None else [min(a, b) for a, b in zip(lowest, exponents)]
        return self.from_terms([(tuple(lowest or (0,) * len(self.names)), Fraction(1))])

    def exact_div(self, p: Any, q: Any) -> Any:
        raise NotImplementedError

    @property
    def zero(self) -> Any:
        return self.constant(0)

    @property
    def one(self) -> Any:
        return self.constant(1)

    def __eq__(self, other: object) -> bool:
        return isinstance(other, Ring) and (self.backend, self.names) == (other.backend, other.names)

    def __hash__(self) -> int:
        return hash((self.backend, self.names))

    def __repr__(self) -> str:
        return f"{type(self).__name__}({self.names!r})"


class FlintRing(Ring):
    """``fmpq_mpoly`` ring from python-flint."""

    backend = "flint"

    def __init__(self, names: Sequence[str]):
        import flint

        self._flint = flint
        self.names = tuple(names)
        # flint needs at least one generator; a dummy one never appears in results
        # flint wants ASCII generator names; the user's names (``gm_Qµ``) stay in ``self.names``
        internal = tuple(f"x{i}" for i in range(len(self.names)))
        self._ctx = flint.fmpq_mpoly_ctx.get(internal or ("_unused",), "lex")
        self._gens = self._ctx.gens()[: len(self.names)]

    @property
    def gens(self):
        return self._gens

    def constant(self, value):
        value = Fraction(value)
        return self._ctx.constant(self._flint.fmpq(value.numerator, value.denominator))

    def terms(self, poly):
        if poly.is_zero():
            return []
        size = len(self.names)
        return [
            # plain ints: flint's fmpz exponents break numpy powers in Formula.evaluate
            (tuple(map(int, exps[:size])), Fraction(int(c.p), int(c.q)))
            for exps, c in zip(poly.monoms(), poly.coeffs())
        ]

    def from_terms(self, terms):
        flint = self._flint
        pad = (0,) if not self.names else ()
        return self._ctx.from_dict(
            {tuple(e) + pad: flint.fmpq(Fraction(c).numerator, Fraction(c).denominator) for e, c in terms}
        )

    def is_zero(self, poly):
        return poly.is_zero()

    def degrees(self, poly):
        if poly.is_zero():
            return (0,) * len(self.names)
        return tuple(int(d) for d in poly.degrees()[: len(self.names)])

    def leading_coefficient(self, poly):
        c = poly.leading_coefficient()
        return Fraction(int(c.p), int(c.q))

    def derivative(self, poly, index):
        return poly.derivative(index)

    def gcd(self, p, q):
        return p.gcd(q)

    def exact_div(self, p, q):
        return p / q

    def term_content(self, poly):
        monomial = poly.term_content()
        return monomial / monomial.leading_coefficient()

    def coefficients(self, poly):
        coefficients = poly.coeffs()
        return [int(c.p) for c in coefficients], [int(c.q) for c in coefficients]

    def columns(self, poly):
        from .flint_columns import flint_columns

        return flint_columns(self, poly)

    def __getstate__(self):
        return {"names": self.names}

    def __setstate__(self, state):
        self.__init__(state["names"])


class SympyRing(Ring):
    """sympy's sparse ``PolyRing`` over QQ."""

    backend = "sympy"

    def __init__(self, names: Sequence[str]):
        from sympy import QQ
        from sympy.polys.rings import PolyRing

        self.names = tuple(names)
        self._ring = PolyRing(self.names or ("_unused",), QQ)
        self._QQ = QQ
        self._gens = self._ring.gens[: len(self.names)]

    @property
    def gens(self):
        return self._gens

    def constant(self, value):
        value = Fraction(value)
        return self._ring(self._QQ(value.numerator, value.denominator))

    def terms(self, poly):
        size = len(self.names)
        return [(tuple(e[:size]), Fraction(int(c.numerator), int(c.denominator))) for e, c in poly.terms()]

    def from_terms(self, terms):
        pad = (0,) if not self.names else ()
        return self._ring.from_dict(
            {tuple(e) + pad: self._QQ(Fraction(c).numerator, Fraction(c).denominator) for e, c in terms}
        )

    def is_zero(self, poly):
        return not poly

    def degrees(self, poly):
        if not poly:
            return (0,) * len(self.names)
        return tuple(max(0, int(d)) for d in poly.degrees()[: len(self.names)])

    def leading_coefficient(self, poly):
        c = poly.LC
        return Fraction(int(c.numerator), int(c.denominator))

    def derivative(self, poly, index):
        return poly.diff(self._ring.gens[index])

    def gcd(self, p, q):
        return p.gcd(q)

    def exact_div(self, p, q):
        return p.exquo(q)

    def coefficients(self, poly):
        values = list(poly.values())
        return [int(c.numerator) for c in values], [int(c.denominator) for c in values]

    def __getstate__(self):
        return {"names": self.names}

    def __setstate__(self, state):
        self.__init__(state["names"])


def make_ring(names: Sequence[str], backend: str | None = None) -> Ring:
    """A polynomial ring over QQ in ``names`` with the chosen backend.

    Examples
    --------
    >>> make_ring(("x",), "flint").backend
    'flint'
    """
    backend = backend or default_backend()
    if backend == "flint":
        return FlintRing(names)
    if backend == "sympy":
        return SympyRing(names)
    raise UsageError(f"unknown polynomial backend {backend!r} (choose from {', '.join(BACKENDS)})")
