"""``symbias deck``: a SPICE deck of a circuit, ready for the sign-off simulation.

Wires: arguments -> :func:`symbias.pipeline.decks.signoff_deck` -> stdout or
a file written whole (nothing is written on error).

Examples
--------
>>> from symbias.cli import main
>>> main(["deck", "examples/simple_mirror.cir"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse
import sys

from .common import add_corner_argument, add_design_arguments, add_target_argument

__all__ = ["register", "run"]


def register(subparsers) -> None:
    """Add the ``deck`` sub-command."""
    p = subparsers.add_parser(
        "deck",
        help="write a SPICE deck (numbers and models filled in) for the sign-off simulation",
        description="Write a circuit as a SPICE deck: free symbols replaced by numbers, the netlist's own "
        "model cards and .include/.lib lines as written (process-file parameters a card leaves out added), "
        "flattened subcircuit elements under ngspice's own names, tight tolerances, an operating-point "
        "control block and a header saying what was assumed.",
        epilog="Sign-off rests on your foundry's models in your simulator, and on measurement.",
    )
    add_target_argument(p)
    add_design_arguments(p)
    add_corner_argument(p)
    p.add_argument("--guess", action="append", default=[], metavar="NODE=VOLTS",
                   help="starting voltage of a node, written as .nodeset (to land on one of several states)")
    p.add_argument("--analysis", choices=("op", "none"), default="op",
                   help="control block to include (default: operating point, print all)")
    p.add_argument("--output", "-o", metavar="FILE", help="write the deck to FILE instead of stdout")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Build the whole deck first, then print or write it."""
    from ..pipeline.decks import signoff_deck
    from ..render.files import check_destination, write_text
    from .common import inputs_of, target_of

    if args.output:
        check_destination(args.output, option="--output")
    target = target_of(args)
    text = signoff_deck(target, inputs_of(args, target), args.analysis)
    if args.output:
        write_text(args.output, text, "--output")
    else:
        sys.stdout.write(text)
    return 0
