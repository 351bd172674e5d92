"""Size limits of values: every growth of an expression is bounded, each ending in a one-line LimitError.

Part of :mod:`symbias.expressions`.  The limits are far beyond any real
component value or design formula; they exist so that adversarial input
(``.param`` chains that square a value twenty times, a 20,000-term sum, 200
nested parentheses) ends at once with a clear message instead of a hang, a
crash or a number too long to print.

Examples
--------
>>> MAX_EXPONENT, MAX_NESTING
(64, 60)
"""

__all__ = ["MAX_EXPONENT", "MAX_DECIMAL_EXPONENT", "MAX_DIGITS", "MAX_BITS", "MAX_NODES", "MAX_NESTING",
           "MAX_DEPTH", "MAX_LENGTH", "MAX_TERMS"]

#: Largest magnitude of a numeric exponent (``x**64`` is already far beyond any real use).
MAX_EXPONENT = 64
#: Largest decimal exponent of a number (IEEE doubles end near 1e308).
MAX_DECIMAL_EXPONENT = 308
#: Longest number, in characters.
MAX_DIGITS = 400
#: Largest exact number, in bits of numerator or denominator, that arithmetic may produce.
MAX_BITS = 4096
#: Largest expression, in tree nodes (a value, however built from ``.param`` chains).
MAX_NODES = 2000
#: Deepest nesting of parentheses, signs and powers in one expression.
MAX_NESTING = 60
#: Deepest expression tree, however built (``.param`` steps that each wrap the last in parentheses).
MAX_DEPTH = 120
#: Longest expression text, in characters.
MAX_LENGTH = 20_000
#: Most monomials a value may expand into (:meth:`~symbias.expressions.Expr.terms`).
MAX_TERMS = 10_000
