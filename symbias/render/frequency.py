"""Frequency results written out: a table, a JSON object, Markdown for a note, a magnitude-and-phase plot.

Renderer (:class:`~symbias.pipeline.frequency.FrequencyResult` -> text, JSON,
Markdown, PNG/SVG/PDF).  matplotlib is imported only inside :func:`frequency_plot`.

Examples
--------
>>> from symbias.pipeline.targets import load_target, design_inputs
>>> from symbias.pipeline.frequency import frequency_analysis, FrequencyRequest
>>> target = load_target("examples/simple_mirror.cir")
>>> result = frequency_analysis(target, design_inputs(target), FrequencyRequest(stop=1e6, per_decade=1))
>>> record = frequency_record(result)
>>> record["label"], record["frequencies"][:2], round(record["low_frequency"] / 1e6, 2)
('Rout at Vout', [1.0, 10.0], 3.05)
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from .console import CAUTION, engineering, escaped, render_to_string

__all__ = ["frequency_renderables", "frequency_record", "frequency_markdown", "frequency_plot", "root_rows",
           "render_to_string"]

_UNIT_TEXT = {"ohm": "\u03a9"}
#: Kept terms up to which the approximate form is printed in the table (longer ones: --json).
_SHOWN_TERMS = 24


def _value_text(value: complex | float, unit: str) -> str:
    if unit in ("V/V", "A/A"):
        magnitude = abs(value)
        return f"{magnitude:.4g} ({20 * math.log10(magnitude):.1f} dB)" if magnitude > 0 else "0"
    return engineering(abs(value), _UNIT_TEXT.get(unit, unit))


def root_rows(roots: np.ndarray) -> list[tuple[str, str]]:
    """``(frequency, description)`` rows for poles or zeros: ``|p|/2pi`` and, for a complex pair, its Q.

    Examples
    --------
    >>> root_rows(np.array([-2 * np.pi * 1.5e3 + 0j]))
    [('1.5kHz', 'real, left half-plane')]
    """
    from ..frequency import describe_roots

    rows = []
    for root in describe_roots(roots):
        if root.q is not None:
            rows.append((engineering(root.hz, "Hz"), f"complex pair, Q = {root.q:.3g}"))
        elif root.where == "at the origin":
            rows.append(("0", root.where))
        else:
            rows.append((engineering(root.hz, "Hz"), root.where))
    return rows


def _decades(response) -> list[int]:
    """Grid indices at whole decades (or every point of a short grid)."""
    logs = np.log10(response.frequencies)
    picks = [int(np.argmin(np.abs(logs - d))) for d in range(math.ceil(logs[0] - 1e-9), math.floor(logs[-1] + 1e-9) + 1)]
    return sorted(set(picks)) or list(range(len(logs)))


def frequency_renderables(result) -> list[Any]:
    """Header, the response at each decade, poles and zeros, the approximation, notes and the caution."""
    from rich.table import Table

    response, formula = result.response, result.formula
    header = (f"[bold]{escaped(result.target.title)}[/bold]: {escaped(formula.label)} over {result.request.start:g}-"
              f"{result.request.stop:g} Hz at the bias point ({result.bias.temperature:g} degC)")
    summary = Table(title="at the bias point", title_justify="left", show_header=False)
    summary.add_column("item")
    summary.add_column("value", justify="right")
    summary.add_row("low-frequency value", _value_text(response.low_frequency, formula.unit))
    summary.add_row("falls 3 dB at", engineering(response.corner, "Hz") if response.corner else "not in range")
    for label, roots in (("pole", response.poles), ("zero", response.zeros)):
        for where, what in root_rows(roots):
            summary.add_row(f"{label} ({what})", where)
    table = Table(title=f"{escaped(formula.label)} versus frequency", title_justify="left")
    for column in ("f", "|value|", "phase (deg)"):
        table.add_column(column, justify="right")
    phase = response.phase
    for k in _decades(response):
        table.add_row(engineering(response.frequencies[k], "Hz"), _value_text(response.values[k], formula.unit),
                      f"{phase[k]:.1f}")
    out: list[Any] = [header, summary, table]
    if result.approximation is not None:
        out.append(_approximation_table(result))
    out += [f"[dim]note: {n}[/dim]" for n in result.notes]
    out.append(f"[dim]{CAUTION}[/dim]")
    return out


def _approximation_table(result) -> Any:
    from rich.table import Table

    from ..readable import readable_text

    a = result.approximation
    (kn, an), (kd, ad) = a.kept
    table = Table(title="coefficients of s cut to their dominant terms", title_justify="left", show_header=False)
    table.add_column("item")
    table.add_column("value")
    table.add_row("approx", escaped(readable_text(a.expr), None) if kn + kd <= _SHOWN_TERMS else
                  f"{kn} + {kd} terms (see --json)")
    table.add_row("kept terms", f"{kn} of {an} / {kd} of {ad}")
    table.add_row("worst error", escaped(f"{100 * a.error:.3g} % (tolerance {100 * a.tolerance:.3g} %) at {a.where()}", None))
    for what, form, error in (("dominant pole", a.dominant_pole, a.pole_error),
                              ("first zero", a.dominant_zero, a.zero_error)):
        if form is not None:
            value = form.evaluate({**result.bias.values})
            table.add_row(what, escaped(f"{readable_text(form.expr)}  = "
                                        f"{engineering(abs(float(np.real(value))) / (2 * math.pi), 'Hz')}"
                                        f" at bias; within {100 * error:.3g} % of the exact root over the ranges", None))
    table.add_row("ranges", f"+-{100 * result.request.spread:g} % around the bias point, "
                            f"{a.band[0]:g}-{a.band[1]:g} Hz, {a.admitted} points")
    return table


def frequency_record(result) -> dict[str, Any]:
    """The JSON object of ``symbias frequency``: the exact formula's fields, the response, poles and zeros.

    ``frequencies`` (Hz), ``magnitude``, ``phase_deg``, ``real``, ``imag`` are
    arrays over the grid; ``poles`` and ``zeros`` list ``{"real", "imag",
    "hz"}`` in rad/s and Hz; ``corner_hz`` is where ``|value|`` falls 3 dB
    (null when it does not in range).  With an approximation: the formula
    fields ``approx*`` plus ``approx_band``, ``dominant_pole``,
    ``dominant_pole_error``, ``dominant_zero`` and ``dominant_zero_error``.
    """
    from .json import formula_record

    response = result.response
    record = {"circuit": result.target.title, "source": result.target.where,
              **formula_record(result.formula, result.approximation),
              "temperature": result.bias.temperature,
              "low_frequency": float(abs(response.low_frequency)) if math.isfinite(abs(response.low_frequency))
              else None,
              "corner_hz": response.corner,
              "frequencies": response.frequencies.tolist(),
              "magnitude": response.magnitude.tolist(),
              "phase_deg": response.phase.tolist(),
              "real": response.values.real.tolist(),
              "imag": response.values.imag.tolist(),
              "poles": [_root(p) for p in response.poles],
              "zeros": [_root(z) for z in response.zeros],
              "notes": list(result.notes)}
    a = result.approximation
    if a is not None:
        record["approx_band"] = list(a.band)
        for key, form, error in (("dominant_pole", a.dominant_pole, a.pole_error),
                                 ("dominant_zero", a.dominant_zero, a.zero_error)):
            record[key] = None if form is None else str(form.expr)
            record[f"{key}_error"] = error
    return record


def _root(root: complex) -> dict[str, float]:
    return {"real": float(root.real), "imag": float(root.imag), "hz": float(abs(root) / (2 * math.pi))}


def frequency_markdown(result) -> str:
    """A Markdown section for a design note: value, -3 dB point, poles and zeros, approximation.

    Examples
    --------
    >>> from symbias.pipeline.targets import load_target, design_inputs
    >>> from symbias.pipeline.frequency import frequency_analysis, FrequencyRequest
    >>> target = load_target("examples/simple_mirror.cir")
    >>> text = frequency_markdown(frequency_analysis(target, design_inputs(target), FrequencyRequest(stop=1e6)))
    >>> text.splitlines()[0]
    '### Rout at Vout versus frequency'
    """
    response, formula = result.response, result.formula
    lines = [f"### {formula.label} versus frequency", "",
             f"At the bias point ({result.bias.temperature:g} degC): {_value_text(response.low_frequency, formula.unit)}"
             f" at low frequency; falls 3 dB at "
             f"{engineering(response.corner, 'Hz') if response.corner else 'no frequency in range'}.", "",
             "| | frequency | |", "|---|---:|---|"]
    for label, roots in (("pole", response.poles), ("zero", response.zeros)):
        lines += [f"| {label} | {where} | {what} |" for where, what in root_rows(roots)]
    a = result.approximation
    if a is not None:
        lines += ["", f"Dominant terms of each coefficient of $s$: worst error {100 * a.error:.3g} % over "
                      f"{a.band[0]:g}-{a.band[1]:g} Hz and +-{100 * result.request.spread:g} % around the bias point."]
        if a.dominant_pole is not None:
            lines += ["", f"Dominant pole: $p_1 \\approx {a.dominant_pole.latex()}$ (within {100 * a.pole_error:.3g} %"
                          " of the exact root)."]
    lines += [""] + [f"- {n}" for n in result.notes] + ["", f"*{CAUTION}*"]
    return "\n".join(lines)


def frequency_plot(result, path, kind: str | None = None) -> None:
    """Magnitude and phase against frequency into ``path`` (``png``, ``svg`` or ``pdf``), -3 dB point marked."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    response, formula = result.response, result.formula
    fig, (top, bottom) = plt.subplots(2, 1, figsize=(6.4, 5.6), sharex=True)
    top.loglog(response.frequencies, response.magnitude, lw=1.5)
    top.set_ylabel(f"|{formula.label}| ({formula.unit})")
    if response.corner:
        top.axvline(response.corner, color="tab:red", ls="--", lw=1, label=f"-3 dB at {response.corner:.3g} Hz")
        top.legend()
    bottom.semilogx(response.frequencies, response.phase, lw=1.5)
    bottom.set_ylabel("phase (deg)")
    bottom.set_xlabel("frequency (Hz)")
    for axis in (top, bottom):
        axis.grid(True, which="both", alpha=0.3)
    top.set_title(result.target.title[:60])
    fig.tight_layout()
    fig.savefig(path, dpi=120, format=kind)
    plt.close(fig)
