"""LaTeX of formulas for design notes.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
>>> formula_latex(f)
'R_{\\\\mathrm{out}} = \\\\frac{RA RB}{RA + RB}'
"""

from __future__ import annotations

import sympy

from ..formula import Formula

__all__ = ["formula_latex", "quantity_symbol"]

_QUANTITY_SYMBOLS = {
    "output_resistance": r"R_{\mathrm{out}}",
    "current_gain": r"A_i",
    "voltage_gain": r"A_v",
    "transconductance": r"G_m",
    "transimpedance": r"Z_t",
}


def quantity_symbol(formula: Formula) -> str:
    """LaTeX symbol of the quantity a formula gives (``R_{\\mathrm{out}}``, ``A_i`` ...)."""
    return _QUANTITY_SYMBOLS.get(formula.quantity, r"\mathrm{" + formula.quantity.replace("_", r"\_") + "}")


def formula_latex(formula: Formula, expression: sympy.Expr | None = None) -> str:
    """``<quantity symbol> = <LaTeX of the expression>`` (the exact form by default)."""
    expr = formula.expr if expression is None else expression
    return f"{quantity_symbol(formula)} = {sympy.latex(expr)}"
