"""``symbias show``: one library topology with its derived formulas.

Wires: identifier -> :func:`symbias.pipeline.topologies.describe` (exact
output resistance at the output role and the main transfer, with their
leading-order forms) -> :mod:`symbias.render.library` or one JSON object
(:func:`symbias.render.json.topology_record`: the library fields and
``derived``).

Examples
--------
>>> from symbias.cli import main
>>> main(["show", "bjt-wilson-mirror", "--json"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse

from ..render.console import CAUTION

__all__ = ["register", "run"]


def register(subparsers) -> None:
    """Add the ``show`` sub-command."""
    p = subparsers.add_parser(
        "show",
        help="one library topology: description, netlist, roles, references, derived formulas",
        description="Show a library topology and derive its output resistance and main transfer.",
        epilog=CAUTION,
    )
    p.add_argument("id", help="topology identifier (see 'symbias list') or a library .toml file")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--no-derive", action="store_true", help="skip the symbolic derivation")
    p.add_argument("--library", action="append", default=[], metavar="DIR", help="extra topology folder")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Print the topology as rich text or JSON."""
    from ..errors import LibraryError
    from ..pipeline import load_target
    from ..pipeline.topologies import describe
    from .common import print_json, print_renderables

    target = load_target(args.id, args.library)
    if target.topology is None:
        raise LibraryError("'show' needs a library topology (an identifier or a library .toml file)", args.id)
    description = describe(target.topology, derive_formulas=not args.no_derive)
    if args.json:
        from ..render.json import topology_record

        print_json(topology_record(description))
        return 0
    from ..render.library import topology_renderables

    print_renderables(topology_renderables(description))
    return 0
