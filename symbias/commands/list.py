"""``symbias list``: the topologies of the library as a table or JSON.

Wires: library folders -> :func:`symbias.library.load_library` -> a rich
table (identifier, title, family, devices, headroom form, Rout form) or a
JSON list of objects.

Examples
--------
>>> from symbias.cli import main
>>> main(["list", "--family", "reference", "--json"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse
import json
import sys
from collections import Counter

from ..library import FAMILIES, TECHNOLOGIES

__all__ = ["register", "run", "summary", "device_summary", "rout_form"]

_DESIGN_AID = "Library formulas are design aids: sign-off needs full simulation and measurement."


def register(subparsers) -> None:
    """Add the ``list`` sub-command."""
    p = subparsers.add_parser(
        "list",
        help="list the topology library (current sources, mirrors, references)",
        description="List the topologies of the library and of any extra library folders.",
        epilog=f"Extra folders: --library DIR or the environment variable SYMBIAS_LIBRARY. {_DESIGN_AID}",
    )
    p.add_argument("--family", choices=FAMILIES, help="only this family")
    p.add_argument("--tech", choices=TECHNOLOGIES, help="only this technology")
    p.add_argument("--json", action="store_true", help="print a JSON list of objects")
    p.add_argument("--library", action="append", default=[], metavar="DIR", help="extra topology folder")
    p.set_defaults(func=run)


def device_summary(circuit) -> str:
    """Device count by model type, e.g. ``"3 npn, 2 pnp"``.

    Examples
    --------
    >>> from symbias.library import find_topology
    >>> device_summary(find_topology("bjt-ptat-source").circuit())
    '2 npn, 3 pnp'
    """
    counts = Counter(circuit.model_of(d).type for d in circuit.devices)
    return ", ".join(f"{n} {kind}" for kind, n in sorted(counts.items()))


def rout_form(topology) -> str:
    """The library's output-resistance formula, leading-order form preferred, or ``""``.

    Examples
    --------
    >>> from symbias.library import find_topology
    >>> rout_form(find_topology("bjt-wilson-mirror"))
    'beta*ro/2'
    """
    formulas = topology.formulas_for("output_resistance")
    leading = [f for f in formulas if f.form == "leading-order"]
    chosen = (leading or list(formulas))[:1]
    return chosen[0].expr if chosen else ""


def summary(topology) -> dict:
    """The JSON object of one topology in the listing.

    Examples
    --------
    >>> from symbias.library import find_topology
    >>> summary(find_topology("mos-simple-mirror"))["headroom"]["output"]
    'Vov'
    """
    circuit = topology.circuit()
    return {
        "id": topology.id,
        "title": topology.title,
        "family": topology.family,
        "technology": topology.technology,
        "devices": device_summary(circuit),
        "headroom": dict(topology.headroom),
        "rout": rout_form(topology),
        "roles": {k: list(v) if isinstance(v, tuple) else v for k, v in topology.roles.items()},
        "path": topology.path,
    }


def run(args: argparse.Namespace) -> int:
    """Print the table or the JSON list."""
    from ..library import load_library

    library = load_library(extra_dirs=args.library)
    chosen = [t for t in library.values()
              if (args.family is None or t.family == args.family) and (args.tech is None or t.technology == args.tech)]
    chosen.sort(key=lambda t: (FAMILIES.index(t.family), t.technology, t.id))
    rows = [summary(t) for t in chosen]
    if args.json:
        print(json.dumps(rows, indent=2))
        return 0
    from ..render.text import terminal_console
    from rich.table import Table

    table = Table(title=f"symbias topology library ({len(rows)} topologies)", show_lines=False)
    for column in ("identifier", "title", "family", "devices", "headroom", "Rout"):
        table.add_column(column, overflow="fold")
    for row in rows:
        headroom = row["headroom"].get("output") or (
            f"supply >= {row['headroom']['supply']}" if "supply" in row["headroom"] else "")
        table.add_row(row["id"], row["title"], row["family"], row["devices"], headroom, row["rout"])
    console = terminal_console()
    console.print(table)
    console.print(f"[dim]{_DESIGN_AID}[/dim]")
    return 0
