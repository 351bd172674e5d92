"""Plots with matplotlib (imported only here, only when a plot is asked for).

Renderer (sweep result -> PNG or SVG file).

Examples
--------
>>> from symbias.pipeline import load_target, design_inputs, run_sweep, SweepRequest
>>> import tempfile, pathlib
>>> target = load_target("examples/simple_mirror.cir")
>>> result = run_sweep(target, design_inputs(target), SweepRequest("Vout", 0.0, 5.0, 21))
>>> with tempfile.TemporaryDirectory() as tmp:
...     path = pathlib.Path(tmp) / "out.png"
...     sweep_plot(result, path)
...     path.stat().st_size > 1000
True
"""

from __future__ import annotations

from pathlib import Path

__all__ = ["sweep_plot"]


def sweep_plot(result, path: str | Path, kind: str | None = None) -> None:
    """Plot the output of a sweep with its compliance or zero-slope markers into ``path``.

    ``kind`` is the file format (``png``, ``svg``, ``pdf``); by default the path's suffix.
    """
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    sweep, metrics = result.sweep, result.metrics
    fig, ax = plt.subplots(figsize=(6.4, 4.0))
    ax.plot(sweep.values, result.values, lw=1.5)
    ax.set_xlabel("temperature [degC]" if result.kind == "temperature" else f"{sweep.variable} [{result.swept_unit}]")
    ax.set_ylabel(f"{result.output} [{result.output_unit}]")
    for first, last in result.branch.lost:
        ax.axvspan(first, last, color="tab:red", alpha=0.12, label="off the conducting state")
    ax.grid(True, alpha=0.3)
    if result.kind == "compliance":
        for edge in (metrics.by_current_low, metrics.by_current_high):
            if edge is not None:
                ax.axvline(edge, color="tab:red", ls="--", lw=1, label=f"compliance {edge:.3g}")
        for edge in (metrics.by_region_low, metrics.by_region_high):
            if edge is not None:
                ax.axvline(edge, color="tab:orange", ls=":", lw=1, label=f"region edge {edge:.3g}")
    if result.kind == "temperature" and metrics.zero_slope_temperature is not None:
        ax.axvline(metrics.zero_slope_temperature, color="tab:green", ls="--", lw=1, label="zero slope")
    if ax.get_legend_handles_labels()[0]:
        ax.legend()
    ax.set_title(sweep.circuit.title[:60])
    fig.tight_layout()
    fig.savefig(path, dpi=120, format=kind)
    plt.close(fig)
