"""Noise results written out: ranked tables, closed forms, a JSON object, Markdown, a density plot.

Renderer (:class:`~symbias.pipeline.noise.NoiseResult` -> text, JSON, Markdown,
PNG/SVG/PDF).  Densities are shown as power densities (A^2/Hz or V^2/Hz) and
as their square roots (A/sqrt(Hz), V/sqrt(Hz)); integrated noise as rms.
matplotlib is imported only inside :func:`noise_plot`.

Examples
--------
>>> from symbias.pipeline.targets import load_target, design_inputs
>>> from symbias.pipeline.noise import noise_analysis, NoiseRequest
>>> target = load_target("examples/simple_mirror.cir")
>>> result = noise_analysis(target, design_inputs(target), NoiseRequest(stop=1e6, per_decade=2))
>>> record = noise_record(result)
>>> record["output"], record["unit"], [row["element"] for row in record["by_device"]]
('i(Vout)', 'A^2/Hz', ['Q2', 'Q1'])
"""

from __future__ import annotations

import math
from typing import Any

from .console import CAUTION, engineering, escaped, render_to_string

__all__ = ["noise_renderables", "noise_record", "noise_markdown", "noise_plot", "render_to_string"]


def _root(value: float, result) -> str:
    unit = "A/\u221aHz" if result.spectrum.output.kind == "current" else "V/\u221aHz"
    return engineering(math.sqrt(max(value, 0.0)), unit)


def _rms(result) -> str:
    unit = "A" if result.spectrum.output.kind == "current" else "V"
    return engineering(math.sqrt(max(result.integrated, 0.0)), unit) + " rms"


def noise_renderables(result) -> list[Any]:
    """Header, the ranked sources and devices, the totals, the closed forms, notes and the caution."""
    from rich.table import Table

    spectrum, request = result.spectrum, result.request
    at = spectrum.frequencies[spectrum.index(request.at)]
    unit = spectrum.output.unit
    header = (f"[bold]{escaped(result.target.title)}[/bold]: output noise {escaped(spectrum.output.label)} at the bias point "
              f"({result.bias.temperature:g} degC)")
    ranked = Table(title=f"noise sources at {engineering(at, 'Hz')}, largest first", title_justify="left")
    for column in ("source", "kind", f"at output ({unit})", "root", "share"):
        ranked.add_column(column, justify="left" if column in ("source", "kind") else "right")
    for row in spectrum.ranked(at):
        ranked.add_row(escaped(row.name), row.kind, f"{row.density:.4g}", _root(row.density, result), f"{100 * row.share:.1f} %")
    devices = Table(title="by element", title_justify="left")
    for column in ("element", "kinds", f"at output ({unit})", "share"):
        devices.add_column(column, justify="left" if column in ("element", "kinds") else "right")
    for row in spectrum.by_element(at):
        devices.add_row(escaped(row.element), row.kind, f"{row.density:.4g}", f"{100 * row.share:.1f} %")
    totals = Table(title="totals", title_justify="left", show_header=False)
    totals.add_column("item")
    totals.add_column("value", justify="right")
    totals.add_row(f"density at {engineering(at, 'Hz')}", f"{result.density_at:.4g} {unit} "
                                                         f"({_root(result.density_at, result)})")
    totals.add_row(f"integrated {request.start:g}-{request.stop:g} Hz", _rms(result))
    totals.add_row("1/f corner", (engineering(result.corner, "Hz") + f" ({result.corner_note})")
                   if result.corner else result.corner_note)
    out: list[Any] = [header, ranked, devices, totals]
    if result.formula is not None:
        out.append(_closed_form_table(result))
    out += [f"[dim]note: {n}[/dim]" for n in result.notes]
    out.append(f"[dim]{CAUTION}[/dim]")
    return out


def _closed_form_table(result) -> Any:
    from rich.table import Table

    from ..readable import readable_text

    formula = result.formula
    leading = any(t.approximation is not None for t in formula.terms)
    table = Table(title=f"closed forms: {escaped(formula.output.label)} noise = sum of H(0)^2 S over the sources",
                  title_justify="left")
    table.add_column("source")
    table.add_column("S (A^2/Hz)")
    table.add_column("H(0) exact" if not leading else "H(0), leading order")
    for term in formula.terms:
        gain = term.approximation if leading and term.approximation is not None else term.low_frequency
        shown = readable_text(gain.expr) if sum(term.low_frequency.nterms) <= 200 else \
            f"{sum(term.low_frequency.nterms)} terms (see --json)"
        if leading and term.approximation is not None:
            shown += f"  ({100 * term.approximation.error:.2g} %)"
        table.add_row(escaped(term.source.name), escaped(term.source.density, None), escaped(shown, None))
    total = formula.white_expr(leading) if _small(formula) else None
    if total is not None:
        table.add_row("[bold]white total[/bold]", "", escaped(readable_text(total), None))
        flicker = formula.flicker_expr(leading)
        if flicker != 0:
            table.add_row("[bold]1/f total[/bold]", "", escaped(readable_text(flicker), None))
    return table


def _small(formula) -> bool:
    return sum(sum(t.low_frequency.nterms) for t in formula.terms) <= 400


