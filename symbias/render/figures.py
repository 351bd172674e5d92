"""Figures of a design note with matplotlib: saved byte for byte the same for the same data.

Renderer (plot records of :mod:`symbias.note` -> PNG and SVG files).  Every
figure goes through :func:`save_figure`: no date or software version in the
metadata, a fixed SVG hash salt (matplotlib's element ids) and a fixed
resolution, so a note written twice from the same inputs has identical files.
matplotlib is imported only inside these functions.

Examples
--------
>>> import tempfile, pathlib
>>> from symbias.note.model import Curve, Plot
>>> plot = Plot("demo", "a line", (Curve((0.0, 1.0, 2.0), (0.0, 1.0, 4.0), "y"),), "x [V]", "y [A]")
>>> with tempfile.TemporaryDirectory() as tmp:
...     paths = write_plot(plot, pathlib.Path(tmp))
...     [p.name for p in paths], paths[0].read_bytes()[:4] == b"\\x89PNG"
(['demo.png', 'demo.svg'], True)
"""

from __future__ import annotations

from pathlib import Path

__all__ = ["save_figure", "plot_figure", "write_plot", "FORMATS", "SVG_SALT"]

#: File formats of every note figure.
FORMATS = ("png", "svg")
#: matplotlib's SVG element ids are random unless salted; a fixed salt keeps the files identical.
SVG_SALT = "symbias"
_DPI = 110


def save_figure(figure, path: str | Path, kind: str | None = None) -> None:
    """Save a matplotlib figure without dates or versions (atomically, see :mod:`symbias.render.files`)."""
    import matplotlib

    from .files import write_atomic

    path = Path(path)
    kind = kind or path.suffix.lstrip(".").lower()
    metadata = {"png": {"Software": None}, "svg": {"Date": None, "Creator": None}}.get(kind, {})

    def write(temporary: Path) -> None:
        with matplotlib.rc_context({"svg.hashsalt": SVG_SALT, "svg.fonttype": "path"}):
            figure.savefig(temporary, format=kind, dpi=_DPI, metadata=metadata)

    write_atomic(path, write, option="-o")


def plot_figure(plot):
    """A matplotlib figure of a :class:`~symbias.note.model.Plot` (line curves or a histogram, with markers)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(6.4, 3.8))
    for curve in plot.curves:
        if plot.histogram:
            ax.hist(curve.y, bins=curve.bins or 40, color="tab:blue", alpha=0.8, label=curve.label)
        else:
            ax.plot(curve.x, curve.y, lw=1.5, label=curve.label, marker="o" if curve.points else None,
                    ls="none" if curve.points else "-")
    for marker in plot.markers:
        if marker.axis == "x":
            ax.axvline(marker.value, color=marker.colour, ls="--", lw=1, label=marker.label)
        else:
            ax.axhline(marker.value, color=marker.colour, ls="--", lw=1, label=marker.label)
    for first, last, label in plot.spans:
        ax.axvspan(first, last, color="tab:red", alpha=0.12, label=label)
    ax.set_xlabel(plot.xlabel)
    ax.set_ylabel(plot.ylabel)
    if plot.log_x:
        ax.set_xscale("log")
    ax.grid(True, alpha=0.3)
    if ax.get_legend_handles_labels()[0]:
        ax.legend(fontsize=8)
    ax.set_title(plot.title, fontsize=10)
    fig.tight_layout()
    return fig


def write_plot(plot, folder: str | Path) -> tuple[Path, ...]:
    """Write a plot as ``<name>.png`` and ``<name>.svg`` in ``folder``; return the paths."""
    import matplotlib.pyplot as plt

    fig = plot_figure(plot)
    paths = tuple(Path(folder) / f"{plot.name}.{kind}" for kind in FORMATS)
    try:
        for path in paths:
            save_figure(fig, path)
    finally:
        plt.close(fig)
    return paths
