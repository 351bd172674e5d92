"""Terminal rendering of derivations with rich: a panel per derived quantity.

Renderer (derivation -> rich renderables).  The exact form is written
straight from the formula's terms, so a plain derivation loads no
computer-algebra system; sympy is used only for the readable forms of an
approximation or a sensitivity.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\n"), "a")
>>> "RA" in render_to_string(formula_panel(f))
True
"""

from __future__ import annotations

from typing import Any

from .console import CAUTION, engineering, escaped, ratio_text, render_to_string, terminal_console

__all__ = [
    "formula_panel",
    "approximation_rows",
    "sensitivity_table",
    "derivation_renderables",
    "polynomial_texts",
    "value_text",
    "value_label",
    "ratio_rows",
    "DISPLAY_TERMS",
    "render_to_string",
    "terminal_console",
]

#: Results with more terms than this are summarised, not printed in full.
DISPLAY_TERMS = 400


def polynomial_texts(formula) -> tuple[str, str]:
    """Numerator and denominator as one-line text (``^`` for powers), written from the terms.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> polynomial_texts(output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 {RA^2}\\n"), "a"))
    ('RA^2', '1 + RA')
    """
    exact = formula.exact_string()
    numerator, denominator = exact[1:-1].split(")/(", 1)
    return numerator.replace("**", "^"), denominator.replace("**", "^")


def formula_panel(formula, extra_rows: list[tuple[str, str]] | None = None, title: str | None = None) -> Any:
    """A rich Panel with the formula, its symbols and assumptions."""
    from rich.console import Group
    from rich.panel import Panel
    from rich.table import Table
    from rich.text import Text

    parts: list[Any] = []
    num_terms, den_terms = formula.nterms
    if num_terms + den_terms <= DISPLAY_TERMS:
        numerator, denominator = polynomial_texts(formula)
        body = Text()
        body.append(f"{formula.label} =\n", style="bold")
        if denominator == "1":
            body.append(f"  {numerator}")
        else:
            body.append(f"  ({numerator})\n")
            body.append(f"  / ({denominator})")
        parts.append(body)
    else:
        parts.append(Text(f"{formula.label}: exact result too long to print "
                          f"({num_terms} numerator and {den_terms} denominator terms); "
                          "use --json for the full form or --approx for the leading terms", style="bold"))
    parts.append(Text(f"unit: {formula.unit}    terms: {num_terms} / {den_terms}", style="dim"))
    for label, value in extra_rows or []:
        parts.append(Text.assemble((f"{label}: ", "bold"), Text(value)))
    if formula.meanings:
        table = Table(show_header=True, header_style="bold", box=None, pad_edge=False)
        table.add_column("symbol")
        table.add_column("meaning")
        for name in sorted(formula.meanings):
            table.add_row(Text(name), Text(str(formula.meanings[name])))
        parts.append(table)
    if formula.assumptions:
        parts.append(Text("assumptions: " + "; ".join(formula.assumptions), style="italic"))
    return Panel(Group(*parts), title=title or formula.quantity.replace("_", " "), expand=False)


def approximation_rows(approximation: Any) -> list[tuple[str, str]]:
    """Rows for :func:`formula_panel`: the approximate form, its assumptions and the worst error.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> from symbias.approx import approximate
    >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
    >>> approximation_rows(approximate(f, ["RA >> RB"]))[0]
    ('approx', 'RB')
    """
    from ..readable import readable_text

    a = approximation
    (kept_n, all_n), (kept_d, all_d) = a.kept
    return [
        ("approx", readable_text(a.expr)),
        ("kept terms", f"{kept_n} of {all_n} / {kept_d} of {all_d}"),
        ("worst error", f"{100 * a.error:.3g} % (tolerance {100 * a.tolerance:.3g} %) at {a.where()}"),
        ("points", f"{a.corners} corners + {a.admitted - a.corners} random (of {a.samples} drawn) "
                   f"+ {a.refined} in refinement"),
        ("magnitudes", "; ".join(a.statements) or "none needed"),
    ]


def sensitivity_table(rows: Any, title: str = "normalised sensitivities S = (x/F) dF/dx") -> Any:
    """A rich Table of sensitivity rows (symbol, value, expression), in the given (ranked) order."""
    from rich.table import Table
    from rich.text import Text

    from ..readable import readable_text

    table = Table(title=title, show_header=True, header_style="bold", box=None, pad_edge=False)
    table.add_column("symbol")
    table.add_column("value", justify="right")
    table.add_column("expression")
    for row in rows:
        value = "" if row.value is None else f"{row.value:+.4g}"
        expr = "" if row.expr is None else readable_text(row.expr, parallel=False)
        if len(expr) > 70:
            expr = "(long: see --json or --format markdown)"
        table.add_row(Text(row.symbol), Text(value), Text(expr))
    return table


