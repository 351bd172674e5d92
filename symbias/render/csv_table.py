"""Sweep points as CSV text: one row per swept value, every column named with its unit.

Renderer (sweep result -> CSV text); the command writes it through
:func:`symbias.render.files.write_text` (all or nothing).  Columns: the swept
value, the output watched, every node voltage, every voltage-source branch
current (SPICE sign, positive into the + terminal) and every device's region.
Numbers are written with ``repr`` precision, so they read back exactly.

Examples
--------
>>> from symbias.pipeline import load_target, design_inputs, run_sweep, SweepRequest
>>> target = load_target("examples/simple_mirror.cir")
>>> result = run_sweep(target, design_inputs(target), SweepRequest("Vout", 0.0, 5.0, 3))
>>> sweep_csv(result).splitlines()[0]
'Vout [V],Iout(Vout) [A],V(vcc) [V],V(in) [V],V(out) [V],I(VCC) [A],I(Vout) [A],region(Q1),region(Q2)'
"""

from __future__ import annotations

import csv
import io

__all__ = ["sweep_csv"]


def sweep_csv(result) -> str:
    """CSV text of every point of a sweep (see the module docstring)."""
    sweep = result.sweep
    columns = [(f"{sweep.variable} [{result.swept_unit}]", sweep.values),
               (f"{result.output} [{result.output_unit}]", result.values)]
    columns += [(f"V({node}) [V]", values) for node, values in sweep.results.node_voltages.items() if node != "0"]
    columns += [(f"I({name}) [A]", values) for name, values in sweep.results.branch_currents.items()]
    columns += [(f"region({name})", sweep.regions(name)) for name in sweep.results.devices]
    stream = io.StringIO()
    writer = csv.writer(stream, lineterminator="\n")
    writer.writerow([name for name, _ in columns])
    for i in range(len(sweep.values)):
        writer.writerow([_text(values[i]) for _, values in columns])
    return stream.getvalue()


def _text(value) -> str:
    return value if isinstance(value, str) else repr(float(value))
