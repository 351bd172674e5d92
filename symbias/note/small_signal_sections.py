"""Sections of a design note on the small-signal results: exact and leading-order forms, sensitivities.

Section builders of the note package (:class:`~symbias.note.context.NoteContext`
-> :class:`~symbias.note.model.Section`).  The formulas are those of the
context's derivation (:func:`symbias.pipeline.derive`); the values at the
operating point are the derivation's, the sensitivities those of
:func:`symbias.sensitivity.sensitivities` at the bias values.

Examples
--------
>>> from symbias.pipeline import load_target, design_inputs
>>> from symbias.note.context import NoteRequest, note_context
>>> target = load_target("bjt-simple-mirror")
>>> context = note_context(target, design_inputs(target), NoteRequest(approximate=False))
>>> section = small_signal_section(context)
>>> section.blocks[2].latex
'R_{\\\\mathrm{out}} = r_{o}'
"""

from __future__ import annotations

from .context import NoteContext
from .model import Bullets, Math, Number, Paragraph, Section, Table

__all__ = ["small_signal_section", "sensitivities_section", "formula_latex", "SHOWN_TERMS", "SENSITIVITY_ROWS", "READABLE_TERMS"]

#: Largest exact result (numerator plus denominator terms) typeset in a note.
SHOWN_TERMS = 60
#: Largest leading-order form (kept terms) tidied by sympy before it is typeset.
READABLE_TERMS = 12
#: Sensitivity rows kept per quantity (the largest in magnitude).
SENSITIVITY_ROWS = 8
_UNITS = {"output_resistance": "ohm", "current_gain": "1", "voltage_gain": "1", "transconductance": "S",
          "transimpedance": "ohm"}


def formula_latex(formula) -> str:
    """``<quantity symbol> = <exact form>`` in LaTeX."""
    from ..symbols import QUANTITY_LATEX, latex_name

    names = {s.name: latex_name(s.name) for s in formula.symbols}
    return f"{QUANTITY_LATEX.get(formula.quantity, 'F')} = {formula.latex(names)}"


def _approximation_latex(approximation) -> str:
    """The leading-order form: tidied by sympy when short, else straight from its kept terms (sympy's tidying of
    a long form took seconds)."""
    from ..readable import readable_latex
    from ..symbols import QUANTITY_LATEX, latex_name

    (numerator, _), (denominator, _) = approximation.kept
    if numerator + denominator <= READABLE_TERMS:
        body = readable_latex(approximation.expr)
    else:
        formula = approximation.formula
        body = formula.latex({s.name: latex_name(s.name) for s in formula.symbols})
    return rf"{QUANTITY_LATEX.get(approximation.exact.quantity, 'F')} \approx {body}"


def small_signal_section(context: NoteContext) -> Section:
    """Each derived quantity: exact form (or its size), leading-order form with assumptions and worst error,
    and the values at the operating point."""
    blocks: list = [Paragraph(
        "Small-signal results from exact nodal analysis of the hybrid-pi network "
        f"({_options_text(context)}); each leading-order form keeps the dominant terms, and its worst relative "
        "error is measured over the stated ranges of the magnitude assumptions, not estimated.")]
    rows = []
    for result in context.derivation.results:
        quantity = result.quantity
        name = f"{quantity.kind.replace('_', ' ')} at {'/'.join(quantity.arguments)}"
        if result.formula is None:
            blocks.append(Paragraph(f"**{name}**: infinite ({result.infinite})."))
            continue
        formula = result.formula
        blocks.append(Paragraph(f"**{formula.label}** ({name}), exact:"))
        terms = sum(formula.nterms)
        if terms <= SHOWN_TERMS:
            blocks.append(Math(formula_latex(formula), formula.label))
        else:
            blocks.append(Paragraph(f"The exact result has {formula.nterms[0]} numerator and {formula.nterms[1]} "
                                    "denominator terms; it is not typeset here (symbias derive --format json gives "
                                    "it whole)."))
        if formula.assumptions:
            blocks.append(Paragraph("Model: " + "; ".join(formula.assumptions) + "."))
        unit = _UNITS.get(formula.quantity, "")
        approximation = result.approximation
        if approximation is not None:
            blocks.append(Paragraph("Leading order:"))
            blocks.append(Math(_approximation_latex(approximation), formula.label + " (leading order)"))
            items = [f"`{statement}`" for statement in approximation.statements]
            items.append(f"worst relative error over these ranges {100 * approximation.error:.3g} % "
                         f"(tolerance {100 * approximation.tolerance:.3g} %), at {approximation.where()}")
            blocks.append(Bullets(tuple(items)))
        rows.append((formula.label, Number(result.value, unit),
                     Number(_approximate_value(result, context.derivation.bias.values), unit) if approximation is not None else "",
                     Number(result.approximation_error_at_bias, percent=True)
                     if result.approximation_error_at_bias is not None else ""))
    if rows:
        blocks.append(Table(("quantity", "exact, at the operating point", "leading order, there", "its error there"),
                            tuple(rows), "Values at the operating point"))
    return Section("small-signal", "Output resistance and transfer", tuple(blocks))


def _approximate_value(result, values) -> float | None:
    """The leading-order form at the operating point (the derivation's own bias values)."""
    from ..pipeline.derivation import value_at

    value, _ = value_at(result.approximation.formula, values)
    return value


def _options_text(context: NoteContext) -> str:
    options = context.derivation.request.options
    words = []
    if options.match:
        words.append("matched devices share symbols")
    if options.beta:
        words.append("beta = gm rpi")
    words.append("output resistances ro included" if options.ro else "ro neglected")
    return ", ".join(words)


def sensitivities_section(context: NoteContext) -> Section:
    """Normalised sensitivities ``S = (x/F) dF/dx`` of each quantity at the operating point, largest first."""
    from ..sensitivity import sensitivities

    values = context.derivation.bias.values
    blocks: list = [Paragraph("Normalised sensitivity $S_x^F = \\frac{x}{F}\\frac{\\partial F}{\\partial x}$ at the "
                              "operating point: a 1 % change of $x$ changes $F$ by $S$ %. The largest "
                              f"{SENSITIVITY_ROWS} of each quantity:")]
    for result in context.derivation.results:
        formula = result.formula
        if formula is None or any(s.name not in values for s in formula.symbols if s.name != "s"):
            continue
        point = {s.name: values[s.name] for s in formula.symbols if s.name != "s"}
        rows = sensitivities(formula, point, symbolic=False)[:SENSITIVITY_ROWS]
        table = tuple((f"`{row.symbol}`", Number(point.get(row.symbol)), Number(row.value, "1")) for row in rows)
        if table:
            blocks.append(Table(("symbol x", "value of x", "S"), table, f"Sensitivities of {formula.label}"))
    return Section("sensitivities", "Sensitivities", tuple(blocks))
