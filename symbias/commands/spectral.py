"""Arguments shared by ``symbias frequency`` and ``symbias noise``: the band, the model, outputs and plots.

Not a command itself (it is not in :data:`symbias.commands.COMMANDS`).  It
only turns arguments into the pipeline's inputs and writes the chosen output
form; no analysis happens here.

Examples
--------
>>> hertz("10k"), hertz("1meg")
(10000.0, 1000000.0)
"""

from __future__ import annotations

import argparse
import sys
from dataclasses import replace
from typing import Any, Callable

__all__ = ["hertz", "add_band_arguments", "add_output_arguments", "add_approximation_arguments", "spectral_options",
           "check_plot", "emit"]

PLOT_SUFFIXES = (".png", ".svg", ".pdf")


def hertz(text: str) -> float:
    """A frequency argument in Hz (SPICE suffixes allowed), for argparse.

    Raises
    ------
    argparse.ArgumentTypeError
        For text that is not a positive number (argparse turns it into a usage error, exit 2).
    """
    from ..errors import SymbiasError
    from ..expressions import try_parse_number

    try:
        number = try_parse_number(text)
    except SymbiasError:
        number = None
    if number is None or not float(number) > 0 or float(number) == float("inf"):
        raise argparse.ArgumentTypeError(f"expects a positive frequency in Hz, got {text!r}")
    return float(number)


def add_band_arguments(parser, start: str, stop: str) -> None:
    """Add --from, --to and --points (per decade)."""
    parser.add_argument("--from", dest="start", type=hertz, default=hertz(start), metavar="F1",
                        help=f"first frequency in Hz (default {start})")
    parser.add_argument("--to", dest="stop", type=hertz, default=hertz(stop), metavar="F2",
                        help=f"last frequency in Hz (default {stop})")
    parser.add_argument("--points", type=int, default=20, metavar="N", help="frequencies per decade (default 20)")


def add_approximation_arguments(group, samples: int) -> None:
    """Add --approx and the statements, tolerance, samples and seed of the approximation."""
    group.add_argument("--assume", action="append", default=[], metavar="STATEMENT",
                       help='magnitude assumption, e.g. "cmu << cpi" (repeatable)')
    group.add_argument("--tolerance", type=float, default=0.10, metavar="REL",
                       help="largest accepted worst relative error (default 0.10)")
    group.add_argument("--samples", type=int, default=samples, metavar="N", help="random points of the error search")
    group.add_argument("--seed", type=int, default=0, help="seed of the random points")


def add_output_arguments(parser) -> None:
    """Add --format, --json and --plot."""
    parser.add_argument("--format", choices=("text", "json", "markdown"), default=None, help="output form (default text)")
    parser.add_argument("--json", action="store_true", help="same as --format json")
    parser.add_argument("--plot", metavar="FILE.png", help="write a plot (.png, .svg or .pdf; needs matplotlib)")
    parser.add_argument("--no-capacitances", action="store_true",
                        help="leave device capacitances out (on by default here)")


def spectral_options(args: argparse.Namespace):
    """The model options of the derive flags, with capacitances unless --no-capacitances."""
    from .derive import options_of

    return replace(options_of(args), capacitances=not args.no_capacitances)


def check_plot(args: argparse.Namespace) -> None:
    """Refuse an unwritable plot destination before any work."""
    if args.plot:
        from ..render.files import check_destination

        check_destination(args.plot, PLOT_SUFFIXES, "--plot")


def emit(args: argparse.Namespace, result: Any, renderers: dict[str, Callable[[Any], Any]],
         plot: Callable[[Any, Any, str], None]) -> None:
    """Write the plot (whole or not at all), then the chosen form on stdout."""
    from ..errors import UsageError
    from .common import print_json, print_renderables

    if args.plot:
        from ..render.files import write_figure

        write_figure(args.plot, lambda temporary, kind: plot(result, temporary, kind))
    form = "json" if args.json else (args.format or "text")
    if args.json and args.format not in (None, "json"):
        raise UsageError(f"choose one output form, got json and {args.format}", path="--format")
    if form == "json":
        print_json(renderers["json"](result))
    elif form == "markdown":
        sys.stdout.write(renderers["markdown"](result) + "\n")
    else:
        print_renderables(renderers["text"](result))
