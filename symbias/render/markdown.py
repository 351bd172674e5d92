"""Markdown for design notes: ``$$`` math blocks, assumptions, error bound, a design-aid caution.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\n"), "a")
>>> print(formula_markdown(f).splitlines()[0])
### Rout at a
"""

from __future__ import annotations

from typing import Any

from ..formula import Formula

from .console import CAUTION as _CAUTION

__all__ = ["formula_markdown", "derivation_markdown", "CAUTION"]

#: Closing note of every exported block.
CAUTION = f"*{_CAUTION}*"


def formula_markdown(formula: Formula, approximation: Any = None, sensitivities: Any = None,
                     title: str | None = None, caution: bool = True) -> str:
    """A Markdown section: exact form, approximation with assumptions and error bound, sensitivities.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> from symbias.approx import approximate
    >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
    >>> text = formula_markdown(f, approximate(f, ["RA >> RB"]))
    >>> "$$" in text and "worst relative error" in text
    True
    """
    from .latex import approximation_latex, assumption_latex, formula_latex

    lines = [f"### {title or formula.label}", ""]
    num_terms, den_terms = formula.nterms
    if num_terms + den_terms <= 400:
        lines += ["Exact:", "", "$$", formula_latex(formula), "$$", ""]
    else:
        lines += [f"Exact: {num_terms} numerator and {den_terms} denominator terms (see the JSON export).", ""]
    if approximation is not None:
        a = approximation
        lines += ["Approximation:", "", "$$", approximation_latex(a, with_conditions=False), "$$", ""]
        lines += [
            f"- worst relative error {100 * a.error:.3g} % (tolerance {100 * a.tolerance:.3g} %), at {a.where()}",
            f"- measured at {a.corners} corners and {a.admitted - a.corners} random points "
            f"({a.samples} drawn, seed {a.seed}), refined with {a.refined} more",
            "- magnitude assumptions:",
        ]
        for statement in a.assumptions:
            lines.append(f"  - ${assumption_latex(statement)}$: {statement.describe()}")
        lines.append("")
    lines += _symbol_table(formula)
    if formula.assumptions:
        lines += ["Model: " + "; ".join(formula.assumptions) + ".", ""]
    if sensitivities:
        lines += ["| symbol | S = (x/F) dF/dx | value |", "|---|---|---|"]
        for row in sensitivities:
            expr = "" if row.expr is None else f"${_latex(row.expr)}$"
            value = "" if row.value is None else f"{row.value:+.4g}"
            lines.append(f"| {row.symbol} | {expr} | {value} |")
        lines.append("")
    if caution:
        lines.append(CAUTION)
    return "\n".join(lines) + "\n"


def _symbol_table(formula: Formula) -> list[str]:
    """The symbols of a formula: name, how it is typeset, what it is and its unit."""
    from ..symbols import latex_name

    if not formula.meanings:
        return []
    lines = ["| symbol | | meaning | unit |", "|---|---|---|---|"]
    for name in sorted(formula.meanings):
        meaning = formula.meanings[name]
        lines.append(f"| `{name}` | ${latex_name(name)}$ | {meaning.description} | {meaning.unit} |")
    return lines + [""]


def _latex(expr) -> str:
    from ..readable import readable_latex

    return readable_latex(expr, parallel=False)


def derivation_markdown(derivation) -> str:
    """A Markdown section per derived quantity (and per transfer error) under the circuit's title.

    Examples
    --------
    >>> from symbias.pipeline import load_target, derive
    >>> print(derivation_markdown(derive(load_target("examples/simple_mirror.cir"))).splitlines()[0])
    ## Kestrel KT-40 sensor front end: 20 uA tail sink, simple NPN mirror
    """
    sections = [f"## {derivation.target.title or derivation.target.where}\n"]
    for result in derivation.results:
        if result.formula is None:
            sections.append(f"### {result.quantity.kind.replace('_', ' ')} at {'/'.join(result.quantity.arguments)}"
                            f"\n\nInfinite: {result.infinite}\n")
            continue
        sections.append(formula_markdown(result.formula, result.approximation, result.sensitivities, caution=False))
        error = result.transfer_error
        if error is not None:
            sections.append(formula_markdown(error.exact, error.leading, title=error.exact.label, caution=False))
    sections.append(CAUTION + "\n")
    return "\n".join(sections)
