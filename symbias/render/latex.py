"""LaTeX of formulas for design notes.

An approximation is written as an equation with its magnitude assumptions
and measured worst error as a side condition (:func:`approximation_latex`).

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
>>> formula_latex(f)
'R_{\\\\mathrm{out}} = \\\\frac{R_{A} R_{B}}{R_{A} + R_{B}}'
"""

from __future__ import annotations

import sympy

from ..formula import Formula
from ..symbols import QUANTITY_LATEX, latex_name

__all__ = ["formula_latex", "quantity_symbol", "approximation_latex", "assumption_latex", "derivation_latex"]

_QUANTITY_SYMBOLS = QUANTITY_LATEX


def quantity_symbol(formula: Formula) -> str:
    """LaTeX symbol of the quantity a formula gives (``R_{\\mathrm{out}}``, ``A_i`` ...)."""
    return _QUANTITY_SYMBOLS.get(formula.quantity, "F")


def formula_latex(formula: Formula, expression: sympy.Expr | None = None) -> str:
    """``<quantity symbol> = <LaTeX of the expression>`` (the exact form by default)."""
    if expression is None:
        return f"{quantity_symbol(formula)} = {formula.latex({s.name: latex_name(s.name) for s in formula.symbols})}"
    names = {s: latex_name(s.name) for s in expression.free_symbols if isinstance(s, sympy.Symbol)}
    return f"{quantity_symbol(formula)} = {sympy.latex(expression, symbol_names=names)}"


_RELATIONS = ((">>", r"\gg"), ("<<", r"\ll"), ("~", r"\sim"))


def _side_latex(text: str) -> str:
    from ..expressions import parse_expression, try_parse_number

    number = try_parse_number(text)
    expr = (number if number is not None else parse_expression(text)).to_sympy()
    return sympy.latex(expr, symbol_names={s: latex_name(s.name) for s in expr.free_symbols})


def _number(value: float) -> str:
    return str(int(value)) if float(value).is_integer() else sympy.latex(sympy.Float(value, 3))


def assumption_latex(assumption) -> str:
    r"""LaTeX of a magnitude statement: ``g_{m} r_{o} \gg 1`` or ``30 \le \beta \le 1000``.

    Examples
    --------
    >>> from symbias.approx import parse_assumption
    >>> print(assumption_latex(parse_assumption("gm*ro >> 1")))
    g_{m} r_{o} \gg 1
    >>> print(assumption_latex(parse_assumption("beta in [30, 1000]")))
    30 \le \beta \le 1000
    """
    text = assumption.text
    for op, command in _RELATIONS:
        if text.count(op) == 1 and assumption.origin in ("user", "default"):
            left, right = (part.strip() for part in text.split(op))
            return f"{_side_latex(left)} {command} {_side_latex(right)}"
    mono = sympy.Mul(*(sympy.Symbol(n) ** sympy.nsimplify(e) for n, e in assumption.powers))
    body = sympy.latex(mono, symbol_names={s: latex_name(s.name) for s in mono.free_symbols})
    if assumption.low == assumption.high:
        return f"{body} = {_number(assumption.low)}"
    return rf"{_number(assumption.low)} \le {body} \le {_number(assumption.high)}"


def approximation_latex(approximation, *, with_conditions: bool = True) -> str:
    r"""``<symbol> \approx <form>``, with the assumptions and the worst error as a side condition.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> from symbias.approx import approximate
    >>> f = output_resistance(parse_netlist("t\nI1 0 a 1\nR1 a 0 RA\nR2 a 0 RB\n"), "a")
    >>> print(approximation_latex(approximate(f, ["RA >> RB"])))
    R_{\mathrm{out}} \approx R_{B} \qquad \left(R_{A} \gg R_{B};\ \text{worst error } 3.3\,\%\right)
    """
    from ..readable import readable_latex

    text = rf"{quantity_symbol(approximation.exact)} \approx {readable_latex(approximation.expr)}"
    if not with_conditions:
        return text
    shown = [assumption_latex(a) for a in approximation.assumptions if a.origin in ("user", "default")]
    error = rf"\text{{worst error }} {100 * approximation.error:.2g}\,\%"
    condition = (", ".join(shown) + r";\ " if shown else "") + error
    return rf"{text} \qquad \left({condition}\right)"


def derivation_latex(derivation) -> str:
    """LaTeX lines of every derived quantity: the exact form, its approximation, its transfer error.

    Examples
    --------
    >>> from symbias.pipeline import load_target, derive
    >>> derivation_latex(derive(load_target("examples/simple_mirror.cir"))).splitlines()[0]
    'R_{\\\\mathrm{out}} = r_{o,Q2}'
    """
    lines = []
    for result in derivation.results:
        if result.formula is None:
            lines.append(rf"{_QUANTITY_SYMBOLS.get(result.quantity.kind, 'X')} = \infty")
            continue
        lines.append(formula_latex(result.formula))
        if result.approximation is not None:
            lines.append(approximation_latex(result.approximation))
        if result.transfer_error is not None:
            lines.append(approximation_latex(result.transfer_error.leading))
    return "\n".join(lines)
