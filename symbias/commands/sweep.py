"""``symbias sweep``: sweep an output voltage, the supply or the temperature, and report metrics.

Wires: arguments -> :func:`symbias.pipeline.run_sweep` -> a table
(:mod:`symbias.render.dc`, with ``--table`` the points too), JSON, and
optionally a plot (:mod:`symbias.render.plots`, matplotlib imported only for
``--plot``) and a CSV file of the points (:mod:`symbias.render.csv_table`).  See
:mod:`symbias.pipeline.sweeps` for the kinds of sweep and their metrics.

Examples
--------
>>> from symbias.cli import main
>>> main(["sweep", "tests/decks/bjt_simple_mirror.cir", "--vary", "Vout", "--from", "0", "--to", "5"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse
import sys

from ..render.console import CAUTION
from .common import add_dc_arguments

__all__ = ["register", "run"]

_PLOT_SUFFIXES = (".png", ".svg", ".pdf")


def register(subparsers) -> None:
    """Add the ``sweep`` sub-command."""
    p = subparsers.add_parser(
        "sweep",
        help="sweep Vout (compliance), the supply (line sensitivity) or temperature (TC)",
        description="Sweep one source or the temperature and report compliance, line sensitivity or TC.",
        epilog=CAUTION,
    )
    add_dc_arguments(p)
    p.add_argument("--vary", required=True, metavar="SOURCE|temp", help="a voltage or current source, or temp")
    p.add_argument("--from", dest="start", type=float, required=True, metavar="A", help="first value")
    p.add_argument("--to", dest="stop", type=float, required=True, metavar="B", help="last value")
    p.add_argument("--points", type=int, default=201, metavar="N", help="number of points (default 201)")
    p.add_argument("--out", metavar="PROBE", help="output: V(node) or I(element)")
    p.add_argument("--fraction", type=float, default=0.01,
                   help="compliance: departure of the output current that counts (default 0.01)")
    p.add_argument("--basis", choices=("tangent", "level"), default="tangent",
                   help="compliance: measure the departure from the tangent at mid-sweep or from its level")
    p.add_argument("--plot", metavar="FILE.png", help="write a plot (.png, .svg or .pdf; needs matplotlib)")
    p.add_argument("--csv", metavar="FILE.csv", help="write every point (swept value, output, node voltages, "
                   "branch currents, regions) as CSV")
    p.add_argument("--table", action="store_true", help="also print a table of the points")
    p.set_defaults(func=run)


def _progress(points: int):
    """A rich progress bar on stderr for long sweeps; returns (callback, context)."""
    from contextlib import nullcontext

    from rich.console import Console
    from rich.progress import Progress

    console = Console(file=sys.stderr, highlight=False)
    if points < 100 or not console.is_terminal:
        return None, nullcontext()
    bar = Progress(console=console, transient=True)
    task = bar.add_task("sweeping", total=points)
    return (lambda done, total: bar.update(task, completed=done)), bar


def run(args: argparse.Namespace) -> int:
    """Run the sweep, compute the metrics, print and plot (the plot written whole or not at all)."""
    from ..pipeline import SweepRequest, run_sweep
    from ..render.files import check_destination
    from .common import inputs_of, print_json, print_renderables, target_of

    if args.plot:
        check_destination(args.plot, _PLOT_SUFFIXES, "--plot")  # before any work
    if args.csv:
        check_destination(args.csv, (".csv",), "--csv")
    target = target_of(args)
    inputs = inputs_of(args, target)
    request = SweepRequest(args.vary, args.start, args.stop, args.points, args.out, args.fraction, args.basis)
    callback, context = _progress(args.points)
    with context:
        result = run_sweep(target, inputs, request, progress=callback)
    if args.plot:
        from ..render.files import write_figure
        from ..render.plots import sweep_plot

        write_figure(args.plot, lambda temporary, kind: sweep_plot(result, temporary, kind))
    if args.csv:
        from ..render.csv_table import sweep_csv
        from ..render.files import write_text

        write_text(args.csv, sweep_csv(result), "--csv")
    if args.json:
        from ..render.json import sweep_record

        print_json(sweep_record(target, result))
    else:
        from ..render.dc import sweep_renderables

        print_renderables(sweep_renderables(target, result, table=args.table))
    return 0
