"""The trade-off plot of a ranking: headroom against output resistance, one marker per candidate, the Pareto front.

Renderer (:class:`~symbias.design.rank.Ranking` -> PNG, SVG or PDF; matplotlib
imported only here, only when a plot is asked for).  Feasible candidates are
filled markers, the others hollow; the front of candidates that no other beats
on both axes (lower headroom, higher output resistance) is drawn as a step
line; the spec's limits are dashed.

Examples
--------
>>> from symbias.design.spec import load_spec
>>> from symbias.design.rank import rank, RankRequest
>>> import tempfile, pathlib
>>> ranking = rank(load_spec("examples/sensor_bias_spec.toml"),
...                RankRequest(only=("bjt-simple-mirror", "bjt-degenerated-mirror"), samples=0))
>>> with tempfile.TemporaryDirectory() as tmp:
...     path = pathlib.Path(tmp) / "tradeoff.png"
...     tradeoff_plot(ranking, path)
...     path.stat().st_size > 1000
True
"""

from __future__ import annotations

from pathlib import Path

__all__ = ["tradeoff_plot", "tradeoff_points", "front_of"]


def tradeoff_points(ranking) -> list[tuple[str, float, float, bool]]:
    """``(id, headroom, rout, feasible)`` of every candidate that has both numbers."""
    out = []
    for result in ranking.candidates:
        headroom, rout = result.metrics.get("headroom"), result.metrics.get("rout")
        if headroom is None or rout is None or headroom.value is None or rout.value is None:
            continue
        out.append((result.id, float(headroom.value), float(rout.value), result.feasible))
    return out


def front_of(points: list[tuple[str, float, float, bool]]) -> list[tuple[float, float]]:
    """The points no other beats on both axes (lower headroom and higher rout), by headroom.

    Examples
    --------
    >>> front_of([("a", 0.1, 1e6, True), ("b", 0.3, 1e8, True), ("c", 0.4, 1e7, False)])
    [(0.1, 1000000.0), (0.3, 100000000.0)]
    """
    front = [(h, r) for _, h, r, _ in points
             if not any((h2 <= h and r2 >= r) and (h2 < h or r2 > r) for _, h2, r2, _ in points)]
    return sorted(set(front))


def tradeoff_plot(ranking, path: str | Path, kind: str | None = None) -> None:
    """Write the plot to ``path`` (format from ``kind``, else the suffix)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    points = tradeoff_points(ranking)
    fig, ax = plt.subplots(figsize=(7.5, 5.0))
    for identifier, headroom, rout, feasible in points:
        ax.scatter([headroom], [rout], s=42, marker="o", zorder=3,
                   facecolors="tab:green" if feasible else "none", edgecolors="tab:green" if feasible else "tab:red")
        ax.annotate(identifier, (headroom, rout), textcoords="offset points", xytext=(4, 3), fontsize=6.5)
    front = front_of(points)
    if front:
        xs, ys = zip(*front)
        ax.step(xs, ys, where="post", color="tab:blue", lw=1.2, label="Pareto front (headroom, rout)")
    limits = ranking.spec.limits
    if limits.headroom_max is not None:
        ax.axvline(limits.headroom_max, color="gray", ls="--", lw=1, label=f"headroom_max {limits.headroom_max:g} V")
    if limits.rout_min is not None:
        ax.axhline(limits.rout_min, color="gray", ls=":", lw=1, label=f"rout_min {limits.rout_min:.3g} ohm")
    ax.set_yscale("log")
    ax.set_xlabel("headroom [V] (lower is better)")
    ax.set_ylabel("output resistance [ohm] (higher is better)")
    ax.scatter([], [], facecolors="tab:green", edgecolors="tab:green", label="feasible")
    ax.scatter([], [], facecolors="none", edgecolors="tab:red", label="fails the spec")
    ax.grid(True, which="both", alpha=0.25)
    ax.legend(fontsize=7, loc="best")
    ax.set_title(f"Trade-off: {ranking.spec.path or 'spec'}", fontsize=9)
    fig.tight_layout()
    fig.savefig(path, dpi=130, format=kind)
    plt.close(fig)
