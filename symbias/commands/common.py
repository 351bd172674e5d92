"""Arguments shared by several sub-commands, and the two ways every command prints.

Not a command itself (it is not in :data:`symbias.commands.COMMANDS`).  It
only turns arguments into the pipeline's inputs and hands results to
:mod:`symbias.render`; no analysis happens here.

Examples
--------
>>> parse_assignments(["RE=1k", "vx=0.5"], "--set")
{'RE': 1000.0, 'vx': 0.5}
"""

from __future__ import annotations

import argparse
import sys
from typing import Any, Iterable

from ..errors import UsageError

__all__ = ["add_target_argument", "add_design_arguments", "temperature", "add_bias_source_arguments",
           "add_corner_argument", "add_dc_arguments", "parse_assignments", "target_of", "inputs_of",
           "print_renderables", "print_json"]


def add_target_argument(parser: argparse.ArgumentParser) -> None:
    """Add the netlist-or-identifier argument and ``--library``."""
    parser.add_argument("netlist", help="netlist file, or a topology identifier from the library")
    parser.add_argument("--library", action="append", default=[], metavar="DIR", help="extra topology folder")


def add_design_arguments(group) -> None:
    """Add --process, --temp and --set: what a circuit needs to become numbers."""
    group.add_argument("--process", "-p", metavar="FILE", help="process file (TOML); .model cards override it")
    group.add_argument("--temp", type=temperature, default=None, metavar="DEGC",
                       help="temperature in degC (default 27; above -273.15, at most 1000)")
    group.add_argument("--set", action="append", default=[], metavar="NAME=VALUE",
                       help="number for a free symbol in the netlist (repeatable); library defaults otherwise")


def add_bias_source_arguments(group) -> None:
    """Add --models, --corner and --keep-deck: where the operating point and its small-signal values come from."""
    group.add_argument("--models", choices=("built-in", "ngspice"), default="built-in",
                       help="source of the bias values: symbias's own device models (default) or ngspice run on "
                            "the netlist's own model cards (.model, .include, .lib)")
    add_corner_argument(group, "; repeatable")
    group.add_argument("--keep-deck", metavar="DIR", help="keep the simulator's deck and output in DIR (to inspect)")


def add_corner_argument(group, more: str = "") -> None:
    """Add --corner: a section of the netlist's ``.lib`` files to read instead of the one written."""
    group.add_argument("--corner", action="append", default=[], metavar="SECTION",
                       help=f"read this section of the netlist's .lib files (a process corner){more}")


def add_dc_arguments(parser: argparse.ArgumentParser) -> None:
    """Add the target, --process, --temp, --set, --guess and --json arguments."""
    add_target_argument(parser)
    add_design_arguments(parser)
    parser.add_argument("--guess", action="append", default=[], metavar="NODE=VOLTS",
                        help="starting voltage of a node, to pick one of several solutions (repeatable)")
    parser.add_argument("--json", action="store_true", help="print one JSON object")


def temperature(text: str) -> float:
    """An argparse type: a temperature in degC within the models' range (:mod:`symbias.limits`).

    Examples
    --------
    >>> temperature("85")
    85.0
    """
    from ..limits import temperature_problem

    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expects a temperature in degC, got {text!r}") from None
    problem = temperature_problem(value)
    if problem is not None:
        raise argparse.ArgumentTypeError(problem)
    return value


def parse_assignments(items: Iterable[str], flag: str) -> dict[str, float]:
    """``["A=1k", ...]`` -> ``{"A": 1000.0}``; SPICE suffixes allowed.

    Raises
    ------
    UsageError
        For an item without ``=`` or a value that is not a number.
    """
    from ..expressions import try_parse_number
    from ..errors import SymbiasError

    out: dict[str, float] = {}
    for item in items:
        name, sep, text = item.partition("=")
        try:
            number = try_parse_number(text) if sep else None
        except SymbiasError:
            number = None
        if not name.strip() or number is None:
            raise UsageError(f"expects NAME=NUMBER, got {item!r}", path=flag)
        out[name.strip()] = float(number)
    return out


def target_of(args: argparse.Namespace):
    """The pipeline target named by the arguments."""
    from ..pipeline import load_target

    return load_target(args.netlist, args.library)


def inputs_of(args: argparse.Namespace, target):
    """The pipeline's design inputs from --process, --temp, --set (and --guess where the command has it)."""
    from ..pipeline import design_inputs

    guess = parse_assignments(getattr(args, "guess", []), "--guess")
    temp = 27.0 if args.temp is None else args.temp
    return design_inputs(target, args.process, temp, parse_assignments(args.set, "--set"), guess,
                         models=getattr(args, "models", "built-in"), corners=tuple(getattr(args, "corner", ())),
                         keep_deck=getattr(args, "keep_deck", None))


def print_renderables(renderables: Iterable[Any]) -> None:
    """Print rich renderables (strings take rich markup) on stdout."""
    from ..render.console import terminal_console

    console = terminal_console()
    for renderable in renderables:
        console.print(renderable)


def print_json(record: Any) -> None:
    """Print one JSON object (infinities and NaN as null)."""
    from ..render.json import dumps

    sys.stdout.write(dumps(record) + "\n")
