"""Text of an expression tree: sympy-like, and read back by symbias's own parser.

Part of :mod:`symbias.expressions`: a free function of the tree (it reads
each node's ``op`` and children; it builds no node).  Powers are written
``**``, reciprocals as division, ``x**(1/2)`` as ``sqrt(x)``.

Examples
--------
>>> from symbias.expressions import parse_expression
>>> text(parse_expression("RE/2 - 3*x**2/(a*b) + sqrt(y)"))
'RE/2 + sqrt(y) - 3*x**2/(a*b)'
"""

from __future__ import annotations

from fractions import Fraction

__all__ = ["text"]


def text(node) -> str:
    """The text of ``node``."""
    op = node.op
    if op == "number":
        v = node.value
        return str(v.numerator) if v.denominator == 1 else f"{v.numerator}/{v.denominator}"
    if op == "symbol":
        return node.name
    if op == "add":
        return _sum(node)
    if op == "mul":
        return _product(node)
    if op == "pow":
        return _power(node.base, node.exponent)
    return f"{node.function}({text(node.argument)})"


def _coefficient(node) -> tuple[Fraction, tuple]:
    """(numeric coefficient, the other factors) of a term."""
    if node.op == "number":
        return node.value, ()
    if node.op == "mul":
        if node.args[0].op == "number":
            return node.args[0].value, node.args[1:]
        return Fraction(1), node.args
    return Fraction(1), (node,)


def _negative_power(node) -> bool:
    return node.op == "pow" and node.exponent.op == "number" and node.exponent.value < 0


def _precedence(node) -> int:
    if node.op == "add":
        return 1
    if node.op == "mul":
        return 2
    if node.op == "number":
        return 2 if node.value.denominator != 1 or node.value < 0 else 4
    if node.op == "pow":
        return 2 if _negative_power(node) else 3
    return 4


def _wrap(node, level: int) -> str:
    """Text of ``node`` in parentheses when it binds less tightly than ``level``."""
    shown = text(node)
    return f"({shown})" if _precedence(node) < level else shown


def _power_text(base, exponent: Fraction) -> str:
    """``base**exponent`` for a positive rational exponent."""
    if exponent == 1:
        return _wrap(base, 3)
    if exponent == Fraction(1, 2):
        return f"sqrt({text(base)})"
    shown = str(exponent.numerator) if exponent.denominator == 1 else f"({exponent.numerator}/{exponent.denominator})"
    return f"{_wrap(base, 4)}**{shown}"


def _power(base, exponent) -> str:
    if exponent.op == "number":
        v = exponent.value
        if v < 0:
            inverse = _power_text(base, -v)
            return f"1/({inverse})" if -v == 1 and _precedence(base) < 3 else f"1/{inverse}"
        return _power_text(base, v)
    return f"{_wrap(base, 4)}**{_wrap(exponent, 4)}"


def _product(node) -> str:
    coeff, factors = _coefficient(node)
    up: list[str] = []
    down: list[str] = []
    if coeff.numerator not in (1, -1):
        up.append(str(abs(coeff.numerator)))
    if coeff.denominator != 1:
        down.append(str(coeff.denominator))
    for factor in factors:
        if _negative_power(factor):
            exponent = -factor.exponent.value
            shown = _power_text(factor.base, exponent)
            down.append(f"({shown})" if exponent == 1 and _precedence(factor.base) < 3 else shown)
        else:
            up.append(_wrap(factor, 3))
    body = "*".join(up) or "1"
    if down:
        body += "/" + (down[0] if len(down) == 1 else "(" + "*".join(down) + ")")
    return ("-" if coeff < 0 else "") + body


def _sum(node) -> str:
    parts = []
    for i, term in enumerate(node.args):
        coeff, _ = _coefficient(term)
        shown = text(term)
        if i and coeff < 0:
            parts.append(" - " + shown[1:])
        else:
            parts.append((" + " if i else "") + shown)
    return "".join(parts)
