"""Sections of a design note on behaviour over frequency: the output impedance (a reference's supply
rejection) with its poles, zeros and -3 dB point, and the output noise with its ranked contributions.

Section builders of the note package (:class:`~symbias.note.context.NoteContext`
-> :class:`~symbias.note.model.Section`).  The numbers are those of
:func:`symbias.pipeline.frequency_analysis` (the quantity of
:func:`~symbias.pipeline.frequency.default_frequency_quantity`) and
:func:`symbias.pipeline.noise_analysis` (numbers only: no closed forms, which
would cost a derivation per noise source), with the requests
:func:`frequency_request` and :func:`noise_request` give; nothing is derived
again here.  When an analysis cannot be done for the cell, its section says
why in one sentence.

Examples
--------
>>> from symbias.pipeline import load_target, design_inputs
>>> from symbias.note.context import NoteRequest, note_context
>>> target = load_target("bjt-simple-mirror")
>>> context = note_context(target, design_inputs(target), NoteRequest(approximate=False))
>>> frequency_section(context).blocks[1].rows[0][0], noise_section(context).blocks[1].rows[0][0]
('Rout at Vout at low frequency', 'density at 1 kHz')
"""

from __future__ import annotations

import math

from ..errors import SymbiasError
from .context import NoteContext
from .model import Curve, Figure, Marker, Number, Paragraph, Plot, Section, Table

__all__ = ["frequency_section", "noise_section", "frequency_request", "noise_request", "NOISE_CURVES"]

#: Devices whose own spectra are drawn beside the total (the largest at the ranking frequency).
NOISE_CURVES = 4
_FREQUENCY_TITLE = "Frequency response"
_NOISE_TITLE = "Output noise"


def frequency_request(context: NoteContext):
    """The frequency analysis a note runs: the default quantity, the pipeline's band, the note's density."""
    from ..pipeline.frequency import FrequencyRequest

    return FrequencyRequest(per_decade=context.request.spectral_per_decade)


def noise_request(context: NoteContext):
    """The noise analysis a note runs: at the note's output, numbers only, ranked at the note's noise frequency."""
    from ..pipeline.noise import NoiseRequest

    return NoiseRequest(output=context.output, per_decade=context.request.spectral_per_decade,
                        at=context.request.noise_frequency, closed_form=False)


def _hz(value: float) -> str:
    from .model import number_text

    return number_text(value, "Hz")


def _magnitude_rows(response, label: str, unit: str) -> tuple:
    """The low-frequency value (and, for a ratio, in dB) and the -3 dB point."""
    low = abs(response.low_frequency)
    if unit == "ohm":
        rows: tuple = ((f"{label} at low frequency", Number(low, "ohm")),)
        corner = "-3 dB frequency of the output resistance"
    else:
        rows = ((f"|{label}| at low frequency", Number(low, "1")),
                (f"|{label}| at low frequency, in dB", Number(20 * math.log10(low) if low > 0 else None, "dB")))
        corner = f"frequency where |{label}| has fallen 3 dB"
    if response.corner and response.corner > response.frequencies[-1]:
        corner += " (above the plotted band)"
    return rows + ((corner, Number(response.corner, "Hz") if response.corner else "not reached"),)


def _root_rows(response) -> tuple:
    from ..frequency import describe_roots

    rows = []
    for what, roots in (("pole", response.poles), ("zero", response.zeros)):
        for root in describe_roots(roots):
            rows.append((what, Number(root.hz, "Hz"), root.where, Number(root.q, "1") if root.q is not None else ""))
    return tuple(rows)


def _capacitances_zero(result) -> bool:
    """True when every capacitance of the formula is zero at the bias point (the cards give none)."""
    from ..symbols import unit_of

    formula, values = result.formula, result.bias.values
    capacitances = [s.name for s in formula.symbols if unit_of(s.name, formula.meanings) == "F"]
    return all(values.get(name, 0.0) == 0 for name in capacitances)


def _frequency_plots(result, label: str, unit: str) -> tuple[Figure, Figure]:
    response = result.response
    f = tuple(float(v) for v in response.frequencies)
    markers = (Marker(response.corner, "-3 dB"),) if response.corner and f[0] <= response.corner <= f[-1] else ()
    magnitude = Plot("frequency_magnitude", f"|{label}| against frequency",
                     (Curve(f, tuple(float(v) for v in response.magnitude), f"|{label}|"),), "frequency [Hz]",
                     f"|{label}| [{'ohm' if unit == 'ohm' else 'V/V'}]", markers, log_x=True, log_y=True)
    phase = Plot("frequency_phase", f"Phase of {label} against frequency",
                 (Curve(f, tuple(float(v) for v in response.phase), f"phase of {label}"),), "frequency [Hz]",
                 "phase [deg]", markers, log_x=True)
    return (Figure(magnitude, f"Magnitude of {label} against frequency at the operating point."),
            Figure(phase, f"Phase of {label} against frequency at the operating point."))


def _analysed(analysis, context: NoteContext, request, key: str, title: str):
    """``(result, None)`` of a pipeline analysis at the note's operating point, or ``(None, section)`` saying
    in one sentence why it could not be done."""
    try:
        return analysis(context.target, context.inputs, request, point=context.point), None
    except SymbiasError as err:
        return None, Section(key, title, (Paragraph(f"Not computed: {err.reason}."),))


