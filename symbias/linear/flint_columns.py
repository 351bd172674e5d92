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

Faster still, and tried first: the polynomial's own arrays.  An ``fmpq_mpoly``
is a content (a fraction) times an integer polynomial whose coefficients and
packed exponent words flint keeps in two C arrays; :func:`_direct_columns`
finds them inside the Python object, copies them into numpy and unpacks the bit
fields (about 40x faster than the packing above on the 12-node chain).  Where
they sit is learnt once per process from a probe polynomial whose every field
is known, and each read is checked (term count, field width, three terms
against ``monomial(i)`` and ``coefficient(i)``); any mismatch, a coefficient
too large for a machine word or exponents wider than one word turn the reader
off and the packing route answers instead.

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

import ctypes
import math
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
    direct = _direct_columns(ring, poly)
    if direct is not None:
        return direct
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


#: Machine words of the object header before the fields this module reads, per polynomial type:
#: learnt from a probe (see :func:`_learn_offset`); None when the layout was not recognised.
_OFFSETS: dict[type, int | None] = {}
#: An ``fmpz`` holds its value in the word itself while it stays below 2**62 (else a tagged pointer).
_SMALL_FMPZ = 2**62
_WORD = 8


def _words(address: int, count: int) -> np.ndarray:
    """``count`` machine words at ``address``, copied into a numpy array."""
    return np.frombuffer(ctypes.string_at(address, count * _WORD), dtype=np.int64)


def _header(poly: Any, offset: int) -> tuple[int, int, int, int, int, int, int]:
    """Content numerator and denominator, coefficient and exponent addresses, allocation, length, field bits."""
    words = _words(id(poly), offset + 7)[offset:]
    return tuple(int(w) for w in words)  # type: ignore[return-value]


def _learn_offset(ring: "FlintRing", kind: type) -> int | None:
    """Where the polynomial's C struct starts in its Python object, from a probe whose fields are all known.

    Only words inside the object (``__basicsize__``) are read until seven
    consecutive words match the probe exactly; only then are its arrays read.
    """
    gen = ring._ctx.gens()[0]
    probe = (gen * 5 + 7) / 6  # content 1/6, integer coefficients 5 and 7, two terms
    size = kind.__basicsize__ // _WORD
    words = _words(id(probe), size)
    for offset in range(2, size - 6):
        numerator, denominator, coeffs, exps, alloc, length, bits = (int(w) for w in words[offset:offset + 7])
        if (numerator, denominator, length) != (1, 6, 2) or alloc < 2 or not 8 <= bits <= 64 or not coeffs or not exps:
            continue
        if _words(coeffs, 2).tolist() != [5, 7]:
            continue
        if _unpacked(_words(exps, _exponent_words(ring, bits) * 2), ring, bits, 2)[:, 0].tolist() != [1, 0]:
            continue
        return offset
    return None


def _exponent_words(ring: "FlintRing", bits: int) -> int:
    """Words per exponent vector: fields of ``bits`` bits, as many as fit in a word, never straddling two."""
    return math.ceil(ring._ctx.nvars() / (64 // bits))


def _unpacked(raw: np.ndarray, ring: "FlintRing", bits: int, count: int, size: int | None = None,
              dtype=np.uint64) -> np.ndarray:
    """The ``(terms, size)`` exponents of packed words (all generators by default): the last generator of
    the context sits in the lowest field of the first word."""
    per_word = 64 // bits
    nvars = ring._ctx.nvars()
    size = nvars if size is None else size
    words = raw.view(np.uint64).reshape(count, _exponent_words(ring, bits))
    if bits == 8 and np.little_endian:  # the common case (degrees below 256): field f is byte f, reversed
        stop = nvars - 1 - size
        fields = words.view(np.uint8).reshape(count, -1)[:, nvars - 1:stop if stop >= 0 else None:-1]
        return np.ascontiguousarray(fields, dtype=dtype)
    # one generator per row of a transposed result, so every store is contiguous; one transpose at the end
    rows = np.empty((size, count), dtype=dtype)
    mask = np.uint64((1 << bits) - 1)
    field = np.empty(count, dtype=np.uint64)
    for word in range(words.shape[1]):
        column = np.ascontiguousarray(words[:, word])
        for place in range(per_word):
            generator = nvars - 1 - (word * per_word + place)
            if not 0 <= generator < size:
                continue
            np.right_shift(column, np.uint64(place * bits), out=field)
            np.bitwise_and(field, mask, out=field)
            rows[generator] = field
    return np.ascontiguousarray(rows.T)


def _direct_columns(ring: "FlintRing", poly: Any) -> TermColumns | None:
    """The columns read from flint's own arrays (module docstring), or None when a check fails."""
    kind = type(poly)
    if kind not in _OFFSETS:
        try:
            _OFFSETS[kind] = _learn_offset(ring, kind)
        except (ValueError, TypeError, ZeroDivisionError):
            _OFFSETS[kind] = None
    offset = _OFFSETS[kind]
    if offset is None:
        return None
    numerator, denominator, coeffs, exps, alloc, length, bits = _header(poly, offset)
    count = len(poly)
    if length != count or alloc < count or not 8 <= bits <= 64 or denominator <= 0:
        return None
    if max(abs(numerator), denominator) >= _SMALL_FMPZ:
        return None
    integers = _words(coeffs, count)
    largest = int(np.abs(integers).max())
    if largest >= _SMALL_FMPZ or largest * abs(numerator) >= 2**63:
        return None
    numerators = integers * numerator
    common = np.gcd(numerators, denominator)
    numerators = numerators // common
    denominators = denominator // common
    size = len(ring.names)
    dtype = _exponent_dtype(max(ring.degrees(poly), default=0))
    exponents = _unpacked(_words(exps, count * _exponent_words(ring, bits)), ring, bits, count, size, dtype)
    for index in {0, count // 2, count - 1}:
        coefficient = poly.coefficient(index)
        if (tuple(int(e) for e in exponents[index]) != tuple(poly.monomial(index))[:size]
                or (int(numerators[index]), int(denominators[index])) != (int(coefficient.p), int(coefficient.q))):
            _OFFSETS[kind] = None
            return None
    return TermColumns(exponents, numerators, denominators)
