"""Terminal rendering of the DC side with rich: operating points, every DC state, sweep metrics.

Renderer (operating point, states, sweep result -> rich renderables).

Examples
--------
>>> from symbias.pipeline import load_target, design_inputs, operating_point_of
>>> target = load_target("examples/simple_mirror.cir")
>>> tables = operating_point_tables(operating_point_of(target, design_inputs(target)))
>>> "Q2" in render_to_string(tables[2], width=140)
True
"""

from __future__ import annotations

from typing import Any

from .console import CAUTION, engineering, escaped, render_to_string

__all__ = ["operating_point_tables", "operating_point_renderables", "states_renderables", "sweep_renderables",
           "render_to_string"]


def operating_point_tables(op) -> tuple[Any, Any, Any]:
    """Rich tables of an operating point: node voltages, source and element currents, devices."""
    from rich.table import Table

    nodes = Table(title="Node voltages", title_justify="left")
    nodes.add_column("node")
    nodes.add_column("V", justify="right")
    for node, value in op.node_voltages.items():
        if node != "0":
            nodes.add_row(escaped(node), f"{value:.6f}")
    sources = Table(title="Branch currents (into the + terminal)", title_justify="left")
    sources.add_column("element")
    sources.add_column("I", justify="right")
    for name, value in {**op.branch_currents, **op.element_currents}.items():
        sources.add_row(escaped(name), engineering(value, "A"))
    devices = Table(title=f"Devices at {op.temperature:g} degC", title_justify="left")
    for column in ("device", "type", "region", "IC/ID", "VBE/VGS", "VCE/VDS", "gm", "rpi/gmb", "ro", "VCEsat/Vov"):
        devices.add_column(column, justify="left" if column in ("device", "type", "region") else "right",
                           no_wrap=True)
    for name, dev in op.devices.items():
        bjt = "c" in dev.currents
        v = dev.voltages
        s = dev.small_signal
        devices.add_row(
            escaped(name), dev.type, dev.region,
            engineering(dev.output_current, "A"),
            _fixed(v.get("vbe" if bjt else "vgs"), 4),
            _fixed(v.get("vce" if bjt else "vds"), 3),
            engineering(s.get("gm"), "S"),
            engineering(s.get("rpi"), "\u03a9") if bjt else engineering(s.get("gmb"), "S"),
            engineering(s.get("ro"), "\u03a9"),
            _fixed(dev.limits.get("vcesat" if bjt else "vov"), 3),  # a device in cutoff may have none
        )
    return nodes, sources, devices


def _fixed(value, digits: int) -> str:
    """A voltage with ``digits`` decimals, or ``-`` when the device reports none."""
    return "-" if value is None else f"{value:.{digits}f}"


def operating_point_renderables(target, op) -> list[Any]:
    """Header, the three tables and the caution."""
    steps = f", {op.iterations} iterations" if op.method != "ngspice" else " with the netlist's model cards"
    header = (f"[bold]{escaped(target.title)}[/bold]  ({escaped(target.where)}, {op.temperature:g} degC, "
              f"{op.method}{steps})")
    return [header, *operating_point_tables(op), f"[dim]{CAUTION}[/dim]"]


def states_renderables(target, found, temperature: float) -> list[Any]:
    """Every DC state with its tables; a zero-current state flagged as needing start-up."""
    out: list[Any] = [f"[bold]{escaped(target.title)}[/bold]: {len(found.states)} DC solution(s) at "
                      f"{temperature:g} degC"]
    for i, state in enumerate(found.states, start=1):
        flag = "  [bold red]zero-current state: needs a start-up circuit[/bold red]" if state.zero_current else ""
        out.append(f"\n[bold]Solution {i}[/bold]: supply current {state.supply_current:.4g} A{flag}")
        out.extend(operating_point_tables(state.point))
    if found.needs_startup:
        out.append("[bold red]A zero-current state exists: the circuit needs a start-up circuit.[/bold red]")
    out.append(f"[dim]{CAUTION}[/dim]")
    return out


def sweep_renderables(target, result) -> list[Any]:
    """A line saying what was swept and a table of the metrics of its kind."""
    from rich.table import Table

    sweep = result.sweep
    unit = "degC" if result.kind == "temperature" else ("V" if sweep.variable[0].upper() == "V" else "A")
    header = (f"[bold]{escaped(target.title)}[/bold]: {escaped(result.output)} over {escaped(sweep.variable)} = "
              f"{sweep.values[0]:g} .. {sweep.values[-1]:g} {unit} ({len(sweep.values)} points)")
    table = Table(title=f"{result.kind} metrics", title_justify="left")
    table.add_column("metric")
    table.add_column("value", justify="right")
    for key, value in result.metrics.to_dict().items():
        shown = "-" if value is None else (f"{value:.6g}" if isinstance(value, float) else str(value))
        table.add_row(escaped(key), escaped(shown))
    return [header, table, f"[dim]{CAUTION}[/dim]"]
