"""Expansion of an expression tree into monomials, for the polynomial engine.

Part of :mod:`symbias.expressions`: a free function of the tree (it reads
each node's ``op``).  A monomial is a sorted tuple of (base, exponent) pairs;
a base is a symbol or a sub-expression that is not a polynomial in symbols
(``1/(R1 + R2)`` gives the base ``R1 + R2`` with exponent -1; ``sqrt(2)``
and ``exp(x)`` are bases of their own).

Examples
--------
>>> from symbias.expressions import parse_expression
>>> {tuple((str(b), e) for b, e in m): c for m, c in expand(parse_expression("(a + 1)**2")).items()}
{(('a', 2),): Fraction(1, 1), (('a', 1),): Fraction(2, 1), (): Fraction(1, 1)}
"""

from __future__ import annotations

from fractions import Fraction

from ..errors import LimitError
from .limits import MAX_TERMS

__all__ = ["expand"]


def _check_terms(count: int) -> None:
    if count > MAX_TERMS:
        raise LimitError(f"a value expands into more than {MAX_TERMS} terms (limit MAX_TERMS); "
                         "give it numbers, or write it as a product of smaller parts")


def _multiply_terms(a: dict, b: dict) -> dict:
    _check_terms(len(a) * len(b))
    out: dict = {}
    for ma, ca in a.items():
        for mb, cb in b.items():
            powers: dict = dict(ma)
            for base, exponent in mb:
                powers[base] = powers.get(base, 0) + exponent
            monomial = tuple(sorted(((k, e) for k, e in powers.items() if e), key=lambda kv: kv[0].sort_key()))
            total = out.get(monomial, 0) + ca * cb
            if total:
                out[monomial] = total
            else:
                out.pop(monomial, None)
    return out


def expand(node) -> dict:
    """``{monomial: coefficient}`` of ``node``.

    Raises
    ------
    LimitError
        Beyond :data:`~symbias.expressions.limits.MAX_TERMS` monomials.
    """
    op = node.op
    if op == "number":
        return {(): node.value} if node.value else {}
    if op == "symbol":
        return {((node, 1),): Fraction(1)}
    if op == "add":
        out: dict = {}
        for arg in node.args:
            for monomial, coeff in expand(arg).items():
                total = out.get(monomial, 0) + coeff
                if total:
                    out[monomial] = total
                else:
                    out.pop(monomial, None)
        _check_terms(len(out))
        return out
    if op == "mul":
        out = {(): Fraction(1)}
        for arg in node.args:
            out = _multiply_terms(out, expand(arg))
        return out
    if op == "pow":
        return _expand_power(node)
    return {((node, 1),): Fraction(1)}


def _expand_power(node) -> dict:
    exponent = node.exponent
    if exponent.op == "number" and exponent.value.denominator == 1:
        n = int(exponent.value)
        base_terms = expand(node.base)
        if n >= 0:
            out: dict = {(): Fraction(1)}
            for _ in range(n):
                out = _multiply_terms(out, base_terms)
            return out
        if len(base_terms) == 1:  # a monomial: invert it
            (monomial, coeff), = base_terms.items()
            return {tuple((b, e * n) for b, e in monomial): coeff**n}
        return {((node.base, n),): Fraction(1)}
    return {((node, 1),): Fraction(1)}
