"""``symbias sweep``: sweep an output voltage, the supply or the temperature, and report metrics.

Wires: netlist (+ process) -> :mod:`symbias.dc.sweep` -> metrics -> a rich
table, JSON, and optionally a plot (matplotlib, imported only for ``--plot``).

* ``--vary VOUT`` (the source holding the output node): output current
  against output voltage and the compliance voltage, by current and by
  device regions;
* ``--vary VDD`` (any other source): line sensitivity of the output in %/V
  and dB;
* ``--vary temp``: box-method temperature coefficient, zero-slope
  temperature and curvature.

The output watched is ``--out`` (``V(node)`` or ``I(element)``), by default
the current of a source called Vout/Vo, else the voltage of a node called
vref/ref/vo/out/vout.

Examples
--------
>>> from symbias.cli import main
>>> main(["sweep", "tests/decks/bjt_simple_mirror.cir", "--vary", "Vout", "--from", "0", "--to", "5"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse
import json
import sys

from ..errors import CircuitError
from .dc_common import DESIGN_AID, add_dc_arguments, json_safe, load_inputs
from .dc_common import console as dc_console

__all__ = ["register", "run", "default_output"]

_OUTPUT_SOURCES = ("vout", "vo", "vo1", "vout1")
_OUTPUT_NODES = ("vref", "ref", "vbg", "vo", "out", "vout")


def register(subparsers) -> None:
    """Add the ``sweep`` sub-command."""
    p = subparsers.add_parser(
        "sweep",
        help="sweep Vout (compliance), the supply (line sensitivity) or temperature (TC)",
        description="Sweep one source or the temperature and report compliance, line sensitivity or TC.",
        epilog=DESIGN_AID,
    )
    add_dc_arguments(p)
    p.add_argument("--vary", required=True, metavar="SOURCE|temp", help="a voltage or current source, or temp")
    p.add_argument("--from", dest="start", type=float, required=True, metavar="A", help="first value")
    p.add_argument("--to", dest="stop", type=float, required=True, metavar="B", help="last value")
    p.add_argument("--points", type=int, default=201, metavar="N", help="number of points (default 201)")
    p.add_argument("--out", metavar="PROBE", help="output: V(node) or I(element)")
    p.add_argument("--fraction", type=float, default=0.01,
                   help="compliance: departure of the output current that counts (default 0.01)")
    p.add_argument("--basis", choices=("tangent", "level"), default="tangent",
                   help="compliance: measure the departure from the tangent at mid-sweep or from its level")
    p.add_argument("--plot", metavar="FILE.png", help="write a plot (needs matplotlib)")
    p.set_defaults(func=run)


def default_output(circuit) -> str:
    """The output probe when none is given (see the module docstring).

    Raises
    ------
    CircuitError
        When no source or node has one of the usual output names.
    """
    for element in circuit.elements_of("V"):
        if element.key in _OUTPUT_SOURCES:
            return f"I({element.name})"
    for node in _OUTPUT_NODES:
        if node in circuit.nodes:
            return f"V({node})"
    raise CircuitError("no output named Vout or vref: give --out V(node) or --out I(element)", path=circuit.path)


def _progress(points: int):
    """A rich progress bar on stderr for long sweeps; returns (callback, context)."""
    from contextlib import nullcontext

    from rich.console import Console
    from rich.progress import Progress

    console = Console(file=sys.stderr)
    if points < 100 or not console.is_terminal:
        return None, nullcontext()
    bar = Progress(console=console, transient=True)
    task = bar.add_task("sweeping", total=points)
    return (lambda done, total: bar.update(task, completed=done)), bar


def run(args: argparse.Namespace) -> int:
    """Run the sweep, compute the metrics, print and plot."""
    from ..dc import sweep as dcs

    circuit, process, values, guess = load_inputs(args)
    dcs.sweep_points(args.start, args.stop, args.points)  # reject an empty range before any work
    output = args.out or default_output(circuit)
    is_temp = args.vary.lower() in ("temp", "temperature")
    callback, context = _progress(args.points)
    with context:
        if is_temp:
            result = dcs.sweep_temperature(circuit, args.start, args.stop, args.points, process=process,
                                           values=values, guess=guess or None, progress=callback)
        else:
            result = dcs.sweep_source(circuit, args.vary, args.start, args.stop, args.points, process=process,
                                      temperature=args.temp, values=values, guess=guess or None, progress=callback)
    result.probe(output)  # an unknown output fails here, before anything is written
    if is_temp:
        kind, metrics = "temperature", dcs.temperature_metrics(result, output)
    elif output.replace(" ", "").lower() == f"i({result.variable.lower()})":
        kind, metrics = "compliance", dcs.compliance(result, output, fraction=args.fraction, basis=args.basis)
    else:
        kind, metrics = "line", dcs.line_sensitivity(result, output)
    if args.plot:
        _plot(result, output, kind, metrics, args.plot)
    if args.json:
        record = {"circuit": circuit.title, "source": circuit.path, "output": output, "kind": kind,
                  "metrics": metrics.to_dict(), **result.to_dict((output,))}
        print(json.dumps(json_safe(record), indent=2))
        return 0
    _print(circuit, result, output, kind, metrics)
    return 0


def _print(circuit, result, output: str, kind: str, metrics) -> None:
    from rich.table import Table

    console = dc_console()
    unit = "degC" if kind == "temperature" else ("V" if result.variable[0].upper() == "V" else "A")
    console.print(f"[bold]{circuit.title}[/bold]: {output} over {result.variable} = "
                  f"{result.values[0]:g} .. {result.values[-1]:g} {unit} ({len(result.values)} points)")
    table = Table(title=f"{kind} metrics", title_justify="left")
    table.add_column("metric")
    table.add_column("value", justify="right")
    for key, value in metrics.to_dict().items():
        table.add_row(key, "-" if value is None else (f"{value:.6g}" if isinstance(value, float) else str(value)))
    console.print(table)
    console.print(f"[dim]{DESIGN_AID}[/dim]")


def _plot(result, output: str, kind: str, metrics, path: str) -> None:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    y = result.probe(output)
    fig, ax = plt.subplots(figsize=(6.4, 4.0))
    ax.plot(result.values, y, lw=1.5)
    ax.set_xlabel("temperature (degC)" if kind == "temperature" else result.variable)
    ax.set_ylabel(output)
    ax.grid(True, alpha=0.3)
    if kind == "compliance":
        for edge in (metrics.by_current_low, metrics.by_current_high):
            if edge is not None:
                ax.axvline(edge, color="tab:red", ls="--", lw=1, label=f"compliance {edge:.3g}")
        for edge in (metrics.by_region_low, metrics.by_region_high):
            if edge is not None:
                ax.axvline(edge, color="tab:orange", ls=":", lw=1, label=f"region edge {edge:.3g}")
    if kind == "temperature" and metrics.zero_slope_temperature is not None:
        ax.axvline(metrics.zero_slope_temperature, color="tab:green", ls="--", lw=1, label="zero slope")
    if ax.get_legend_handles_labels()[0]:
        ax.legend()
    ax.set_title(result.circuit.title[:60])
    fig.tight_layout()
    fig.savefig(path, dpi=120)
    plt.close(fig)
