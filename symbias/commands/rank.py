"""``symbias rank``: rank the topology library against a spec file.

Wires: arguments -> :func:`symbias.design.spec.load_spec` ->
:func:`symbias.design.rank.rank` (on the executor
:func:`symbias.design.executors.executor_for` gives for ``--workers`` or
``--scheduler``) -> a table (:mod:`symbias.render.rank`), JSON, a Markdown
report (:mod:`symbias.render.rank_report`) and a trade-off plot
(:mod:`symbias.render.tradeoff`), each file written whole or not at all.
Exit status 0 when a candidate meets the spec, 1 when none does (the
verdict names the closest), 2 for a bad spec or bad options.

Examples
--------
>>> from symbias.cli import main
>>> main(["rank", "examples/sensor_bias_spec.toml", "--only", "bjt-simple-mirror", "--samples", "0"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse
import sys

from ..render.console import CAUTION

__all__ = ["register", "run"]

_PLOT_SUFFIXES = (".png", ".svg", ".pdf")


def register(subparsers) -> None:
    """Add the ``rank`` sub-command."""
    p = subparsers.add_parser(
        "rank",
        help="rank the library against a spec: each candidate sized, measured and checked",
        description="Choose the bias block: every library topology of the spec's family sized for the spec, "
                    "measured (output resistance, headroom, ratio error, random error, TC, line sensitivity, "
                    "devices, area, supply current) and checked against each limit; the feasible ones ranked.",
        epilog=CAUTION,
    )
    p.add_argument("spec", help="spec file (TOML, docs/spec-format.md)")
    p.add_argument("--library", action="append", default=[], metavar="DIR", help="extra topology folder")
    p.add_argument("--only", nargs="+", default=[], metavar="ID", help="rank only these topologies")
    p.add_argument("--samples", type=int, default=10_000, metavar="N",
                   help="Monte Carlo samples per candidate (default 10000; 0: first-order random error only)")
    p.add_argument("--seed", type=int, default=0, metavar="S", help="seed of the Monte Carlo samples (default 0)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--markdown", metavar="FILE.md", help="write a Markdown report")
    p.add_argument("--plot", metavar="FILE.png", help="write the trade-off plot (.png, .svg or .pdf; needs matplotlib)")
    p.add_argument("--workers", type=int, metavar="N", help="run candidates and Monte Carlo chunks in N processes")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="run them on a Dask cluster (tcp://host:8786; needs symbias[distributed])")
    p.set_defaults(func=run)


def _progress(enabled: bool):
    """A rich progress bar on stderr while candidates are evaluated; returns (callback, context)."""
    from contextlib import nullcontext

    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

    console = Console(file=sys.stderr, highlight=False)
    if not enabled or not console.is_terminal:
        return None, nullcontext()
    bar = Progress(TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(), TimeElapsedColumn(),
                   console=console, transient=True)
    task = bar.add_task("ranking", total=1)

    def update(done: int, total: int, what: str) -> None:
        bar.update(task, completed=done, total=max(total, 1), description=f"ranking: {what}"[:48])

    return update, bar


def run(args: argparse.Namespace) -> int:
    """Rank, print, and write the report and the plot that were asked for."""
    from ..design.executors import describe, executor_for
    from ..design.rank import RankRequest, rank
    from ..design.spec import load_spec
    from ..render.files import check_destination

    if args.plot:
        check_destination(args.plot, _PLOT_SUFFIXES, "--plot")  # before any work
    if args.markdown:
        check_destination(args.markdown, (".md", ".markdown"), "--markdown")
    spec = load_spec(args.spec)
    request = RankRequest(tuple(args.library), tuple(args.only), args.samples, args.seed)
    callback, context = _progress(not args.json)
    with executor_for(args.workers, args.scheduler) as executor, context:
        ranking = rank(spec, request, executor, callback, describe(args.workers, args.scheduler))
    if args.plot:
        from ..render.files import write_figure
        from ..render.tradeoff import tradeoff_plot

        write_figure(args.plot, lambda temporary, kind: tradeoff_plot(ranking, temporary, kind))
    if args.markdown:
        from ..render.files import write_text
        from ..render.rank_report import rank_markdown

        write_text(args.markdown, rank_markdown(ranking), "--markdown")
    if args.json:
        from ..render.rank import rank_record
        from .common import print_json

        print_json(rank_record(ranking))
    else:
        from ..render.rank import rank_renderables
        from .common import print_renderables

        print_renderables(rank_renderables(ranking))
    if ranking.best is None:  # the analysis found no answer: say so in the one error line, as every command does
        print(f"{args.spec}: {ranking.verdict}", file=sys.stderr)
        return 1
    return 0
