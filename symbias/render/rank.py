"""A ranking on the terminal: one table of the candidates, each metric with its margin, then the reasons.

Renderer (:class:`~symbias.design.rank.Ranking` -> rich renderables, and the
JSON record of ``symbias rank --json``).  The table has a column per metric
the spec names (by a limit or a weight) and the device count; each cell holds
the value and, under it, its margin to the limit (positive inside it).
Below the table: the verdict, the sizing of the feasible candidates, every
failed requirement and every reason a candidate was not evaluated.

Examples
--------
>>> from symbias.design.spec import load_spec
>>> from symbias.design.rank import rank, RankRequest
>>> ranking = rank(load_spec("examples/sensor_bias_spec.toml"), RankRequest(only=("bjt-simple-mirror",), samples=0))
>>> text = render_to_string(rank_renderables(ranking)[0], width=160)
>>> "bjt-simple-mirror" in text and "[ohm]" in text
True
>>> rank_record(ranking)["candidates"][0]["metrics"]["rout"]["unit"]
'ohm'
"""

from __future__ import annotations

import math
from typing import Any

from .console import CAUTION, engineering, escaped, render_to_string

__all__ = ["rank_renderables", "rank_record", "shown_metrics", "value_text", "margin", "column_title",
           "render_to_string"]

#: Metrics shown as percentages (fractions in the data).
_PERCENT = ("ratio_error", "random_error", "random_error_mc", "voltage_error")
#: Order of the metric columns.
_ORDER = ("voltage", "voltage_error", "headroom", "rout", "ratio_error", "random_error", "tc", "line_sensitivity",
          "devices", "area", "supply_current", "noise", "rout_at_frequency")


def shown_metrics(ranking) -> list[str]:
    """The metrics that get a column: those the spec names by a limit or a weight, and the device count."""
    from ..design.verdict import requirements

    spec = ranking.spec
    named = {r.metric for r, _ in requirements(spec)} | {m for m, w in spec.weights.items() if w > 0} | {"devices"}
    present = {m for c in ranking.candidates for m in c.metrics}
    return [m for m in _ORDER if m in named and m in present]


def column_title(metric: str, unit: str, short: bool = False) -> str:
    """``headroom [V]``, ``random error [%]`` (``short``: an abbreviated name over the unit, for narrow columns)."""
    shown = "%" if metric in _PERCENT else unit
    if short and shown == "ppm/degC":
        shown = "ppm/K"  # the same number (a temperature difference), in a narrow column
    name = _SHORT.get(metric, metric.replace("_", " ")) if short else metric.replace("_", " ")
    if shown in ("1", ""):
        return name
    return f"{name}\n[{shown}]" if short else f"{name} [{shown}]"


#: Column names where the table is narrow.
_SHORT = {"ratio_error": "ratio err", "random_error": "random err", "line_sensitivity": "line",
          "supply_current": "supply I", "supply_min": "supply min", "voltage_error": "V error", "rout_at_frequency": "rout(f)"}


def value_text(metric) -> str:
    """A metric's value for a column whose title carries its unit."""
    value = metric.value
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    if metric.name in _PERCENT:
        return f"{100 * value:.3g}"
    if metric.unit in ("V", "ppm/degC", "%/V"):  # compact: a column is six characters wide
        if abs(value) >= 1000:
            return f"{value:,.0f}"
        return f"{value:.2g}" if 0 < abs(value) < 0.01 else f"{value:.3g}"
    if metric.unit == "um^2":
        return f"{value:,.0f}"
    if metric.unit == "1":
        return f"{value:g}"
    return engineering(value)


def margin(metric, spec) -> float | None:
    """How far inside its limit a metric is, relative to the limit (negative: past it); None without a limit.

    Examples
    --------
    >>> from symbias.design.spec import parse_spec
    >>> from symbias.design.metrics import Metric
    >>> spec = parse_spec('[block]\\nfamily = "current-mirror"\\ncurrent = "5u"\\n[supply]\\nmin = 1.6\\nmax = 2\\n'
    ...                   '[limits]\\nrout_min = "20meg"\\n')
    >>> margin(Metric("rout", 3e7, "ohm", "formula"), spec)
    0.5
    """
    from ..design.verdict import requirements

    for requirement, limit in requirements(spec):
        if requirement.metric != metric.name or metric.value is None or limit == 0:
            continue
        value = abs(metric.value) if requirement.absolute else metric.value
        return (limit - value) / abs(limit) if requirement.kind == "max" else (value - limit) / abs(limit)
    return None


