"""The size of an exact solve, known before the expansion starts: unknowns, symbols, and a bound on its terms.

Part of the linear side, called by :func:`symbias.linear.mna.solve` before it
builds the polynomial system (:func:`check_size`) and before it expands it
(:func:`check_terms`).  A fully symbolic network
grows fast (a three-transistor cascade with every parasitic gives about
700,000 terms, four of them run out of memory inside the polynomial
library, where no Python error can be raised), so the growth is estimated
first and refused with a :class:`~symbias.errors.LimitError` that says what
to do instead:

* more than :data:`~symbias.limits.MAX_UNKNOWNS` unknowns (the expansion
  recurses once per unknown; a large network is a job for the numeric
  route: ``symbias bias`` and ``symbias sweep``);
* more than :data:`~symbias.limits.MAX_SYMBOLS` distinct symbols;
* an upper bound on the determinant's term count above
  :data:`~symbias.limits.MAX_TERM_ESTIMATE`, counted by running the same
  memoised minor expansion (:class:`~symbias.linear.mna.CofactorSolver`,
  same pivots, same minors) over term counts instead of polynomials: a
  product's count is at most the product of the counts, a sum's at most their
  sum, and neither more than the monomials of its degree in its generators.
  The bound ignores most merging of like terms, so it runs from 1x to a few
  hundred times the true count on the shipped circuits; the limit is set
  where the true result would already be too large to use;
* more than :data:`~symbias.limits.MAX_MINOR_STATES` minors visited by that
  count (a dense network, whose expansion is exponential);
* coefficients that may need more than :data:`~symbias.limits.MAX_RESULT_BITS`
  bits (twenty resistors of 1e300 ohm), bounded in the same count.

Examples
--------
>>> from symbias.linear.polys import make_ring
>>> from symbias.linear.mna import CofactorSolver
>>> ring = make_ring(("a", "b"), "sympy")
>>> a, b = ring.gens
>>> term_bound(CofactorSolver, ring, 2, {(0, 0): a + b, (0, 1): b, (1, 0): b, (1, 1): a})
3
"""

from __future__ import annotations

import math
from fractions import Fraction
from typing import Any, Mapping

from ..errors import LimitError
from ..limits import MAX_MINOR_STATES, MAX_RESULT_BITS, MAX_SYMBOLS, MAX_TERM_ESTIMATE, MAX_UNKNOWNS

__all__ = ["term_bound", "check_size", "check_terms"]

_INSTEAD = ("use fewer symbols (leave out --symbolic, a lower --level, --match), give numbers to free symbols, "
            "or analyse the circuit numerically (symbias bias, symbias sweep)")


class _Count:
    """Upper bounds on a polynomial: its number of terms and the size of its coefficients.

    A product's count is at most the product of the counts, a sum's at most
    their sum; neither can exceed the number of monomials of its degree in
    its generators (one for a number: a numeric network's result is one term).
    ``bits`` bounds the bits of any coefficient, numerator and denominator
    together: they add in a product and grow by one in a sum.
    """

    __slots__ = ("n", "generators", "degree", "bits")

    def __init__(self, n: int, generators: int = 0, degree: int = 0, bits: int = 1):
        self.generators, self.degree, self.bits = generators, degree, bits
        self.n = min(n, math.comb(self.generators.bit_count() + degree, degree))

    def __mul__(self, other: "_Count") -> "_Count":
        return _Count(self.n * other.n, self.generators | other.generators, self.degree + other.degree,
                      self.bits + other.bits)

    def __add__(self, other: "_Count") -> "_Count":
        return _Count(self.n + other.n, self.generators | other.generators, max(self.degree, other.degree),
                      max(self.bits, other.bits) + 1)

    def __neg__(self) -> "_Count":
        return self


def _count(ring: Any, value: Any) -> _Count:
    terms = ring.terms(value)
    generators = 0
    for exponents, _ in terms:
        for index, exponent in enumerate(exponents):
            if exponent:
                generators |= 1 << index
    bits = max((Fraction(c).numerator.bit_length() + Fraction(c).denominator.bit_length() for _, c in terms),
               default=1)
    return _Count(len(terms), generators, max((sum(e) for e, _ in terms), default=0), bits)


class _CountingRing:
    """The ring interface :class:`CofactorSolver` uses, over term counts; it counts the minors too."""

    def __init__(self, path: str | None):
        self.one = _Count(1)
        self.minors = 0
        self.path = path

    def is_zero(self, value: _Count) -> bool:
        self.minors += 1  # the solver asks once per entry and once per minor it computes
        if self.minors > MAX_MINOR_STATES:
            raise LimitError(f"the exact solve would expand more than MAX_MINOR_STATES = {MAX_MINOR_STATES} minors "
                             f"(a densely coupled network); {_INSTEAD}", path=self.path)
        return value.n == 0


def term_bound(solver_class: type, ring: Any, size: int, entries: Mapping[tuple[int, int], Any],
               path: str | None = None) -> int:
    """An upper bound on the term count of the determinant, from the same expansion over counts.

    Raises
    ------
    LimitError
        When the expansion would visit more than :data:`~symbias.limits.MAX_MINOR_STATES` minors.
    """
    return _counted(solver_class, ring, size, entries, path).n


def _counted(solver_class: type, ring: Any, size: int, entries: Mapping[tuple[int, int], Any],
             path: str | None) -> _Count:
    counting = solver_class(_CountingRing(path), size, {key: _count(ring, value) for key, value in entries.items()})
    det = counting.det()
    return _Count(0) if det is None else det


def check_size(network: Any, unknowns: int) -> None:
    """Refuse a network with too many unknowns or symbols for an exact solve (before its system is built).

    Raises
    ------
    LimitError
        Naming the limit, the value met and what to do instead.
    """
    if unknowns > MAX_UNKNOWNS:
        raise LimitError(f"the network has {unknowns} unknowns, more than MAX_UNKNOWNS = {MAX_UNKNOWNS} for an exact "
                         "solve; analyse it numerically (symbias bias, symbias sweep) or derive a smaller part",
                         path=network.path)
    symbols = len(network.symbols)
    if symbols > MAX_SYMBOLS:
        raise LimitError(f"the network has {symbols} symbols, more than MAX_SYMBOLS = {MAX_SYMBOLS}; {_INSTEAD}",
                         path=network.path)


def check_terms(solver_class: type, ring: Any, entries: Mapping[tuple[int, int], Any], size: int,
                path: str | None = None) -> None:
    """Refuse a system whose determinant may have more than :data:`~symbias.limits.MAX_TERM_ESTIMATE` terms.

    Raises
    ------
    LimitError
        Naming the limit, the bound met and what to do instead (also for too many minors).
    """
    det = _counted(solver_class, ring, size, entries, path)
    if det.n > MAX_TERM_ESTIMATE:
        raise LimitError(f"the exact result may have up to {det.n:.3g} terms, more than MAX_TERM_ESTIMATE = "
                         f"{MAX_TERM_ESTIMATE:.3g}; {_INSTEAD}", path=path)
    if det.bits > MAX_RESULT_BITS:
        raise LimitError(f"the exact result may hold numbers of up to {det.bits} bits, more than MAX_RESULT_BITS = "
                         f"{MAX_RESULT_BITS}; give values in units near 1 (k, u, n...) or as symbols", path=path)
