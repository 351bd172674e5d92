"""Arguments and helpers shared by the DC commands (``bias``, ``sweep``).

Not a command itself: it is not in :data:`symbias.commands.COMMANDS`.

Examples
--------
>>> parse_assignments(["RE=1k", "vx=0.5"], "--set")
{'RE': 1000.0, 'vx': 0.5}
"""

from __future__ import annotations

import argparse
import math
from typing import Any

from ..errors import CircuitError

__all__ = ["add_dc_arguments", "add_design_arguments", "design_inputs", "parse_assignments", "load_inputs",
           "design_defaults", "json_safe", "console", "DESIGN_AID"]

DESIGN_AID = ("Design aid: sign-off needs full simulation and measurement; high-voltage or safety-relevant "
              "circuits follow local codes and licensed practice.")


def add_design_arguments(group) -> None:
    """Add --process, --temp and --set: what a circuit needs to become numbers."""
    group.add_argument("--process", "-p", metavar="FILE", help="process file (TOML); .model cards override it")
    group.add_argument("--temp", type=float, default=27.0, metavar="DEGC", help="temperature in degC (default 27)")
    group.add_argument("--set", action="append", default=[], metavar="NAME=VALUE",
                       help="number for a free symbol in the netlist (repeatable); library defaults otherwise")


def design_inputs(args: argparse.Namespace, topology) -> tuple[dict[str, float], object]:
    """(numbers for free symbols, process or None) from --set, library defaults and --process."""
    from ..process import load_process

    values = design_defaults(topology)
    values.update(parse_assignments(args.set, "--set"))
    return values, (load_process(args.process) if args.process else None)


def add_dc_arguments(parser: argparse.ArgumentParser) -> None:
    """Add the netlist, --process, --temp, --set, --guess and --json arguments."""
    parser.add_argument("netlist", help="netlist file (or a topology identifier from the library)")
    add_design_arguments(parser)
    parser.add_argument("--guess", action="append", default=[], metavar="NODE=VOLTS",
                        help="starting voltage of a node, to pick one of several solutions (repeatable)")
    parser.add_argument("--json", action="store_true", help="print one JSON object")


def parse_assignments(items: list[str], flag: str) -> dict[str, float]:
    """``["A=1k", ...]`` -> ``{"A": 1000.0}``; SPICE suffixes allowed.

    Raises
    ------
    CircuitError
        For an item without ``=`` or a value that is not a number.
    """
    from ..expressions import try_parse_number

    out: dict[str, float] = {}
    for item in items:
        name, sep, text = item.partition("=")
        number = try_parse_number(text) if sep else None
        if not name.strip() or number is None:
            raise CircuitError(f"{flag} expects NAME=NUMBER, got {item!r}")
        out[name.strip()] = float(number)
    return out


def load_inputs(args: argparse.Namespace):
    """(circuit, process or None, values, guess) from the common arguments."""
    from .derive import load_target

    circuit, topology = load_target(args.netlist, getattr(args, "library", None))
    values, process = design_inputs(args, topology)
    return circuit, process, values, parse_assignments(args.guess, "--guess")


def design_defaults(topology) -> dict[str, float]:
    """Default numbers of a library topology's design variables (empty for a plain netlist)."""
    return {v.name: float(v.value) for v in getattr(topology, "variables", ()) or ()}


def json_safe(data: Any) -> Any:
    """Replace infinite or NaN floats by None (JSON has no infinity), recursively.

    Examples
    --------
    >>> json_safe({"ro": float("inf"), "gm": [1.0, float("nan")]})
    {'ro': None, 'gm': [1.0, None]}
    """
    if isinstance(data, float):
        return data if math.isfinite(data) else None
    if isinstance(data, dict):
        return {k: json_safe(v) for k, v in data.items()}
    if isinstance(data, (list, tuple)):
        return [json_safe(v) for v in data]
    return data


def console():
    """A rich console on stdout, 120 columns wide when stdout is not a terminal."""
    from ..render.text import terminal_console

    return terminal_console()