def value_label(result) -> str:
    """What the value at the operating point is: for a transfer, the small-signal slope.

    Examples
    --------
    >>> from symbias.pipeline import load_target, derive, DeriveRequest
    >>> value_label(derive(load_target("examples/simple_mirror.cir")).results[1])
    'small-signal gain d iout/d iin at the operating point'
    """
    quantity = result.quantity.kind
    if quantity == "current_gain":
        return "small-signal gain d iout/d iin at the operating point"
    if quantity == "output_resistance":
        return "small-signal value at the operating point"
    return f"small-signal {quantity.replace('_', ' ')} at the operating point"


def value_text(result, temperature: float) -> str:
    """The value of a derived quantity at the operating point, with its unit and temperature."""
    if result.missing:
        return f"needs {', '.join(result.missing)} (not set by the operating point; use --set)"
    if result.value is None:
        shown = "infinite"
    elif result.formula.unit in ("A/A", "V/V"):
        shown = ratio_text(result.value)  # a ratio reads better without an SI prefix
    else:
        shown = engineering(result.value)
    return f"{shown} {result.formula.unit} at {temperature:g} degC"


def _error_rows(error) -> list[tuple[str, str]]:
    from ..readable import readable_text

    rows = [("small-signal error 1 - gain/ideal", f"~ {readable_text(error.leading.expr)}  (worst error "
                                                  f"{100 * error.leading.error:.3g} %; ideal "
                                                  f"{readable_text(error.ideal.expr)})")]
    rows += [(f"  from {cause.name}", f"~ {readable_text(cause.leading.expr)}") for cause in error.causes]
    return rows


def _percent(value: float | None) -> str:
    return "-" if value is None else f"{100 * value:+.4g} %"


def ratio_rows(ratio) -> list[tuple[str, str]]:
    """Rows for :func:`formula_panel`: the DC current ratio at the operating point and its error by cause.

    Examples
    --------
    >>> from symbias.pipeline import load_target, design_inputs
    >>> from symbias.pipeline.mirror_ratio import mirror_ratio
    >>> target = load_target("examples/simple_mirror.cir")
    >>> rows = ratio_rows(mirror_ratio(target, design_inputs(target), "Vout", "Iref"))
    >>> rows[0]
    ('DC current ratio Iout/Iin', '1.01356 = 20.27uA / 20uA at 27 degC (ideal 1)')
    """
    rows = [("DC current ratio Iout/Iin", f"{ratio_text(ratio.ratio)} = {engineering(ratio.output_current, 'A')} / "
                                          f"{engineering(ratio.input_current, 'A')} at {ratio.temperature:g} degC "
                                          f"(ideal {ratio_text(ratio.ideal)})"),
            ("DC ratio error 1 - ratio/ideal", f"{_percent(ratio.error)}  (Iout: {ratio.meaning})")]
    for cause in ratio.causes:
        lead = "" if cause.formula is None else f";  leading order {cause.formula} = {_percent(cause.leading)}"
        rows.append((f"  from {cause.name}", f"{_percent(cause.exact)} exact{lead}  ({cause.parameter})"))
    if ratio.causes:
        rows.append(("  interaction of the causes", _percent(ratio.interaction)))
    return rows


def _infinite_panel(result) -> Any:
    from rich.panel import Panel
    from rich.text import Text

    kind = result.quantity.kind
    label = f"{kind.replace('_', ' ')} at {'/'.join(result.quantity.arguments)}"
    return Panel(Text.assemble((f"{label} = infinite\n", "bold"), result.infinite or ""),
                 title=kind.replace("_", " "), expand=False)


def derivation_renderables(derivation) -> list[Any]:
    """Header, one panel per quantity (with its approximation, value and error rows), sensitivity tables."""
    out: list[Any] = [f"[bold]{escaped(derivation.target.title)}[/bold]  ({escaped(derivation.target.where)})"]
    bias = derivation.bias
    if bias is not None and bias.point.states is not None and bias.point.states.several:
        from .dc import state_lines

        out.extend(state_lines(bias.point.states))
    for result in derivation.results:
        if result.formula is None:
            out.append(_infinite_panel(result))
            continue
        rows = approximation_rows(result.approximation) if result.approximation is not None else []
        if bias is not None:
            source = " (ngspice)" if bias.inputs.models == "ngspice" else ""
            rows.insert(0, (value_label(result) + source, value_text(result, bias.temperature)))
        if result.approximation_error_at_bias is not None:
            rows.append(("error at the operating point", f"{100 * result.approximation_error_at_bias:.3g} %"))
        if result.dc_ratio is not None:
            rows += ratio_rows(result.dc_ratio)
        if result.transfer_error is not None:
            rows += _error_rows(result.transfer_error)
            if bias is None:
                rows.append(("DC current ratio", "add --at-bias for Iout/Iin at the operating point and its causes"))
        out.append(formula_panel(result.formula, rows))
        if result.sensitivities:
            point = ", ".join(f"{k}={v:.3g}" for k, v in (result.sensitivity_point or {}).items())
            out.append(sensitivity_table(result.sensitivities,
                                         title=f"sensitivities S = (x/F) dF/dx at {escaped(point, 400)}"))
    out.append(f"[dim]{CAUTION}[/dim]")
    return out
