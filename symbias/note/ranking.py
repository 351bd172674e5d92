"""The ranking section of a design note: the candidates against the spec, the trade-off, why this one.

Section builder of the note package.  It reads a ranking through a small
interface of its own, :class:`RankingSummary` (candidates with their rank,
score, feasibility, metrics and violations, and the verdict), so the note does
not depend on how the ranking is computed; :func:`ranking_summary` reads the
ranking engine's result (``symbias.design.rank``'s ``Ranking``: ``candidates``
of ``id``, ``title``, ``feasible``, ``rank``, ``score``, ``metrics`` name ->
object with ``value`` and ``unit``, ``violations`` with ``text``; and
``best``, ``verdict``) into it.

Examples
--------
>>> summary = RankingSummary((
...     CandidateRow("mos-cascode-mirror", "MOS cascode", True, 1, 0.8,
...                  {"rout": (5e8, "ohm"), "headroom": (0.45, "V")}),
...     CandidateRow("mos-simple-mirror", "MOS simple", False, None, None,
...                  {"rout": (2e6, "ohm"), "headroom": (0.2, "V")}, ("rout 2 Mohm < 20 Mohm",)),
... ), "mos-cascode-mirror meets the spec best", "mos-cascode-mirror")
>>> section = ranking_section(summary, "mos-cascode-mirror")
>>> section.blocks[1].rows[0][:3]
('**mos-cascode-mirror**', '1', 'yes')
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Mapping

from .model import Curve, Figure, Marker, Number, Paragraph, Plot, Section, Table

__all__ = ["CandidateRow", "RankingSummary", "ranking_summary", "ranking_section", "ranked_inputs", "TRADE_OFF"]

#: Metrics plotted against each other, the first pair every candidate has wins.
TRADE_OFF = (("headroom", "rout"), ("headroom", "random_error"), ("area", "rout"), ("supply_current", "rout"))


@dataclass(frozen=True)
class CandidateRow:
    """One candidate of a ranking, as the note shows it.

    Attributes
    ----------
    id, title : str
    feasible : bool
    rank : int or None
    score : float or None
    metrics : mapping of str to (value or None, unit)
    violations : tuple of str
    """

    id: str
    title: str
    feasible: bool
    rank: int | None
    score: float | None
    metrics: Mapping[str, tuple[float | None, str]] = field(default_factory=dict)
    violations: tuple[str, ...] = ()


@dataclass(frozen=True)
class RankingSummary:
    """The candidates in ranking order, the verdict and the best candidate (None when none is feasible)."""

    candidates: tuple[CandidateRow, ...]
    verdict: str
    best: str | None


def ranking_summary(ranking: Any) -> RankingSummary:
    """Read a ranking result (see the module docstring for the attributes used) into a :class:`RankingSummary`."""
    rows = []
    for c in ranking.candidates:
        metrics = {name: (m.value, m.unit) for name, m in dict(c.metrics).items()}
        rows.append(CandidateRow(c.id, c.title, bool(c.feasible), c.rank, c.score, metrics,
                                 tuple(v.text for v in c.violations)))
    return RankingSummary(tuple(rows), ranking.verdict, ranking.best)


def ranking_section(summary: RankingSummary, chosen: str) -> Section:
    """The ranking table, the trade-off plot and why the note's candidate was chosen."""
    names = [n for n in ("rout", "headroom", "ratio_error", "random_error", "tc", "area", "supply_current")
             if any(n in c.metrics for c in summary.candidates)]
    header = ("candidate", "rank", "meets the spec", "score", *names)
    rows = []
    for c in summary.candidates:
        label = f"**{c.id}**" if c.id == chosen else c.id
        cells = [label, str(c.rank) if c.rank is not None else "-", "yes" if c.feasible else "no",
                 Number(c.score, "1", digits=3)]
        cells += [Number(*c.metrics[n], percent=n.endswith("_error")) if n in c.metrics else "-" for n in names]
        rows.append(tuple(cells))
    blocks: list = [Paragraph(f"Verdict: {summary.verdict}."), Table(header, tuple(rows), "Candidates")]
    plot = _trade_off(summary, chosen)
    if plot is not None:
        blocks.append(Figure(plot, "Trade-off between the candidates; the note's candidate is marked."))
    blocks.append(Paragraph(_why(summary, chosen)))
    return Section("ranking", "Ranking against the spec", tuple(blocks))


def _trade_off(summary: RankingSummary, chosen: str) -> Plot | None:
    for x, y in TRADE_OFF:
        have = [c for c in summary.candidates if c.metrics.get(x, (None,))[0] is not None
                and c.metrics.get(y, (None,))[0] is not None]
        if len(have) >= 2:
            curves = tuple(Curve((c.metrics[x][0],), (c.metrics[y][0],), c.id, points=True) for c in have)
            mark = next((c for c in have if c.id == chosen), None)
            markers = (Marker(mark.metrics[x][0], chosen, colour="tab:green"),) if mark is not None else ()
            return Plot("trade_off", f"{y} against {x}", curves, f"{x} [{have[0].metrics[x][1]}]",
                        f"{y} [{have[0].metrics[y][1]}]", markers)
    return None


def _why(summary: RankingSummary, chosen: str) -> str:
    row = next((c for c in summary.candidates if c.id == chosen), None)
    if row is None:
        return f"{chosen} was not among the ranked candidates."
    if row.feasible and summary.best == chosen:
        return f"{chosen} meets every limit of the spec and has the best weighted score ({row.score:.3g})."
    if row.feasible:
        return f"{chosen} meets every limit of the spec (rank {row.rank}); {summary.best} scores higher."
    return f"{chosen} does not meet the spec: " + "; ".join(row.violations) + "."


def ranked_inputs(spec: Any, target: Any, inputs: Any, *, library=(), samples: int = 400, seed: int = 0,
                  process_given: bool = False, settings: Mapping[str, float] | None = None):
    """Rank the library against ``spec`` for a note on ``target``: the summary and the inputs the note uses.

    The inputs take the spec's process (unless one was given) and, for a
    library topology, the sizing the ranking found for it; ``settings``
    (``--set``) override both.

    Returns
    -------
    (RankingSummary, DesignInputs)
    """
    from dataclasses import replace

    from ..design.candidates import spec_process
    from ..design.rank import rank_candidates

    ranking = rank_candidates(spec, library=tuple(library), samples=samples, seed=seed)
    process = inputs.process if process_given else spec_process(spec)
    sized = {}
    if target.topology is not None:
        known = {v.name for v in target.topology.variables}
        found = next((c for c in ranking.candidates if c.id == target.topology.id), None)
        sized = {k: v for k, v in (found.sizing if found is not None else {}).items() if k in known}
    values = {**inputs.values, **sized, **dict(settings or {})}
    return ranking_summary(ranking), replace(inputs, process=process, values=values)