def noise_record(result) -> dict[str, Any]:
    """The JSON object of ``symbias noise``.

    Fields: ``circuit``, ``source``, ``output``, ``unit`` (of densities),
    ``temperature``, ``band``, ``at`` (Hz of the ranking), ``density_at``,
    ``integrated`` (power over the band) and ``integrated_rms``,
    ``flicker_corner`` (Hz or null) and ``flicker_corner_note``, ``sources``
    and ``by_device`` (ranked at ``at``: name, element, kind, density, share),
    ``frequencies`` and ``total`` (the spectrum), ``device_spectra`` (element ->
    density over frequency), ``notes``; with closed forms ``closed_form``:
    per source its ``density`` (text), ``transfer`` (exact, sympy-parseable),
    ``low_frequency`` and, with ``--approx``, ``leading`` and
    ``leading_error``, plus ``white_total`` and ``flicker_total``.
    """
    spectrum, request = result.spectrum, result.request
    at = float(spectrum.frequencies[spectrum.index(request.at)])
    per_element = spectrum.element_spectra()
    record = {
        "circuit": result.target.title, "source": result.target.where,
        "output": spectrum.output.label, "unit": spectrum.output.unit, "temperature": result.bias.temperature,
        "band": [request.start, request.stop], "at": at, "density_at": result.density_at,
        "integrated": result.integrated, "integrated_rms": math.sqrt(max(result.integrated, 0.0)),
        "flicker_corner": result.corner, "flicker_corner_note": result.corner_note,
        "sources": [_row(r) for r in spectrum.ranked(at)], "by_device": [_row(r) for r in spectrum.by_element(at)],
        "frequencies": spectrum.frequencies.tolist(), "total": spectrum.total.tolist(),
        "device_spectra": {k: v.tolist() for k, v in per_element.items()},
        "notes": list(result.notes),
    }
    if result.formula is not None:
        record["closed_form"] = _closed_form_record(result.formula)
    return record


def _row(row) -> dict[str, Any]:
    return {"name": row.name, "element": row.element, "kind": row.kind, "density": row.density, "share": row.share}


def _closed_form_record(formula) -> dict[str, Any]:
    terms = []
    for term in formula.terms:
        entry = {"source": term.source.name, "element": term.source.element, "kind": term.source.kind,
                 "nodes": list(term.source.nodes), "density": str(term.source.density),
                 "transfer": term.transfer.exact_string(), "low_frequency": term.low_frequency.exact_string()}
        if term.approximation is not None:
            entry["leading"] = term.approximation.text
            entry["leading_error"] = float(term.approximation.error)
        terms.append(entry)
    out: dict[str, Any] = {"terms": terms, "meanings": {k: str(v) for k, v in sorted(formula.meanings.items())}}
    if _small(formula):
        leading = any(t.approximation is not None for t in formula.terms)
        out["white_total"] = str(formula.white_expr(leading))
        out["flicker_total"] = str(formula.flicker_expr(leading))
    return out


def noise_markdown(result) -> str:
    """A Markdown noise section for a design note: totals, the ranked devices, the closed-form total.

    Examples
    --------
    >>> from symbias.pipeline.targets import load_target, design_inputs
    >>> from symbias.pipeline.noise import noise_analysis, NoiseRequest
    >>> target = load_target("examples/simple_mirror.cir")
    >>> text = noise_markdown(noise_analysis(target, design_inputs(target), NoiseRequest(stop=1e6)))
    >>> text.splitlines()[0]
    '### Output noise i(Vout)'
    """
    spectrum, request = result.spectrum, result.request
    at = spectrum.frequencies[spectrum.index(request.at)]
    unit = spectrum.output.unit
    lines = [f"### Output noise {spectrum.output.label}", "",
             f"At {engineering(at, 'Hz')}: {result.density_at:.4g} {unit} ({_root(result.density_at, result)}); "
             f"{_rms(result)} from {request.start:g} to {request.stop:g} Hz; 1/f corner "
             f"{engineering(result.corner, 'Hz') if result.corner else '-'} ({result.corner_note}).", "",
             f"| element | kinds | at output ({unit}) | share |", "|---|---|---:|---:|"]
    lines += [f"| {r.element} | {r.kind} | {r.density:.4g} | {100 * r.share:.1f} % |" for r in spectrum.by_element(at)]
    if result.formula is not None and _small(result.formula):
        import sympy

        leading = any(t.approximation is not None for t in result.formula.terms)
        lines += ["", "White output noise at low frequency" + (" (leading order)" if leading else "") + ":", "",
                  "$$", sympy.latex(result.formula.white_expr(leading)), "$$"]
    lines += [""] + [f"- {n}" for n in result.notes] + ["", f"*{CAUTION}*"]
    return "\n".join(lines)


def noise_plot(result, path, kind: str | None = None) -> None:
    """The output noise density (square root) against frequency, total and per device, into ``path``."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    import numpy as np

    spectrum = result.spectrum
    fig, ax = plt.subplots(figsize=(6.4, 4.4))
    ax.loglog(spectrum.frequencies, np.sqrt(spectrum.total), lw=2, color="black", label="total")
    per_element = spectrum.element_spectra()
    ranked = [r.element for r in spectrum.by_element(result.request.at)][:6]
    for element in ranked:
        ax.loglog(spectrum.frequencies, np.sqrt(per_element[element]), lw=1, label=element)
    if result.corner and spectrum.frequencies[0] <= result.corner <= spectrum.frequencies[-1]:
        ax.axvline(result.corner, color="tab:red", ls="--", lw=1, label=f"1/f corner {result.corner:.3g} Hz")
    ax.set_xlabel("frequency (Hz)")
    ax.set_ylabel(f"{spectrum.output.label} noise ({spectrum.output.root_unit})")
    ax.grid(True, which="both", alpha=0.3)
    ax.legend(fontsize=8)
    ax.set_title(result.target.title[:60])
    fig.tight_layout()
    fig.savefig(path, dpi=120, format=kind)
    plt.close(fig)
