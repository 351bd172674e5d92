"""``symbias deck``: a SPICE deck of a circuit, ready for the sign-off simulation.

Wires: read (netlist file or library id) -> numbers for free symbols (library
defaults, ``--set``) -> models resolved from the process file -> deck text.
The deck uses the same model mapping as the ngspice checks (docs/dc.md):
Gummel-Poon reduced to Ebers-Moll with Early effect for bipolar devices, level 1
for MOS.  It is a starting point: sign-off uses the foundry's models.

Examples
--------
>>> from symbias.cli import main
>>> main(["deck", "examples/simple_mirror.cir"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from ..errors import NetlistError

__all__ = ["register", "run", "signoff_deck"]

#: Control blocks: "op" solves, prints every node voltage and source current, and
#: exits so ``ngspice -b deck.cir`` finishes with status 0; "none" leaves it empty.
_ANALYSES = {
    "op": "op\nprint all\nquit",
    "none": "",
}


def register(subparsers) -> None:
    """Add the ``deck`` sub-command."""
    from .dc_common import add_design_arguments

    p = subparsers.add_parser(
        "deck",
        help="write a SPICE deck (numbers and models filled in) for the sign-off simulation",
        description="Write a circuit as a SPICE deck: free symbols replaced by numbers, models resolved "
        "from the process file, an operating-point control block.",
        epilog="The deck maps models as the ngspice checks do (docs/dc.md); sign-off uses your foundry's "
        "models and measurement.",
    )
    p.add_argument("netlist", help="netlist file, or a topology identifier from the library")
    add_design_arguments(p)
    p.add_argument("--analysis", choices=tuple(_ANALYSES), default="op",
                   help="control block to include (default: operating point, print all)")
    p.add_argument("--output", "-o", metavar="FILE", help="write the deck to FILE instead of stdout")
    p.add_argument("--library", action="append", default=[], metavar="DIR", help="extra topology folder")
    p.set_defaults(func=run)


def signoff_deck(circuit, process=None, temperature: float = 27.0, values=None, analysis: str = "op") -> str:
    """Deck text of ``circuit`` with numbers, resolved models and a control block.

    Raises
    ------
    CircuitError
        When a free symbol has no number.
    """
    from ..dc.reference import reference_deck

    header = "* written by symbias: models mapped as in docs/dc.md; sign-off needs the foundry's models"
    text = reference_deck(circuit, process, temperature, values, control=_ANALYSES[analysis], options="")
    title, _, rest = text.partition("\n")
    return f"{title}\n{header}\n{rest}"


def run(args: argparse.Namespace) -> int:
    """Build the whole deck first, then print or write it (nothing is written on error)."""
    from .dc_common import design_inputs
    from .derive import load_target

    circuit, topology = load_target(args.netlist, args.library)
    values, process = design_inputs(args, topology)
    text = signoff_deck(circuit, process, args.temp, values, args.analysis)
    if args.output:
        try:
            Path(args.output).write_text(text, encoding="utf-8")
        except OSError as err:
            raise NetlistError(f"cannot write {args.output}: {err.strerror or err}") from None
    else:
        sys.stdout.write(text)
    return 0

