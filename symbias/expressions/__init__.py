"""Values and expressions in netlist text: exact numbers and a small expression tree, read without ``eval``.

Lowest level of the text side.  A SPICE number (``4.7k``, ``10uF``,
``1meg``) becomes an exact :class:`Number` (a :class:`fractions.Fraction`
inside); a ``{expression}`` becomes a tree of :class:`Expr` nodes built by a
small recursive-descent parser.  Only numbers, names, ``+ - * /``, powers
(``**`` or ``^``), parentheses and the functions in :data:`FUNCTIONS` are
accepted; anything else is a :class:`~symbias.errors.NetlistError`.

The tree is symbias's own, so reading a netlist, solving its DC operating
point and deriving its small-signal results need no computer-algebra system:
sympy is loaded only where a result is shown or manipulated as a sympy
expression (:meth:`Expr.to_sympy`).  Nodes are immutable and hashable and are
kept in a light canonical form (sums and products flattened, numbers folded
exactly, like terms and equal bases merged, arguments in a fixed order), so
equal values compare equal.  :meth:`Expr.terms` expands a value into
monomials for the polynomial engine.

Every growth has a limit checked as the tree is built
(:mod:`~symbias.expressions.limits`); each ends in a one-line
:class:`~symbias.errors.LimitError`.

Modules: :mod:`~symbias.expressions.tree` (nodes and canonical
constructors), :mod:`~symbias.expressions.parsing` (numbers and the
parser), and the free functions :mod:`~symbias.expressions.evaluation`,
:mod:`~symbias.expressions.expansion`, :mod:`~symbias.expressions.conversion`.

Examples
--------
>>> parse_number("4.7k")
4700
>>> e = parse_expression("2*RE + 1/gm")
>>> e, sorted(e.names)
(2*RE + 1/gm, ['RE', 'gm'])
>>> float(e.evaluate({"RE": 1e3, "gm": 0.04}))
2025.0
>>> parse_expression("R1*(1+k)", {"k": parse_number("2")})
3*R1
"""

from __future__ import annotations

from .limits import (MAX_BITS, MAX_DECIMAL_EXPONENT, MAX_DEPTH, MAX_DIGITS, MAX_EXPONENT, MAX_LENGTH, MAX_NESTING,
                     MAX_NODES, MAX_TERMS)
from .parsing import SUFFIXES, as_expr, parse_expression, parse_number, parse_value, try_parse_number
from .tree import (FUNCTIONS, MINUS_ONE, ONE, ZERO, Call, Expr, Number, Power, Product, Sum, Symbol, add, call,
                   multiply, power, substitute)

__all__ = [
    "Expr",
    "Number",
    "Symbol",
    "Sum",
    "Product",
    "Power",
    "Call",
    "as_expr",
    "substitute",
    "add",
    "multiply",
    "power",
    "call",
    "parse_number",
    "try_parse_number",
    "parse_expression",
    "parse_value",
    "FUNCTIONS",
    "SUFFIXES",
    "ZERO",
    "ONE",
    "MINUS_ONE",
    "MAX_EXPONENT",
    "MAX_DECIMAL_EXPONENT",
    "MAX_DIGITS",
    "MAX_BITS",
    "MAX_NODES",
    "MAX_NESTING",
    "MAX_DEPTH",
    "MAX_LENGTH",
    "MAX_TERMS",
]
