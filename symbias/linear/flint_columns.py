"""The terms of a python-flint polynomial as numpy arrays, without one Python object per exponent.

Part of the polynomial layer (:mod:`symbias.linear.polys`): it backs
:meth:`~symbias.linear.polys.FlintRing.columns` and so the output and pickling
of large results.  python-flint hands out exponents only as tuples of ``fmpz``
objects (``monoms()``: 3.4 s and 1.4 GB for the 887,040-term numerator of the
12-node chain), so the exponents are read through the coefficients instead.

The Euler operator ``E_w = sum_j w_j x_j d/dx_j`` multiplies each term
``c x^e`` by ``w . e``; with ``w_j = 2**shift_j`` (a bit field per generator,
wide enough for its degree) the polynomial ``p + E_w p`` has, term for term in
the same order, the coefficient ``c (1 + K)`` where ``K`` packs every exponent
of the term.  Its coefficients come out of flint as floats at C speed, so
``K = c (1 + K) / c - 1`` is exact as long as it stays below 2**46 (rounding
of the two floats is far below one half there).  Generators are packed in
groups that respect that bound; each group costs one derivative and product
per generator and a balanced sum.

Coefficients are read exactly: as floats when they are integers below 2**53
(checked on the denominators), else as numerator and denominator pairs.
Anything outside these bounds falls back to ``monoms()``.

Examples
--------
>>> from symbias.linear.polys import make_ring
>>> ring = make_ring(("a", "b", "c"), "flint")
>>> a, b, c = ring.gens
>>> columns = flint_columns(ring, a**3 * b - 2 * c + 1)
>>> columns.exponents.tolist(), columns.numerators.tolist()
([[3, 1, 0], [0, 0, 1], [0, 0, 0]], [1, -2, 1])
"""

from __future__ import annotations

from typing import Any

import numpy as np

from .columns import TermColumns, _exponent_dtype, _int_array

__all__ = ["flint_columns"]

#: Bits of the packed exponent key per group: keeps ``1 + K`` exact through two float roundings.
PACK_BITS = 46
#: Coefficient magnitudes the float route reads exactly (and whose products with 2**PACK_BITS stay finite).
_SMALLEST, _LARGEST = 1e-280, 1e280


def flint_columns(ring: "FlintRing", poly: Any) -> TermColumns:
    """Exponent, numerator and denominator arrays of a flint polynomial (see the module docstring)."""
    size = len(ring.names)
    count = len(poly)
    if count == 0:
        empty = np.zeros(0, dtype=np.int64)
        return TermColumns(np.zeros((0, size), dtype=np.uint8), empty, empty.copy())
    coefficients = poly.coeffs()
    floats = np.fromiter(map(float, coefficients), dtype=np.float64, count=count)
    exponents = None
    magnitudes = np.abs(floats)
    if np.all((magnitudes > _SMALLEST) & (magnitudes < _LARGEST)):
        exponents = _packed_exponents(ring, poly, floats)
    if exponents is None:
        return TermColumns.from_terms(ring.terms(poly), size)
    numerators, denominators = _exact_coefficients(coefficients, floats)
    return TermColumns(exponents, numerators, denominators)


def _exact_coefficients(coefficients: list, floats: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Numerators and denominators; integers below 2**53 come straight from their floats."""
    integral = bool(np.all(np.abs(floats) < 2.0**53)) and bool(np.all(floats == np.rint(floats)))
    if integral and all(c.q == 1 for c in coefficients):
        return floats.astype(np.int64), np.ones(len(floats), dtype=np.int64)
    return _int_array([int(c.p) for c in coefficients]), _int_array([int(c.q) for c in coefficients])


def _pack_groups(degrees: tuple[int, ...]) -> list[list[tuple[int, int, int]]]:
    """Generators in groups of ``(generator, shift, bits)`` whose bit fields fit :data:`PACK_BITS`.

    The first generator of a group takes the highest field, so the packed key
    decreases along the ring's lex order (a check on the decoding).
    """
    groups: list[list[tuple[int, int]]] = [[]]
    used = 0
    for generator, degree in enumerate(degrees):
        bits = int(degree).bit_length()
        if not bits:
            continue
        if used + bits > PACK_BITS and groups[-1]:
            groups.append([])
            used = 0
        groups[-1].append((generator, bits))
        used += bits
    out = []
    for group in groups:
        total = sum(bits for _, bits in group)
        fields, shift = [], total
        for generator, bits in group:
            shift -= bits
            fields.append((generator, shift, bits))
        if fields:
            out.append(fields)
    return out


def _packed_exponents(ring: FlintRing, poly: Any, floats: np.ndarray) -> np.ndarray | None:
    """The exponent matrix by the Euler-operator packing, or None when a check fails."""
    degrees = ring.degrees(poly)
    exponents = np.zeros((len(floats), len(ring.names)), dtype=_exponent_dtype(max(degrees, default=0)))
    gens = ring.gens
    for number, group in enumerate(_pack_groups(degrees)):
        # one product per generator: the weight rides on the one-term factor
        weighted = _balanced_sum((gens[g] * (1 << shift)) * poly.derivative(g) for g, shift, _ in group)
        packed = poly + weighted
        if len(packed) != len(floats):  # 1 + K > 0, so no term may cancel
            return None
        ratio = np.fromiter(map(float, packed.coeffs()), dtype=np.float64, count=len(floats)) / floats
        nearest = np.rint(ratio)
        if not np.all(np.abs(ratio - nearest) < 0.25) or not np.all(nearest >= 1):
            return None
        keys = nearest.astype(np.int64) - 1
        if number == 0 and len(keys) > 1 and not np.all(keys[:-1] >= keys[1:]):
            return None  # the leading generators' key must follow the lex order
        for generator, shift, bits in group:
            exponents[:, generator] = (keys >> shift) & ((1 << bits) - 1)
    return exponents


def _balanced_sum(parts) -> Any:
    """Sum of polynomials by a binary counter: each term is merged about log2(len) times.

    The parts are temporaries, so they are added in place.
    """
    stack: list[tuple[int, Any]] = []
    for part in parts:
        level = 0
        while stack and stack[-1][0] == level:
            other = stack.pop()[1]
            other.iadd(part)
            part, level = other, level + 1
        stack.append((level, part))
    total = stack.pop()[1]
    while stack:
        other = stack.pop()[1]
        other.iadd(total)
        total = other
    return total