def _with_notes(key: str, title: str, blocks: list, notes) -> Section:
    """The section, with the model parts the analysis left out (and why) after its blocks."""
    if notes:
        blocks.append(Paragraph("Left out of the model: " + "; ".join(notes) + "."))
    return Section(key, title, tuple(blocks))


def frequency_section(context: NoteContext) -> Section:
    """The default frequency quantity at the operating point: value, -3 dB point, poles and zeros, plots."""
    from ..pipeline.frequency import frequency_analysis

    request = frequency_request(context)
    result, failed = _analysed(frequency_analysis, context, request, "frequency", _FREQUENCY_TITLE)
    if failed is not None:
        return failed
    response, label, unit = result.response, result.formula.label, result.formula.unit
    rows = _magnitude_rows(response, label, unit)
    if not len(response.poles) and not len(response.zeros):
        why = ("the model cards give no capacitance at the operating point" if _capacitances_zero(result) else
               "its capacitances leave no pole or zero")
        return Section("frequency", _FREQUENCY_TITLE, (
            Paragraph(f"{label} is flat over frequency: {why}."), Table(("quantity", "value"), rows, label)))
    what = ("the output impedance: its magnitude is the output resistance at low frequency and falls where the "
            "capacitances at the output take over" if unit == "ohm" else
            "the supply rejection: how much of a ripple on the supply reaches the output")
    blocks: list = [
        Paragraph(f"{label} over frequency, {what}. The exact result in $s$ with the device capacitances of the "
                  f"model cards at the operating point ({result.bias.temperature:g} degC), evaluated from "
                  f"{_hz(request.start)} to {_hz(request.stop)} ({request.per_decade} points per decade); the "
                  "poles and zeros are the roots of its numerator and denominator (`symbias frequency` gives the "
                  "formula)."),
        Table(("quantity", "value"), rows, label),
        Table(("root", "frequency", "where", "Q"), _root_rows(response), f"Poles and zeros of {label}"),
        *_frequency_plots(result, label, unit),
    ]
    return _with_notes("frequency", _FREQUENCY_TITLE, blocks, result.notes)


def _noise_rows(result) -> tuple:
    spectrum, request = result.spectrum, result.request
    output = spectrum.output
    at = float(spectrum.frequencies[spectrum.index(request.at)])
    rms = "A" if output.kind == "current" else "V"
    return ((f"density at {_hz(at)}", Number(result.density_at, output.unit)),
            (f"root density at {_hz(at)}", Number(math.sqrt(max(result.density_at, 0.0)), output.root_unit)),
            (f"integrated from {_hz(request.start)} to {_hz(request.stop)}, rms",
             Number(math.sqrt(max(result.integrated, 0.0)), rms)),
            ("1/f corner", Number(result.corner, "Hz") if result.corner is not None else "none"),
            ("how the corner was found", result.corner_note))


def _noise_plot(result) -> Figure:
    spectrum, request = result.spectrum, result.request
    f = tuple(float(v) for v in spectrum.frequencies)
    spectra = spectrum.element_spectra()
    ranked = [row.element for row in spectrum.by_element(request.at)][:NOISE_CURVES]
    curves = [Curve(f, tuple(float(v) for v in spectrum.total ** 0.5), "total")]
    curves += [Curve(f, tuple(float(v) for v in spectra[e] ** 0.5), e) for e in ranked]
    markers = [Marker(request.at, "ranked here", colour="tab:gray")]
    if result.corner and f[0] <= result.corner <= f[-1]:
        markers.append(Marker(result.corner, "1/f corner", colour="black"))
    label = spectrum.output.label
    plot = Plot("noise", f"Output noise {label} against frequency", tuple(curves), "frequency [Hz]",
                f"{label} noise [{spectrum.output.root_unit}]", tuple(markers), log_x=True, log_y=True)
    return Figure(plot, f"Output noise density (square root) of {label}: the total and the {len(ranked)} largest "
                        "devices.")


def noise_section(context: NoteContext) -> Section:
    """Output noise at the operating point: totals, ranked devices with their shares, the spectrum."""
    from ..pipeline.noise import noise_analysis

    request = noise_request(context)
    result, failed = _analysed(noise_analysis, context, request, "noise", _NOISE_TITLE)
    if failed is not None:
        return failed
    spectrum = result.spectrum
    at = float(spectrum.frequencies[spectrum.index(request.at)])
    ranked = tuple((row.element, row.kind, Number(row.density, spectrum.output.unit), Number(row.share, percent=True))
                   for row in spectrum.by_element(at))
    blocks: list = [
        Paragraph(f"Output noise {spectrum.output.label} at the operating point ({result.bias.temperature:g} degC): "
                  "thermal noise of the resistors and of the devices' channels and base resistances, shot noise of "
                  "the junction currents, flicker noise where a card gives KF; each source's transfer to the output "
                  f"solved numerically from {_hz(request.start)} to {_hz(request.stop)} ({request.per_decade} points "
                  "per decade) with the device capacitances (`symbias noise` gives the closed forms)."),
        Table(("quantity", "value"), _noise_rows(result), "Output noise"),
        Table(("device", "sources", "density at the output", "share"), ranked,
              f"Contributions at {_hz(at)}, largest first"),
        _noise_plot(result),
    ]
    return _with_notes("noise", _NOISE_TITLE, blocks, result.notes)
