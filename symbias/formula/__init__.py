"""The Formula: an exact rational result kept as two ring polynomials, and what is done with it.

Fifth step of the symbolic side (polynomial system -> :class:`Formula`).
Modules, bottom up:

* :mod:`~symbias.formula.algebra`: normal form of a ratio of polynomials
  (common factors cancelled, denominator scaled);
* :mod:`~symbias.formula.userform`: ring generators (``x``, ``1/x``,
  sub-expressions) turned back into the user's symbols;
* :mod:`~symbias.formula.text`: exact strings written from the terms in
  chunks, LaTeX from the terms, sympy expressions on request;
* :mod:`~symbias.formula.horner` and :mod:`~symbias.formula.routes`: the
  evaluation routes (straight-line programs of the polynomials, or the
  compiled numeric solve of the network);
* :mod:`~symbias.formula.core`: the :class:`Formula` itself.

Importing this package loads neither sympy nor python-flint; sympy is
imported inside the methods that build sympy objects (``.expr``,
``.numerator_expr``, ``.latex()``).

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
>>> f.expr
RA*RB/(RA + RB)
>>> float(f.evaluate({"RA": 2.0, "RB": 2.0}))
1.0
"""

from .algebra import CANCEL_TERMS, NORMALISE_TERMS, cancel_common_factor
from .core import TERM_BUDGET, Formula
from .routes import POLYNOMIAL_ROUTE_TERMS

__all__ = ["Formula", "TERM_BUDGET", "POLYNOMIAL_ROUTE_TERMS", "CANCEL_TERMS", "NORMALISE_TERMS",
           "cancel_common_factor"]
