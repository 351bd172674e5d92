"""The two fast readers of python-flint terms against python-flint's public per-term API.

``ring.terms`` reads every term through ``monoms()`` and ``coeffs()`` (python-flint's
documented interface); the direct reader of flint's arrays and the Euler-operator packing must
give the same exponents and coefficients, term for term, at every exponent field width flint
picks (8 to 64 bits per field), and the direct reader must step aside where it cannot read
exactly (a coefficient, a common denominator or their product beyond a machine word).
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest

from symbias.linear import flint_columns as reader
from symbias.linear.polys import make_ring


def _polynomial(ring, rng, terms: int, degree: int, coefficient: int, denominator: int):
    size = len(ring.names)
    out = {}
    for _ in range(terms):
        exponents = tuple(int(e) for e in rng.integers(0, degree + 1, size) * (rng.random(size) < 0.4))
        out[exponents] = Fraction(int(rng.integers(-coefficient, coefficient + 1)) or 1,
                                  int(rng.integers(1, denominator + 1)))
    return ring.from_terms(list(out.items()))


@pytest.mark.parametrize("generators", [1, 7, 9, 40])
@pytest.mark.parametrize("degree", [1, 200, 300, 70_000, 2**40])
def test_direct_reader_matches_the_public_terms(generators, degree):
    rng = np.random.default_rng(generators * 7 + degree % 1000)
    ring = make_ring(tuple(f"g{i}" for i in range(generators)), "flint")
    poly = _polynomial(ring, rng, 200, degree, 10**6, 12)
    direct = reader._direct_columns(ring, poly)
    assert direct is not None  # small coefficients and exponents within a word: read directly
    assert direct.terms() == ring.terms(poly)
    assert direct.exponents.dtype == reader._exponent_dtype(max(ring.degrees(poly)))


def test_packing_route_matches_with_the_direct_reader_off(monkeypatch):
    rng = np.random.default_rng(5)
    ring = make_ring(tuple(f"g{i}" for i in range(40)), "flint")
    poly = _polynomial(ring, rng, 300, 3, 1000, 5)
    expected = ring.terms(poly)
    monkeypatch.setattr(reader, "_direct_columns", lambda ring, poly: None)
    assert ring.columns(poly).terms() == expected


@pytest.mark.parametrize(("coefficient", "constant"), [(2**70, Fraction(1, 7)), (5, Fraction(1, 2**70)),
                                                       (2**62, Fraction(3))])
def test_direct_reader_steps_aside_beyond_a_word(coefficient, constant):
    ring = make_ring(("a", "b"), "flint")
    a, b = ring.gens
    poly = a**3 * b * coefficient + 3 * b + ring.constant(constant)
    assert reader._direct_columns(ring, poly) is None
    assert ring.columns(poly).terms() == ring.terms(poly)
