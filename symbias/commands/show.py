"""``symbias show``: one library topology with its derived formulas.

Wires: identifier -> :func:`symbias.library.find_topology` -> the engine
(:mod:`symbias.analyses`: exact output resistance at the output role and the
main transfer, see :meth:`~symbias.library.Topology.transfer`) -> leading-order
forms (:mod:`symbias.approx`) -> rich text or one JSON object.

The JSON object holds the library fields (``id``, ``title``, ``family``,
``technology``, ``description``, ``references``, ``netlist``, ``roles``,
``headroom``, ``variables``, ``formulas``: the published forms) and
``derived``: one record per derived quantity with ``exact`` (a string that
``sympy.parse_expr`` reads back), ``symbols``, ``options``, ``assumptions`` and
``leading_order`` (``expr``, ``error``, ``assumptions``; null when not
available).

Examples
--------
>>> from symbias.cli import main
>>> main(["show", "bjt-wilson-mirror", "--json"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse
import json
import sys
from dataclasses import asdict
from typing import Any

__all__ = ["register", "run", "derive_topology", "show_record"]

_DESIGN_AID = ("Design aid: sign-off needs full simulation and measurement; high-voltage or safety-relevant "
               "circuits follow local codes and licensed practice.")


def register(subparsers) -> None:
    """Add the ``show`` sub-command."""
    p = subparsers.add_parser(
        "show",
        help="one library topology: description, netlist, roles, references, derived formulas",
        description="Show a library topology and derive its output resistance and main transfer.",
        epilog=_DESIGN_AID,
    )
    p.add_argument("id", help="topology identifier (see 'symbias list') or a library .toml file")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--no-derive", action="store_true", help="skip the symbolic derivation")
    p.add_argument("--library", action="append", default=[], metavar="DIR", help="extra topology folder")
    p.set_defaults(func=run)


def derive_topology(topology, circuit=None) -> list[tuple[str, Any]]:
    """The exact output resistance and main transfer as ``(role, Formula)`` pairs.

    Uses the topology's small-signal options.

    Examples
    --------
    >>> from symbias.library import find_topology
    >>> [(role, f.quantity) for role, f in derive_topology(find_topology("bjt-simple-mirror"))]
    [('rout', 'output_resistance'), ('transfer', 'current_gain')]
    """
    from ..analyses import QUANTITIES, output_resistance

    circuit = circuit if circuit is not None else topology.circuit()
    options = topology.small_signal_options()
    out = [("rout", output_resistance(circuit, topology.roles["output"], options))]
    transfer = topology.transfer(circuit)
    if transfer is not None:
        quantity, output, source = transfer
        out.append(("transfer", QUANTITIES[quantity][0](circuit, output, source, options)))
    return out


def _leading_order(formula) -> dict[str, Any] | None:
    """Dominant-term form from :mod:`symbias.approx`, or None when that step is unavailable, fails or
    keeps every term."""
    try:
        from ..approx import approximate
    except ImportError:  # the approximation step is optional here
        return None
    from ..errors import SymbiasError

    try:
        approx = approximate(formula)
    except (SymbiasError, ValueError, ArithmeticError):
        return None
    (kept_num, all_num), (kept_den, all_den) = approx.kept
    if (kept_num, kept_den) == (all_num, all_den):
        return None  # no shorter form meets the tolerance: the exact form is the leading order
    return {"expr": str(approx.expr), "error": float(approx.error), "assumptions": list(approx.statements)}


def show_record(topology, derived: list[tuple[str, Any]] | None = None) -> dict[str, Any]:
    """The JSON object of ``symbias show``, from the topology and its derived formulas.

    Parameters
    ----------
    topology : Topology
    derived : list of (role, Formula), optional
        From :func:`derive_topology`; None leaves ``derived`` empty.

    Examples
    --------
    >>> from symbias.library import find_topology
    >>> record = show_record(find_topology("mos-cascode-mirror"))
    >>> record["roles"]["output"], record["roles"]["input"], record["derived"]
    ('Vout', 'Iref', [])
    """
    record = topology.to_dict()
    record["derived"] = []
    if not derived:
        return record
    from ..render.json import formula_record

    options = asdict(topology.small_signal_options())
    options = {k: list(v) if isinstance(v, tuple) else v for k, v in options.items()}
    for role, formula in derived:
        record["derived"].append({"role": role, **formula_record(formula), "options": options,
                                  "leading_order": _leading_order(formula)})
    return record


def _load(args: argparse.Namespace):
    from ..errors import LibraryError
    from ..library import resolve

    _, topology = resolve(args.id, extra_dirs=args.library)
    if topology is None:
        raise LibraryError("'show' needs a library topology (an identifier or a library .toml file)", args.id)
    return topology


def run(args: argparse.Namespace) -> int:
    """Print the topology as rich text or JSON."""
    topology = _load(args)
    derived = [] if args.no_derive else derive_topology(topology)
    record = show_record(topology, derived)
    if args.json:
        print(json.dumps(record, indent=2, default=str))
        return 0
    from ..render.text import terminal_console

    console = terminal_console()
    for renderable in _renderables(topology, record, [f for _, f in derived]):
        console.print(renderable)
    console.print(f"[dim]{_DESIGN_AID}[/dim]")
    return 0


def _renderables(topology, record: dict[str, Any], formulas: list[Any]) -> list[Any]:
    from rich.panel import Panel
    from rich.table import Table
    from rich.text import Text

    out: list[Any] = [
        Text.assemble((topology.title, "bold"), f"  [{topology.id}]  {topology.family}, {topology.technology}"),
        Text(topology.description),
        Panel(Text(topology.netlist.rstrip()), title="netlist", expand=False),
    ]
    roles = Table(title="roles", show_header=False, box=None)
    for key, value in record["roles"].items():
        roles.add_row(key, ", ".join(value) if isinstance(value, list) else value)
    for key, value in record["headroom"].items():
        roles.add_row(f"headroom ({key})", value)
    out.append(roles)
    if topology.variables:
        variables = Table(title="design variables")
        for column in ("name", "default", "unit", "sizing rule"):
            variables.add_column(column, overflow="fold")
        for v in topology.variables:
            variables.add_row(v.name, v.default, v.unit, v.rule + (f"  [{v.expr}]" if v.expr else ""))
        out.append(variables)
    for entry, formula in zip(record["derived"], formulas):
        out.append(_derived_panel(entry, formula))
    if topology.formulas:
        out.append(Text("published forms (each checked against the derivation in the test suite):", style="bold"))
        for f in topology.formulas:
            out.append(Text.assemble(f"  {f.quantity} ({f.form}): ", (f.expr.replace("**", "^"), "bold"),
                                     f"\n    assuming {'; '.join(f.assumptions)}\n    source: {f.source}"))
    out.append(Text("references:", style="bold"))
    for ref in topology.references:
        out.append(Text("  " + ref.text))
    return out


def _derived_panel(entry: dict[str, Any], formula):
    from ..render.text import formula_panel

    rows = []
    leading = entry.get("leading_order")
    if leading:
        rows.append(("leading order", f"{leading['expr'].replace('**', '^')}   (worst error "
                                      f"{100 * leading['error']:.2g}% under: {'; '.join(leading['assumptions'])})"))
    return formula_panel(formula, extra_rows=rows, title=f"derived {entry['quantity'].replace('_', ' ')}")
