"""A polynomial's terms as numpy arrays: exponents, coefficient numerators and denominators.

Lowest level of the linear side, shared by the rings (:mod:`symbias.linear.polys`)
and the fast reader of python-flint terms (:mod:`symbias.linear.flint_columns`).
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import numpy as np

__all__ = ["TermColumns"]


@dataclass(frozen=True, eq=False)
class TermColumns:
    """The terms of one polynomial as arrays, in the ring's term order.

    Parameters
    ----------
    exponents : numpy.ndarray
        ``(terms, generators)`` exponents, the smallest unsigned dtype that holds them.
    numerators, denominators : numpy.ndarray
        Coefficient ``numerators[i] / denominators[i]`` in lowest terms, ``int64``
        (or ``object`` holding Python ints when a coefficient does not fit).

    Examples
    --------
    >>> from symbias.linear.polys import make_ring
    >>> ring = make_ring(("a", "b"), "flint")
    >>> a, b = ring.gens
    >>> c = ring.columns(3 * a * b - b)
    >>> c.exponents.tolist(), c.numerators.tolist(), c.denominators.tolist()
    ([[1, 1], [0, 1]], [3, -1], [1, 1])
    """

    exponents: np.ndarray
    numerators: np.ndarray
    denominators: np.ndarray

    def __len__(self) -> int:
        return len(self.numerators)

    def terms(self) -> list[tuple[tuple[int, ...], Fraction]]:
        """The same terms as ``(exponent tuple, coefficient)`` pairs."""
        return [(tuple(e), Fraction(int(n), int(d)))
                for e, n, d in zip(self.exponents.tolist(), self.numerators.tolist(), self.denominators.tolist())]

    @classmethod
    def from_terms(cls, terms: Sequence[tuple[tuple[int, ...], Fraction]], size: int) -> "TermColumns":
        """Columns of ``(exponent tuple, coefficient)`` pairs over ``size`` generators."""
        raw = np.array([e for e, _ in terms], dtype=np.int64).reshape(len(terms), size)
        numerators = _int_array([Fraction(c).numerator for _, c in terms])
        denominators = _int_array([Fraction(c).denominator for _, c in terms])
        return cls(raw.astype(_exponent_dtype(int(raw.max(initial=0)))), numerators, denominators)


def _exponent_dtype(largest: int):
    for dtype in (np.uint8, np.uint16, np.uint32):
        if largest <= np.iinfo(dtype).max:
            return dtype
    return np.uint64


def _int_array(values: list[int]) -> np.ndarray:
    """int64 when every value fits, else an object array of Python ints."""
    limit = 2**63 - 1
    if all(-limit <= v <= limit for v in values):
        return np.array(values, dtype=np.int64).reshape(len(values))
    out = np.empty(len(values), dtype=object)
    out[:] = values
    return out


