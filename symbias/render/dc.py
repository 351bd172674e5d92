"""Terminal rendering of the DC side with rich: operating points, every DC state, sweep metrics.

Renderer (operating point, states, sweep result -> rich renderables).  Every
column and metric carries its unit; devices get one table per kind, with the
columns their model lists (:meth:`~symbias.dc.results.DeviceOperatingPoint.table`);
currents say which way they count (:mod:`symbias.conventions`).

Examples
--------
>>> from symbias.pipeline import load_target, design_inputs, operating_point_of
>>> target = load_target("examples/simple_mirror.cir")
>>> tables = operating_point_tables(operating_point_of(target, design_inputs(target)), target.circuit)
>>> text = render_to_string(tables[-1], width=140)
>>> "Q2" in text and "VBE [V]" in text and "rpi [ohm]" in text
True
"""

from __future__ import annotations

import math
from typing import Any

from .console import CAUTION, engineering, escaped, render_to_string

__all__ = ["operating_point_tables", "operating_point_renderables", "states_renderables", "state_lines",
           "sweep_renderables", "points_table", "render_to_string"]


def _cell(value: float, unit: str) -> str:
    """A number for a column whose header carries the unit: volts fixed, the rest with an SI prefix."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    if unit == "V":
        return f"{value:.4f}"
    return engineering(value)


def device_tables(op) -> list[Any]:
    """One rich table per device kind, with that kind's own columns and units."""
    from rich.table import Table
    from rich.text import Text

    kinds: dict[str, list] = {}
    for dev in op.devices.values():
        kinds.setdefault(dev.kind, []).append(dev)
    tables = []
    for devices in kinds.values():
        first = devices[0]
        names = {"Q": "Bipolar transistors", "M": "MOS transistors", "D": "Diodes"}
        table = Table(title=f"{names.get(first.kind, first.kind + ' devices')} at {op.temperature:g} degC",
                      title_justify="left")
        for column in ("device", "type", "region"):
            table.add_column(column, no_wrap=True)
        for label, _, unit in first.table():
            table.add_column(Text(f"{label} [{unit}]"), justify="right", no_wrap=True)
        for dev in devices:
            table.add_row(escaped(dev.name), dev.type, dev.region, *(_cell(value, unit) for _, value, unit in dev.table()))
        tables.append(table)
    return tables


def operating_point_tables(op, circuit=None) -> list[Any]:
    """Rich tables of an operating point: node voltages, currents (output currents signed as
    :mod:`symbias.conventions` says, given the circuit), one table per device kind."""
    from rich.table import Table
    from rich.text import Text

    from ..conventions import SPICE_BRANCH, output_currents

    nodes = Table(title="Node voltages", title_justify="left")
    nodes.add_column("node")
    nodes.add_column(Text("V [V]"), justify="right")
    for node, value in op.node_voltages.items():
        if node != "0":
            nodes.add_row(Text(node), f"{value:.6f}")
    currents = Table(title="Currents", title_justify="left")
    currents.add_column("element")
    currents.add_column(Text("I [A]"), justify="right")
    currents.add_column("sign")
    for name, value in op.branch_currents.items():
        currents.add_row(Text(name), engineering(value), SPICE_BRANCH)
    for name, value in op.element_currents.items():
        currents.add_row(Text(name), engineering(value), "from the first node to the second")
    out: list[Any] = [nodes, currents]
    rows = output_currents(circuit, op.branch_currents) if circuit is not None else []
    if rows:
        table = Table(title="Output currents", title_justify="left")
        for column, justify in (("output", "left"), (Text("I [A]"), "right"), ("sign", "left")):
            table.add_column(column, justify=justify)
        for current, value in rows:
            table.add_row(Text(current.label), engineering(value), Text(f"positive: {current.meaning}"))
        out.append(table)
    return out + device_tables(op)


def state_lines(states) -> list[str]:
    """Lines (rich markup) saying which DC state is reported, which others exist, and whether start-up is needed."""
    if states is None:
        return []
    chosen = states.chosen_state
    if not states.several:
        return [f"[dim]DC states: one found from {states.found.tried} starts.[/dim]"]
    lines = [f"[bold]DC states: {len(states.states)} found[/bold] ({states.found.tried} starts); reported: the "
             f"{states.reason}, transistor current {engineering(chosen.device_current, 'A')}."]
    for number, state in enumerate(states.states, start=1):
        if state is chosen:
            continue
        kind = "zero-current" if state.zero_current else "conducting"
        held = ", held only by leakage" if not state.exact else ""
        lines.append(f"  other state {number}: {kind}{held}, transistor current "
                     f"{engineering(state.device_current, 'A')}, supply current "
                     f"{engineering(state.supply_current, 'A')}")
    if states.needs_startup:
        lines.append("[bold red]A zero-current state exists: the circuit needs a start-up circuit.[/bold red]")
    elif states.reason == "no conducting state":
        lines.append("[bold red]Every state found is a zero-current one.[/bold red]")
    return lines


