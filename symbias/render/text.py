"""Terminal rendering with rich: a panel per derived formula.

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

import sympy

from ..formula import Formula

__all__ = [
    "engineering",
    "terminal_console","formula_panel", "readable", "render_to_string", "approximation_rows", "sensitivity_table",
           "DISPLAY_TERMS"]

#: Results with more terms than this are summarised, not printed in full.
DISPLAY_TERMS = 400


def engineering(value: float, unit: str = "") -> str:
    """A number in engineering notation with an SI prefix, e.g. ``1.224M`` + unit.

    Examples
    --------
    >>> engineering(1.2244e6, "ohm"), engineering(4.94e-5, "A"), engineering(0.0)
    ('1.224Mohm', '49.4uA', '0')
    """
    if value != value:  # nan
        return "-"
    if value in (float("inf"), float("-inf")):
        return "inf"
    if value == 0:
        return f"0{unit}"
    prefixes = [(1e12, "T"), (1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "u"),
                (1e-9, "n"), (1e-12, "p"), (1e-15, "f")]
    for scale, prefix in prefixes:
        if abs(value) >= scale:
            return f"{value / scale:.4g}{prefix}{unit}"
    return f"{value:.3g}{unit}"


def readable(expr: sympy.Expr) -> str:
    """A compact one-line form of an expression (``**`` as ``^``, numbers in engineering style)."""
    text = sympy.sstr(expr)
    return text.replace("**", "^")


def formula_panel(formula: Formula, extra_rows: list[tuple[str, str]] | None = None, title: str | None = None) -> Any:
    """A rich Panel with the formula, its symbols and assumptions."""
    from rich.console import Group
    from rich.panel import Panel
    from rich.table import Table
    from rich.text import Text

    parts: list[Any] = []
    num_terms, den_terms = formula.nterms
    if num_terms + den_terms <= DISPLAY_TERMS:
        numerator = readable(formula.numerator_expr)
        denominator = readable(formula.denominator_expr)
        body = Text()
        body.append(f"{formula.label} =\n", style="bold")
        if formula.denominator_expr == 1:
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


def terminal_console(stream=None) -> Any:
    """A rich console on stdout, 120 columns wide when the output is not a terminal.

    Piped output (a file, a pager, a test) would otherwise wrap tables at 80 columns.
    """
    import sys

    from rich.console import Console

    stream = stream or sys.stdout
    out = Console(file=stream)
    return out if out.is_terminal else Console(file=stream, width=120)


def render_to_string(renderable: Any, width: int = 100) -> str:
    """Render a rich object to plain text (for tests and files)."""
    from rich.console import Console

    console = Console(width=width, record=True, color_system=None, file=_Null())
    console.print(renderable)
    return console.export_text()


class _Null:
    def write(self, text: str) -> int:
        return len(text)

    def flush(self) -> None:
        pass
