"""Conversion of an expression tree to sympy, for display and algebra that needs a CAS.

Part of :mod:`symbias.expressions`: a free function of the tree (it reads
each node's ``op``); sympy is imported only when it is called.

Examples
--------
>>> from symbias.expressions import parse_expression
>>> to_sympy(parse_expression("RA*RB/(RA + RB)"))
RA*RB/(RA + RB)
"""

from __future__ import annotations

__all__ = ["to_sympy"]


def to_sympy(node):
    """The same value as a sympy expression (every name a plain sympy Symbol)."""
    import sympy

    op = node.op
    if op == "number":
        return sympy.Rational(node.value.numerator, node.value.denominator)
    if op == "symbol":
        return sympy.Symbol(node.name)
    if op == "add":
        return sympy.Add(*(to_sympy(a) for a in node.args))
    if op == "mul":
        return sympy.Mul(*(to_sympy(a) for a in node.args))
    if op == "pow":
        return sympy.Pow(to_sympy(node.base), to_sympy(node.exponent))
    return {"exp": sympy.exp, "log": sympy.log, "abs": sympy.Abs}[node.function](to_sympy(node.argument))
