"""``symbias bias``: the DC operating point of a netlist.

Wires: netlist (+ process) -> :func:`symbias.dc.operating_point.operating_point`
-> a rich table, or one JSON object with ``node_voltages`` {node: V},
``branch_currents`` {voltage source: A, SPICE sign: positive into the +
terminal}, ``element_currents`` and ``devices`` {name: {type, region,
currents, voltages, small_signal, limits}}.  Infinite values (``ro`` without
an Early voltage) are written as ``null``.  With ``--all`` every DC solution
found from several starts is listed, and a zero-current one is flagged.

Examples
--------
>>> from symbias.cli import main
>>> main(["bias", "tests/decks/bjt_simple_mirror.cir", "--json"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse
import json
import sys

from ..render.text import engineering
from .dc_common import DESIGN_AID, add_dc_arguments, json_safe, load_inputs
from .dc_common import console as dc_console

__all__ = ["register", "run", "operating_point_table"]


def register(subparsers) -> None:
    """Add the ``bias`` sub-command."""
    p = subparsers.add_parser(
        "bias",
        help="DC operating point: node voltages, currents, device regions, gm/rpi/ro",
        description="Solve the DC operating point of a bias circuit.",
        epilog=DESIGN_AID,
    )
    add_dc_arguments(p)
    p.add_argument("--all", action="store_true",
                   help="search for every DC solution (several starts) and flag a zero-current state")
    p.set_defaults(func=run)


def operating_point_table(op):
    """Rich renderables for an operating point: nodes, sources, devices."""
    from rich.table import Table

    nodes = Table(title="Node voltages", title_justify="left")
    nodes.add_column("node")
    nodes.add_column("V", justify="right")
    for node, value in op.node_voltages.items():
        if node != "0":
            nodes.add_row(node, f"{value:.6f}")
    sources = Table(title="Branch currents (into the + terminal)", title_justify="left")
    sources.add_column("element")
    sources.add_column("I", justify="right")
    for name, value in {**op.branch_currents, **op.element_currents}.items():
        sources.add_row(name, engineering(value, "A"))
    devices = Table(title=f"Devices at {op.temperature:g} degC", title_justify="left")
    for column in ("device", "type", "region", "IC/ID", "VBE/VGS", "VCE/VDS", "gm", "rpi/gmb", "ro", "VCEsat/Vov"):
        devices.add_column(column, justify="left" if column in ("device", "type", "region") else "right",
                           no_wrap=True)
    for name, dev in op.devices.items():
        bjt = "c" in dev.currents
        v = dev.voltages
        s = dev.small_signal
        devices.add_row(
            name, dev.type, dev.region,
            engineering(dev.output_current, "A"),
            f"{(v['vbe'] if bjt else v['vgs']):.4f}",
            f"{(v['vce'] if bjt else v['vds']):.3f}",
            engineering(s["gm"], "S"),
            engineering(s["rpi"], "\u03a9") if bjt else engineering(s["gmb"], "S"),
            engineering(s["ro"], "\u03a9"),
            f"{(dev.limits['vcesat'] if bjt else dev.limits['vov']):.3f}",
        )
    return nodes, sources, devices


def run(args: argparse.Namespace) -> int:
    """Solve and print the operating point (or every solution with ``--all``)."""
    from ..dc.operating_point import operating_point

    circuit, process, values, guess = load_inputs(args)
    if args.all:
        return _run_all(args, circuit, process, values)
    op = operating_point(circuit, process, args.temp, values, guess=guess or None)
    if args.json:
        print(json.dumps(json_safe({"circuit": circuit.title, "source": circuit.path, **op.to_dict()}), indent=2))
        return 0
    console = dc_console()
    console.print(f"[bold]{circuit.title}[/bold]  ({circuit.path}, {op.temperature:g} degC, {op.method}, "
                  f"{op.iterations} iterations)")
    for table in operating_point_table(op):
        console.print(table)
    console.print(f"[dim]{DESIGN_AID}[/dim]")
    return 0


def _run_all(args: argparse.Namespace, circuit, process, values) -> int:
    from ..dc.solutions import find_solutions

    found = find_solutions(circuit, process, args.temp, values)
    if args.json:
        print(json.dumps(json_safe({"circuit": circuit.title, "source": circuit.path, **found.to_dict()}), indent=2))
        return 0
    console = dc_console()
    console.print(f"[bold]{circuit.title}[/bold]: {len(found.states)} DC solution(s) at {args.temp:g} degC")
    for i, state in enumerate(found.states, start=1):
        flag = "  [bold red]zero-current state: needs a start-up circuit[/bold red]" if state.zero_current else ""
        console.print(f"\n[bold]Solution {i}[/bold]: supply current {state.supply_current:.4g} A{flag}")
        for table in operating_point_table(state.point):
            console.print(table)
    if found.needs_startup:
        console.print("[bold red]A zero-current state exists: the circuit needs a start-up circuit.[/bold red]")
    console.print(f"[dim]{DESIGN_AID}[/dim]")
    return 0
