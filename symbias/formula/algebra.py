"""Normal form of a ratio of ring polynomials: common factors cancelled, denominator scaled.

Lowest level of :mod:`symbias.formula`: plain functions of a ring and two
polynomials, used when a :class:`~symbias.formula.Formula` is built from a
solver result (:meth:`~symbias.formula.Formula.from_solution`) or from new
polynomials (derivatives, sensitivities, approximations).

Cancellation (a polynomial gcd) is done only for results of fewer than
:data:`CANCEL_TERMS` terms and is cut short where the answer is known without
it: a zero numerator, a constant or a single-term numerator or denominator
(only a monomial can then be common, found from the exponents), and a
common monomial is divided out before the gcd is asked for.  Scaling reads
the coefficients only, never the exponents (reading exponents out of
python-flint costs far more than the gcd itself).

Examples
--------
>>> from symbias.linear.polys import make_ring
>>> ring = make_ring(("a", "b"), "flint")
>>> a, b = ring.gens
>>> num, den = cancel_common_factor(ring, a * a * b + a * b, 2 * a * b + 2 * b)
>>> num == a, den == ring.constant(2)
(True, True)
>>> num, den = normalise(ring, 3 * a, -6 * a - 12 * b)
>>> ring.terms(num), ring.terms(den)
([((1, 0), Fraction(-1, 2))], [((1, 0), Fraction(1, 1)), ((0, 1), Fraction(2, 1))])
"""

from __future__ import annotations

from fractions import Fraction
from math import gcd, lcm
from typing import Any

from ..errors import AnalysisError
from ..linear.polys import Ring

__all__ = ["CANCEL_TERMS", "NORMALISE_TERMS", "cancel_common_factor", "normalise"]

#: Largest result for which common factors are cancelled (a gcd per result).
CANCEL_TERMS = 20_000
#: Largest result whose coefficients are made integer and coprime (else scaled to a unit leading term).
NORMALISE_TERMS = 20_000


def cancel_common_factor(ring: Ring, num: Any, den: Any) -> tuple[Any, Any]:
    """``num/den`` with their common polynomial factor divided out.

    Only for results of fewer than :data:`CANCEL_TERMS` terms (a gcd per
    result); larger ones, and a zero numerator, are returned as they are.
    """
    num_terms, den_terms = ring.nterms(num), ring.nterms(den)
    if num_terms + den_terms >= CANCEL_TERMS or ring.is_zero(num):
        return num, den
    if num_terms == 1 or den_terms == 1:
        # a common factor of a monomial is a monomial: the lowest shared powers
        common = _common_monomial(ring, num, den)
        if common is None:
            return num, den
        return ring.exact_div(num, common), ring.exact_div(den, common)
    common = _common_factor(ring, num, den)
    if common is None:
        return num, den
    return ring.exact_div(num, common), ring.exact_div(den, common)


def _common_monomial(ring: Ring, num: Any, den: Any):
    """The largest monomial dividing both (None when it is 1), from each side's monomial content."""
    common = ring.gcd(ring.term_content(num), ring.term_content(den))
    return None if _is_constant(ring, common) else common


def _common_factor(ring: Ring, num: Any, den: Any):
    """The non-constant gcd of two polynomials, or None when they are coprime.

    The gcd is computed with python-flint even for the sympy backend (its own
    gcd took seconds where flint takes milliseconds); the factor is then
    brought back into the caller's ring.
    """
    if ring.backend != "flint":
        try:
            from ..linear.polys import make_ring

            fast = make_ring(ring.names, "flint")
        except ImportError:  # pragma: no cover - flint is a dependency
            fast = ring
        if fast is not ring:
            common = fast.gcd(fast.from_terms(ring.terms(num)), fast.from_terms(ring.terms(den)))
            if _is_constant(fast, common):
                return None
            return ring.from_terms(fast.terms(common))
    common = ring.gcd(num, den)
    return None if _is_constant(ring, common) else common


def _is_constant(ring: Ring, poly: Any) -> bool:
    return ring.nterms(poly) <= 1 and not any(ring.degrees(poly))


def normalise(ring: Ring, num: Any, den: Any) -> tuple[Any, Any]:
    """Scale ``num/den`` so the denominator has coprime integer coefficients, mostly positive.

    Beyond :data:`NORMALISE_TERMS` terms the denominator is only scaled to a
    unit leading coefficient.

    Raises
    ------
    AnalysisError
        If the denominator is zero.
    """
    if ring.is_zero(den):
        raise AnalysisError("the result has a zero denominator")
    if ring.nterms(den) + ring.nterms(num) > NORMALISE_TERMS:
        lead = ring.leading_coefficient(den)
        return (num, den) if lead == 1 else (ring.scale(num, 1 / lead), ring.scale(den, 1 / lead))
    numerators, denominators = ring.coefficients(den)
    content = Fraction(abs(gcd(*numerators)), lcm(*denominators))
    positive = sum(1 if n > 0 else -1 for n in numerators) >= 0
    scale = 1 / content if positive else -1 / content
    if scale != 1:
        factor = ring.constant(scale)
        num, den = num * factor, den * factor
    return num, den