def operating_point_renderables(target, op) -> list[Any]:
    """Header, the states found, the tables and the caution."""
    steps = f", {op.iterations} iterations" if op.method != "ngspice" else " with the netlist's model cards"
    header = (f"[bold]{escaped(target.title)}[/bold]  ({escaped(target.where)}, {op.temperature:g} degC, "
              f"{op.method}{steps})")
    return [header, *state_lines(op.states), *operating_point_tables(op, target.circuit), f"[dim]{CAUTION}[/dim]"]


def states_renderables(target, found, temperature: float) -> list[Any]:
    """Every DC state with its tables; a zero-current state flagged as needing start-up."""
    out: list[Any] = [f"[bold]{escaped(target.title)}[/bold]: {len(found.states)} DC solution(s) at "
                      f"{temperature:g} degC"]
    for i, state in enumerate(found.states, start=1):
        flag = "  [bold red]zero-current state: needs a start-up circuit[/bold red]" if state.zero_current else ""
        out.append(f"\n[bold]Solution {i}[/bold]: supply current {engineering(state.supply_current, 'A')}, "
                   f"transistor current {engineering(state.device_current, 'A')}{flag}")
        out.extend(operating_point_tables(state.point, target.circuit))
    if found.needs_startup:
        out.append("[bold red]A zero-current state exists: the circuit needs a start-up circuit.[/bold red]")
    out.append(f"[dim]{CAUTION}[/dim]")
    return out


def _metric_text(value: Any) -> str:
    if value is None:
        return "-"
    return f"{value:.6g}" if isinstance(value, float) else str(value)


def points_table(result) -> Any:
    """A plain table of the swept points: the swept value and the output, each with its unit."""
    from rich.table import Table
    from rich.text import Text

    sweep = result.sweep
    table = Table(title="Sweep points", title_justify="left")
    table.add_column(Text(f"{sweep.variable} [{result.swept_unit}]"), justify="right")
    table.add_column(Text(f"{result.output} [{result.output_unit}]"), justify="right")
    for value, output in zip(sweep.values, result.values):
        table.add_row(f"{value:.6g}", f"{output:.6g}")
    return table


def _branch_lines(result) -> list[str]:
    branch = result.branch
    lines = state_lines(branch.states)
    if branch.note:
        lines.append(f"[bold yellow]{branch.note}[/bold yellow]")
    unit = result.swept_unit
    for first, last in branch.lost:
        where = f"{first:g} {unit}" if first == last else f"{first:g} .. {last:g} {unit}"
        lines.append(f"[bold red]Off the conducting state at {result.sweep.variable} = {where}[/bold red] (total "
                     f"transistor current below 1e-3 of the conducting state's); the metrics include those points.")
    return lines


def sweep_renderables(target, result, table: bool = False) -> list[Any]:
    """What was swept, the states and branch, a table of the metrics with units, optionally the points."""
    from rich.table import Table
    from rich.text import Text

    from ..pipeline.sweeps import METRICS

    sweep = result.sweep
    header = Text.assemble((target.title, "bold"), f": {result.output} [{result.output_unit}] over {sweep.variable} = "
                           f"{sweep.values[0]:g} .. {sweep.values[-1]:g} {result.swept_unit} ({len(sweep.values)} "
                           f"points)\n  {result.output}: {result.output_meaning}")
    metrics = Table(title=f"{result.kind} metrics", title_justify="left")
    metrics.add_column("metric")
    metrics.add_column("value", justify="right")
    metrics.add_column("unit")
    units = result.units()
    for key, value in result.metrics.to_dict().items():
        label = METRICS[result.kind].get(key, (key, ""))[0]
        metrics.add_row(escaped(label if label == key else f"{label} ({key})"), escaped(_metric_text(value)),
                        escaped(units.get(key, "")))
    out: list[Any] = [header, *_branch_lines(result), metrics]
    if table:
        out.append(points_table(result))
    return out + [f"[dim]{CAUTION}[/dim]"]
