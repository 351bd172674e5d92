"""A ranking as a Markdown report for the design note: the answer, the table, each candidate's sizing and metrics.

Renderer (:class:`~symbias.design.rank.Ranking` -> Markdown text), written to a
file by ``symbias rank --markdown FILE`` through :func:`symbias.render.files.write_text`.

Examples
--------
>>> from symbias.design.spec import load_spec
>>> from symbias.design.rank import rank, RankRequest
>>> ranking = rank(load_spec("examples/sensor_bias_spec.toml"), RankRequest(only=("bjt-simple-mirror",), samples=0))
>>> text = rank_markdown(ranking)
>>> text.splitlines()[0], "| rout [ohm] |" in text, "## bjt-simple-mirror" in text
('# Ranking against examples/sensor_bias_spec.toml', True, True)
"""

from __future__ import annotations

from .console import CAUTION, engineering
from .rank import column_title, margin, shown_metrics, value_text

__all__ = ["rank_markdown"]


def _cell(text: str) -> str:
    return text.replace("|", "\\|").replace("\n", " ")


def rank_markdown(ranking) -> str:
    """The whole report (see the module docstring)."""
    spec = ranking.spec
    lines = [f"# Ranking against {spec.path or 'the spec'}", "", f"**{ranking.verdict}.**", "",
             _spec_line(spec), ""]
    lines += _table(ranking)
    for result in ranking.candidates:
        lines += _candidate(result, spec)
    mc = f"{ranking.samples} Monte Carlo samples (seed {ranking.seed})" if ranking.samples else "no Monte Carlo run"
    lines += ["## Method", "",
              "Each candidate is sized on the DC model for the target at the nominal supply, 27 degC and the "
              "spec's output voltage; output resistance from the exact small-signal formula at the operating point; "
              "headroom, temperature coefficient and line sensitivity from DC sweeps; systematic ratio error from "
              "the DC ratio; random error from Pelgrom's law to first order, with " + mc + ". Feasible candidates "
              "are ordered by Pareto front, then weighted score, then fewer devices.", "",
              f"*{CAUTION}*", ""]
    return "\n".join(lines)


def _spec_line(spec) -> str:
    block, limits = spec.block, spec.limits
    target = engineering(block.current, "A") if block.current is not None else engineering(block.voltage or 0, "V")
    wanted = ", ".join(f"{name} = {value if not isinstance(value, float) else f'{value:g}'}"
                       for name, value in spec.to_dict()["limits"].items())
    return (f"Block: {block.family} ({block.technology}), {block.outputs} output(s) of {target}, supply "
            f"{spec.supply.min:g} to {spec.supply.max:g} V. Limits: {wanted or 'none'}.")


def _table(ranking) -> list[str]:
    metrics = shown_metrics(ranking)
    units = {m: next(c.metrics[m].unit for c in ranking.candidates if m in c.metrics) for m in metrics}
    head = ["rank", "candidate", "verdict", *(column_title(m, units[m]) for m in metrics)]
    lines = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    for result in ranking.candidates:
        verdict = "feasible" if result.feasible else ("fails" if result.metrics else "not evaluated")
        cells = [str(result.rank or ""), f"`{result.id}`", verdict]
        for m in metrics:
            metric = result.metrics.get(m)
            if metric is None:
                cells.append("")
                continue
            found = margin(metric, ranking.spec)
            cells.append(value_text(metric) + (f" ({found:+.0%})" if found is not None else ""))
        lines.append("| " + " | ".join(_cell(c) for c in cells) + " |")
    return lines + ["", "Margins are relative to each limit, positive inside it.", ""]


def _candidate(result, spec) -> list[str]:
    lines = [f"## {result.id}", "", f"{result.title}. "
             + ("Feasible, rank %d (Pareto front %d, score %.2f)." % (result.rank, result.front, result.score)
                if result.feasible else "Not feasible."), ""]
    if result.reason:
        lines += [f"Not evaluated: {result.reason}.", ""]
    if result.violations:
        lines += [f"* {v.text}" for v in result.violations] + [""]
    if result.sizing:
        lines += ["| variable | value | how |", "|---|---|---|"]
        for name, value in result.sizing.items():
            lines.append(f"| `{name}` | {engineering(value, result.sizing_units.get(name, ''))} | "
                         f"{_cell(result.sizing_how.get(name, ''))} |")
        lines.append("")
    if result.metrics:
        lines += ["| metric | value | unit | source |", "|---|---|---|---|"]
        for name, metric in result.metrics.items():
            value = value_text(metric) if metric.value is not None else f"- ({metric.note})"
            unit = "%" if name in ("ratio_error", "random_error", "random_error_mc", "voltage_error") else metric.unit
            lines.append(f"| {name} | {_cell(value)} | {unit} | {_cell(metric.source)} |")
        lines.append("")
    return lines
