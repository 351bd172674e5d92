"""``symbias list``: the topology library, one line per circuit.

Wires: arguments -> :func:`symbias.pipeline.topologies.listing` ->
:mod:`symbias.render.library` (a rich table) or JSON (a list of objects with
``id``, ``title``, ``family``, ``technology``, ``devices``, ``headroom``,
``rout``, ``roles``, ``path``).

Examples
--------
>>> from symbias.cli import main
>>> main(["list", "--family", "reference"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse

from ..render.console import CAUTION

__all__ = ["register", "run"]

def register(subparsers) -> None:
    """Add the ``list`` sub-command."""
    from ..library import FAMILIES, TECHNOLOGIES

    p = subparsers.add_parser(
        "list",
        help="list the topology library (current sources, mirrors, references)",
        description="List the topologies of the library and of any extra library folders.",
        epilog=f"Extra folders: --library DIR or the environment variable SYMBIAS_LIBRARY. {CAUTION}",
    )
    p.add_argument("--family", choices=FAMILIES, help="only this family")
    p.add_argument("--tech", choices=TECHNOLOGIES, help="only this technology")
    p.add_argument("--json", action="store_true", help="print a JSON list of objects")
    p.add_argument("--library", action="append", default=[], metavar="DIR", help="extra topology folder")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Print the table or the JSON list."""
    from ..pipeline.topologies import listing
    from .common import print_json, print_renderables

    rows = listing(args.family, args.tech, args.library)
    if args.json:
        from ..render.json import listing_record

        print_json([listing_record(row) for row in rows])
        return 0
    from ..render.library import listing_table

    print_renderables([listing_table(rows), f"[dim]{CAUTION}[/dim]"])
    return 0
