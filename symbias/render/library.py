"""Terminal rendering of the topology library: the listing table and one topology in full.

Renderer (library rows, topology description -> rich renderables).

Examples
--------
>>> from symbias.pipeline.topologies import listing, describe
>>> rows = listing(family="current-source")
>>> "bjt-widlar-source" in render_to_string(listing_table(rows), width=200)
True
"""

from __future__ import annotations

from typing import Any

from .console import CAUTION, escaped, render_to_string
from .text import formula_panel

__all__ = ["listing_table", "topology_renderables", "render_to_string"]


def listing_table(rows) -> Any:
    """One row per topology: identifier, title, family, devices, headroom, output resistance."""
    from rich.table import Table

    table = Table(title=f"symbias topology library ({len(rows)} topologies)", show_lines=False)
    for column in ("identifier", "title", "family", "devices", "headroom", "Rout"):
        table.add_column(column, overflow="fold")
    for row in rows:
        t = row.topology
        headroom = t.headroom.get("output") or (f"supply >= {t.headroom['supply']}" if "supply" in t.headroom else "")
        table.add_row(*(escaped(cell) for cell in (t.id, t.title, t.family, row.devices, headroom, row.rout)))
    return table


def topology_renderables(description) -> list[Any]:
    """Title, description, netlist, roles, variables, derived formulas, published forms, references."""
    from rich.panel import Panel
    from rich.table import Table
    from rich.text import Text

    topology = description.topology
    out: list[Any] = [
        Text.assemble((topology.title, "bold"), f"  [{topology.id}]  {topology.family}, {topology.technology}"),
        Text(topology.description),
        Panel(Text(topology.netlist.rstrip()), title="netlist", expand=False),
    ]
    roles = Table(title="roles", show_header=False, box=None)
    for key, value in topology.roles.items():
        roles.add_row(escaped(key), escaped(", ".join(value) if isinstance(value, (list, tuple)) else value))
    for key, value in topology.headroom.items():
        roles.add_row(escaped(f"headroom ({key})"), escaped(value))
    out.append(roles)
    if topology.variables:
        variables = Table(title="design variables")
        for column in ("name", "default", "unit", "sizing rule"):
            variables.add_column(column, overflow="fold")
        for v in topology.variables:
            rule = v.rule + (f"  [{v.expr}]" if v.expr else "")
            variables.add_row(*(escaped(cell, None) for cell in (v.name, v.default, v.unit, rule.replace("**", "^"))))
        out.append(variables)
    if description.derivation is not None:
        for result, leading in zip(description.derivation.results, description.leading):
            if result.formula is None:
                out.append(Text(f"derived {result.quantity.kind.replace('_', ' ')}: infinite ({result.infinite})"))
                continue
            rows = []
            if leading is not None:
                rows.append(("leading order", f"{leading.text.replace('**', '^')}   (worst error "
                                              f"{100 * leading.error:.2g}% under: {'; '.join(leading.statements)})"))
            title = f"derived {result.formula.quantity.replace('_', ' ')}"
            out.append(formula_panel(result.formula, extra_rows=rows, title=title))
    if topology.formulas:
        out.append(Text("published forms (each checked against the derivation in the test suite):", style="bold"))
        for f in topology.formulas:
            out.append(Text.assemble(f"  {f.quantity} ({f.form}): ", (f.expr.replace("**", "^"), "bold"),
                                     f"\n    assuming {'; '.join(f.assumptions)}\n    source: {f.source}"))
    out.append(Text("references:", style="bold"))
    for ref in topology.references:
        out.append(Text("  " + ref.text))
    out.append(f"[dim]{CAUTION}[/dim]")
    return out