def _cell(metric, spec) -> Any:
    from rich.text import Text

    if metric is None:
        return Text("n/a", style="dim")
    text = Text(value_text(metric))
    found = margin(metric, spec)
    if found is not None:
        text.append(f"\n{found:+.0%}", style="green" if found >= 0 else "red")
    elif metric.value is None:
        text.stylize("red")
    return text


def rank_renderables(ranking) -> list[Any]:
    """The table, the verdict, the sizing of the feasible candidates, the reasons, the caution."""
    from rich.table import Table
    from rich.text import Text

    spec = ranking.spec
    metrics = shown_metrics(ranking)
    units = {m: next(c.metrics[m].unit for c in ranking.candidates if m in c.metrics) for m in metrics}
    table = Table(title=escaped(_title(ranking)), title_justify="left", show_lines=True, padding=(0, 1), collapse_padding=True,
                  pad_edge=False)
    # identifiers whole, on one line, the verdict under each: the metric columns give way first
    longest = max((len(c.id) for c in ranking.candidates), default=9)
    table.add_column("candidate\nverdict", no_wrap=True, min_width=min(longest, 40))
    for m in metrics:
        title = column_title(m, units[m], short=True)
        table.add_column(Text(title), justify="right", min_width=max(6, *(len(w) for w in title.split())))
    for result in ranking.candidates:
        mc = result.metrics.get("random_error_mc")
        cells = []
        for m in metrics:
            cell = _cell(result.metrics.get(m), spec) if result.metrics else Text("")
            if m == "random_error" and mc is not None and mc.value is not None:
                cell = _with_mc(cell, mc)
            cells.append(cell)
        name = Text(result.id + "\n")
        name.append_text(_verdict(result))
        table.add_row(name, *cells)
    return [table, *_notes(ranking)]


def _verdict(result) -> Any:
    """The rank of a feasible candidate, else why it has none: ``fails``, ``unsized`` or ``excluded``."""
    from rich.text import Text

    if result.feasible:
        return Text(f"rank {result.rank}", style="bold green")
    if result.metrics:
        return Text("fails", style="red")
    return Text("excluded" if "spec asks" in (result.reason or "") else "unsized", style="yellow")


def _with_mc(cell, mc) -> Any:
    """The first-order value with the Monte Carlo value beside it (MC value +- its sampling error)."""
    from rich.text import Text

    first, _, rest = cell.plain.partition("\n")
    out = Text(first)
    out.append(f"\nMC {100 * mc.value:.3g}", style="cyan")
    if rest:
        out.append("\n")
        out.append(rest, style="green" if rest.startswith("+") else "red")
    return out


def _title(ranking) -> str:
    block = ranking.spec.block
    target = engineering(block.current, "A") if block.family != "reference" else engineering(block.voltage or 0, "V")
    outputs = f"{block.outputs} x " if block.outputs > 1 else ""
    return (f"{ranking.spec.path or 'spec'}: {outputs}{target} {block.family}, {block.technology}, "
            f"supply {ranking.spec.supply.min:g} to {ranking.spec.supply.max:g} V")


def _notes(ranking) -> list[Any]:
    from rich.text import Text

    out: list[Any] = [Text(ranking.verdict, style="bold green" if ranking.best else "bold red")]
    for result in ranking.candidates:
        if result.feasible and result.rank is not None and result.rank <= 3:
            sized = ", ".join(f"{name} = {engineering(value, result.sizing_units.get(name, ''))}"
                              for name, value in result.sizing.items())
            out.append(Text(f"  {result.rank}. {result.id}: {sized}"))
    failing = [r for r in ranking.candidates if not r.feasible]
    if failing:
        out.append(Text("Why not the others:", style="bold"))
    for result in failing:
        why = result.reason or "; ".join(v.text for v in result.violations)
        out.append(Text(f"  {result.id}: {why}"))
    mc = f"{ranking.samples} Monte Carlo samples, seed {ranking.seed}" if ranking.samples else "no Monte Carlo"
    out.append(Text(f"{len(ranking.candidates)} candidates, {mc}, {ranking.engine}, {ranking.wall:.1f} s; "
                    "margins are relative to each limit (+ inside it); random error: first order (Monte Carlo)",
                    style="dim"))
    out.append(Text(CAUTION, style="dim"))
    return out


def rank_record(ranking) -> dict:
    """The JSON object of ``symbias rank --json`` (plain data; infinities become null when printed)."""
    return ranking.to_dict()
