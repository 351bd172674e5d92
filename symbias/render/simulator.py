"""Terminal and JSON forms of the simulator's results: operating points over corners, the model check.

Renderer (:class:`~symbias.pipeline.corners.CornerPoints` and
:class:`~symbias.simulator.compare.ModelComparison` -> rich renderables or
plain JSON-ready dicts).  A table over corners has one column per corner;
the model check lists, per device, the built-in models' value beside the
simulator's and their relative difference.

Examples
--------
>>> from symbias.pipeline import load_target, design_inputs, corner_points
>>> target = load_target("examples/simple_mirror.cir")
>>> table = corner_table(corner_points(target, design_inputs(target)))
>>> "Q2" in render_to_string(table, width=120)
True
"""

from __future__ import annotations

import math
from typing import Any

from .console import CAUTION, engineering, escaped, render_to_string

__all__ = ["corner_table", "corner_renderables", "corner_record", "model_check_renderables", "model_check_record",
           "source_text", "render_to_string"]

#: Units of the small-signal values shown.
_UNITS = {"gm": "S", "gmb": "S", "rpi": "\u03a9", "ro": "\u03a9", "rmu": "\u03a9", "rb": "\u03a9", "re": "\u03a9",
          "rd": "\u03a9", "beta": "", "cpi": "F", "cmu": "F", "ccs": "F", "cgs": "F", "cgd": "F", "cdb": "F",
          "csb": "F", "cj": "F"}


def source_text(models: str, corner: str | None = None) -> str:
    """Where the values come from, in words.

    Examples
    --------
    >>> source_text("ngspice", "ff")
    "ngspice with the netlist's model cards, .lib section ff"
    """
    text = "ngspice with the netlist's model cards" if models == "ngspice" else "symbias's built-in device models"
    return text + (f", .lib section {corner}" if corner else "")


def _corner_rows(points) -> list[tuple[str, list[str]]]:
    ops = [op for _, op in points.points]
    first = ops[0]
    rows = [(f"V({node})", [f"{op.node_voltages.get(node, math.nan):.6f}" for op in ops])
            for node in first.node_voltages if node != "0"]
    for name in {**first.branch_currents, **first.element_currents}:
        rows.append((f"I({name})", [engineering(op.current(name), "A") for op in ops]))
    for name, device in first.devices.items():
        rows.append((f"{name} region", [op.devices[name].region for op in ops]))
        rows.append((f"{name} {'IC' if device.kind == 'Q' else 'ID'}",
                     [engineering(op.devices[name].output_current, "A") for op in ops]))
        for key in device.small_signal:
            rows.append((f"{name} {key}", [engineering(op.devices[name].small_signal.get(key, math.nan),
                                                       _UNITS.get(key, "")) for op in ops]))
    return rows


def corner_table(points) -> Any:
    """One rich table: a row per value, a column per corner."""
    from rich.table import Table

    table = Table(title=f"Operating point by corner at {points.temperature:g} degC", title_justify="left")
    table.add_column("value", no_wrap=True)
    for corner, _ in points.points:
        table.add_column(corner or "as written", justify="right", no_wrap=True)
    for label, cells in _corner_rows(points):
        table.add_row(escaped(label), *cells)
    return table


def corner_renderables(target, points) -> list[Any]:
    """Header, the table over corners and the caution."""
    header = f"[bold]{target.title}[/bold]  ({target.where}, {source_text(points.models)})"
    return [header, corner_table(points), f"[dim]{CAUTION}[/dim]"]


def corner_record(target, points) -> dict[str, Any]:
    """The JSON object of ``symbias bias`` with several corners: ``corners`` maps each to its operating point."""
    return {"circuit": target.title, "source": target.circuit.path, "models": points.models,
            "temperature": points.temperature,
            "corners": {corner or "as written": op.to_dict() for corner, op in points.points}}


def _relative_text(value: float) -> str:
    return "-" if not math.isfinite(value) else f"{100 * value:+.3g} %"


def model_check_renderables(target, checks) -> list[Any]:
    """Per corner, a table of every value from the built-in models and from ngspice, with their difference."""
    from rich.table import Table

    out: list[Any] = [f"[bold]{target.title}[/bold]  ({target.where}): built-in models beside ngspice "
                      "(difference relative to ngspice)"]
    for check in checks:
        where = f", .lib section {check.corner}" if check.corner else ""
        table = Table(title=f"Model check at {check.temperature:g} degC{where}", title_justify="left")
        for column in ("device", "value", "built-in", "ngspice", "difference"):
            table.add_column(column, justify="left" if column in ("device", "value") else "right", no_wrap=True)
        for row in check.rows:
            unit = "V" if row.item == "node" else ("A" if row.unit == "A" else _UNITS.get(row.quantity, ""))
            show = (lambda v: f"{v:.6f}") if row.item == "node" else (lambda v: engineering(v, unit))
            table.add_row(escaped(row.item), row.quantity, show(row.built_in), show(row.simulator), _relative_text(row.relative))
        out.append(table)
        if check.largest is not None:
            worst = check.largest
            out.append(f"largest difference: {worst.quantity} of {worst.item}, {_relative_text(worst.relative)}")
    out.append("[dim]The simulator's models, not symbias's, are what sign-off rests on.[/dim]")
    return out


def model_check_record(target, checks) -> dict[str, Any]:
    """The JSON object of ``symbias bias --compare-models``: one comparison per corner."""
    return {"circuit": target.title, "source": target.circuit.path,
            "comparisons": [check.to_dict() for check in checks]}
