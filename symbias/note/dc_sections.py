"""Sections of a design note on large-signal behaviour: the DC mirror ratio and its error budget
(systematic by cause, random by device with a Monte Carlo check), the compliance curve, the
temperature curve and the supply sweep.

Section builders of the note package (:class:`~symbias.note.context.NoteContext`
-> :class:`~symbias.note.model.Section`).  The systematic error is
:func:`symbias.pipeline.mirror_ratio`'s; the random error is Pelgrom's law
(:mod:`symbias.dc.mismatch`) pushed through the circuit by batched DC solves
(:func:`symbias.dc.operating_point.operating_points`): one solve per varying
parameter at one sigma for the first-order budget by device, and seeded Monte
Carlo samples for the distribution.  Sweeps are :func:`symbias.pipeline.run_sweep`'s.

Examples
--------
>>> from symbias.pipeline import load_target, design_inputs
>>> from symbias.process import demo_process_path
>>> from symbias.note.context import NoteRequest, note_context
>>> target = load_target("bjt-simple-mirror")
>>> inputs = design_inputs(target, demo_process_path())
>>> context = note_context(target, inputs, NoteRequest(approximate=False, monte_carlo=50))
>>> budget = random_budget(context)
>>> [d for d, _ in budget.devices], budget.samples.size
(['Q1', 'Q2'], 50)
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import SymbiasError
from .context import NoteContext, built_in, input_source
from .model import Curve, Figure, Marker, Number, Paragraph, Plot, Section, Table

__all__ = ["RandomBudget", "random_budget", "ratio_section", "random_section", "compliance_section",
           "temperature_section", "supply_section", "output_sweep_request", "supply_sweep_request",
           "temperature_sweep_request"]


def ratio_section(context: NoteContext) -> Section:
    """The DC ratio ``Iout/Iin`` at the operating point and its systematic error, cause by cause."""
    ratio = next((r.dc_ratio for r in context.derivation.results if r.dc_ratio is not None), None)
    if ratio is None:
        source = input_source(context)
        if context.kind == "mirror" and source is not None:
            from ..pipeline import mirror_ratio

            ratio = mirror_ratio(context.target, context.inputs, context.output, source, point=context.point)
    if ratio is None:
        why = ("a reference has no current ratio; its output voltage is in the operating point"
               if context.kind == "reference" else "the cell has no input current source, so there is no ratio")
        return Section("ratio", "DC mirror ratio and error budget", (Paragraph(f"Not applicable: {why}."),))
    rows = (("input current " + ratio.input, Number(ratio.input_current, "A")),
            ("output current " + ratio.output, Number(ratio.output_current, "A")),
            ("ratio Iout/Iin", Number(ratio.ratio, "1", digits=6)),
            ("ideal ratio (every cause removed)", Number(ratio.ideal, "1", digits=6)),
            ("systematic error 1 - ratio/ideal", Number(ratio.error, percent=True)))
    causes = tuple((c.name, Number(c.exact, percent=True), f"`{c.formula}`" if c.formula else "no power law",
                    Number(c.leading, percent=True) if c.leading is not None else "", c.parameter)
                   for c in ratio.causes)
    causes += (("interaction of the causes", Number(ratio.interaction, percent=True), "", "", ""),)
    return Section("ratio", "DC mirror ratio and error budget", (
        Paragraph(f"The DC ratio at the operating point ({ratio.temperature:g} degC); {ratio.meaning}. Each cause's "
                  "exact error is the error with that cause alone present (the others removed by their model "
                  "parameters); its leading-order form is the first term in the cause's small parameter."),
        Table(("quantity", "value"), rows, "DC ratio"),
        Table(("cause", "exact error", "leading order", "its value", "small parameter"), causes,
              "Systematic error by cause"),
    ))


@dataclass(frozen=True, eq=False)
class RandomBudget:
    """The random error of the output: first order by device, and Monte Carlo samples.

    Attributes
    ----------
    nominal : float
        The output at the operating point (A or V).
    parameters : tuple of (str, float, float, float)
        Sample key (``Q1.IS``), nominal value, sigma, relative output change per sigma.
    devices : tuple of (str, float)
        Device and its first-order relative sigma of the output (root sum of squares of its parameters).
    total : float
        First-order relative sigma of the output (all devices).
    samples : ndarray
        Relative deviation of the output in each converged Monte Carlo sample.
    failed : int
        Samples that did not converge.
    coefficients : tuple of (str, str, float, str)
        Device, coefficient name (``AVT``, ``ABETA``, ``AIS``), value and unit.
    """

    nominal: float
    parameters: tuple[tuple[str, float, float, float], ...]
    devices: tuple[tuple[str, float], ...]
    total: float
    samples: Any
    failed: int
    coefficients: tuple[tuple[str, str, float, str], ...]

    @property
    def sigma(self) -> float:
        """Standard deviation of the Monte Carlo samples (relative), nan without samples."""
        return float(np.std(self.samples, ddof=1)) if self.samples.size > 1 else math.nan


_COEFFICIENTS = {"M": (("AVT", "V m"), ("ABETA", "m")), "Q": (("AIS", "1"),), "D": (("AIS", "1"),)}


def random_budget(context: NoteContext) -> RandomBudget:
    """Pelgrom mismatch of every device pushed through the circuit (first order and Monte Carlo).

    Raises
    ------
    ProcessError
        When no device has mismatch coefficients.
    AnalysisError, ConvergenceError
        From the solves.
    """
    from ..dc.mismatch import mismatch_samples, mismatch_sigmas
    from ..dc.operating_point import operating_points
    from ..pipeline.simulation import corner_target

    inputs = built_in(context.inputs)
    circuit = corner_target(context.target, inputs).circuit
    sigmas = mismatch_sigmas(circuit, inputs.process, inputs.values)
    if not sigmas:
        mismatch_samples(circuit, inputs.process, 1, values=inputs.values)  # raises the ProcessError that says why
    keys = list(sigmas)
    nominal = _output(context, context.point)
    steps = {k: np.array([sigmas[k][0] + (sigmas[k][1] if i == j else 0.0) for j in range(len(keys))])
             for i, k in enumerate(keys)}
    stepped = operating_points(circuit, inputs.process, steps, inputs.temperature, inputs.values,
                               start=context.point)
    change = (_outputs(context, stepped) - nominal) / nominal
    parameters = tuple((k, sigmas[k][0], sigmas[k][1], float(change[i])) for i, k in enumerate(keys))
    per_device: dict[str, float] = {}
    for key, _, _, relative in parameters:
        device = key.split(".")[0]
        per_device[device] = per_device.get(device, 0.0) + relative ** 2
    devices = tuple((d, math.sqrt(v)) for d, v in per_device.items())
    samples = np.array([])
    failed = 0
    if context.request.monte_carlo > 0:
        drawn = mismatch_samples(circuit, inputs.process, context.request.monte_carlo, context.request.seed,
                                 values=inputs.values)
        solved = operating_points(circuit, inputs.process, drawn, inputs.temperature, inputs.values,
                                  start=context.point)
        values = (_outputs(context, solved) - nominal) / nominal
        samples, failed = values[solved.converged], int(np.sum(~solved.converged))
    return RandomBudget(nominal, parameters, devices, math.sqrt(sum(v for v in per_device.values())), samples,
                        failed, _coefficients(circuit, inputs, [d for d, _ in devices]))


def _output(context: NoteContext, point) -> float:
    if context.output_unit == "V":
        return float(point.voltage(context.output))
    from ..conventions import output_current

    current = output_current(context.circuit, context.output)
    return float(current.sign * point.current(current.source))


def _outputs(context: NoteContext, points) -> np.ndarray:
    if context.output_unit == "V":
        return np.asarray(points.voltage(context.output), dtype=float)
    from ..conventions import output_current

    current = output_current(context.circuit, context.output)
    return current.sign * np.asarray(points.current(current.source), dtype=float)


def _coefficients(circuit, inputs, devices: list[str]) -> tuple[tuple[str, str, float, str], ...]:
    from ..devices.dc_context import resolved_model_parameters

    out = []
    for name in devices:
        element = circuit.element(name)
        _, params, _ = resolved_model_parameters(circuit, element, inputs.process, inputs.values)
        for key, unit in _COEFFICIENTS.get(element.kind, ()):
            if key in params:
                out.append((element.name, key, float(params[key]), unit))
    return tuple(out)


def random_section(context: NoteContext) -> Section:
    """Random error of the output: Pelgrom coefficients, first-order budget by device, Monte Carlo histogram."""
    title = "Random error (device mismatch)"
    try:
        budget = random_budget(context)
    except SymbiasError as err:
        return Section("random", title, (Paragraph(f"Not computed: {err.reason}."),))
    what = "output voltage" if context.output_unit == "V" else "output current (and so the ratio)"
    coefficients = tuple((d, k, Number(v, u)) for d, k, v, u in budget.coefficients)
    by_device = tuple((d, Number(s, percent=True)) for d, s in sorted(budget.devices, key=lambda r: -r[1]))
    blocks: list = [
        Paragraph(f"Pelgrom's law with the coefficients of the process file (or the .model cards): each device's "
                  f"parameters vary independently; the relative sigma of the {what} is taken first to first order, "
                  "device by device (one DC solve per parameter at one sigma), then from seeded Monte Carlo samples "
                  "solved in one batch."),
        Table(("device", "coefficient", "value"), coefficients, "Mismatch coefficients"),
        Table(("device", "relative sigma of the output"), by_device + (("all, first order", Number(
            budget.total, percent=True)),), "First-order random error by device"),
    ]
    if budget.samples.size:
        stats = (("samples (seed %d)" % context.request.seed, Number(budget.samples.size, "1")),
                 ("not converged", Number(budget.failed, "1")),
                 ("mean deviation", Number(float(np.mean(budget.samples)), percent=True)),
                 ("sigma", Number(budget.sigma, percent=True)),
                 ("3 sigma", Number(3 * budget.sigma, percent=True)))
        blocks.append(Table(("Monte Carlo", "value"), stats, "Monte Carlo"))
        plot = Plot("monte_carlo", "Monte Carlo: relative deviation of the output",
                    (Curve((), tuple(100 * budget.samples), f"{budget.samples.size} samples", bins=30),),
                    "deviation from nominal [%]", "samples",
                    markers=(Marker(100 * budget.sigma, "+1 sigma"), Marker(-100 * budget.sigma, "-1 sigma")),
                    histogram=True)
        blocks.append(Figure(plot, f"Monte Carlo histogram of the {what}, {budget.samples.size} samples, seed "
                                   f"{context.request.seed}."))
    return Section("random", title, tuple(blocks))


def _source_value(context: NoteContext, name: str) -> float:
    element = context.circuit.element(name)
    return float(context.point.voltage(element.nodes[0]) - context.point.voltage(element.nodes[1]))


def output_sweep_request(context: NoteContext):
    """The output sweep: the output source from 0 V to the larger of the supply and 1.5 times its own value."""
    from ..pipeline import SweepRequest

    nominal = abs(_source_value(context, context.output))
    supply = abs(_source_value(context, context.supply)) if context.supply else 0.0
    stop = max(supply, 1.5 * nominal, 1.0)
    return SweepRequest(context.output, 0.0, stop, context.request.output_points, context.output_probe)


def temperature_sweep_request(context: NoteContext):
    """The temperature sweep over the request's range."""
    from ..pipeline import SweepRequest

    low, high = context.request.temperatures
    return SweepRequest("temp", low, high, context.request.temperature_points, context.output_probe)


def supply_sweep_request(context: NoteContext):
    """The supply sweep around the nominal supply (None without a supply)."""
    from ..pipeline import SweepRequest

    if context.supply is None:
        return None
    nominal = _source_value(context, context.supply)
    low, high = context.request.supply_span
    return SweepRequest(context.supply, low * nominal, high * nominal, context.request.supply_points,
                        context.output_probe)


#: Fractions of the range a failed sweep is started again from (a junction forced on near 0 V, no solution there).
_RETRY_STARTS = (0.25, 0.5)


def _sweep(context: NoteContext, request):
    """Run a sweep; where it fails at its low end, start it again higher up.

    Returns (result or None, request actually run, why it was shortened or not run).
    """
    from dataclasses import replace

    from ..pipeline import run_sweep

    try:
        return run_sweep(context.target, built_in(context.inputs), request), request, ""
    except SymbiasError as err:
        first = err
    if request.varies_temperature:
        return None, request, f"Not computed: {first.reason}."
    for fraction in _RETRY_STARTS:
        shorter = replace(request, start=request.start + fraction * (request.stop - request.start))
        try:
            result = run_sweep(context.target, built_in(context.inputs), shorter)
        except SymbiasError:
            continue
        return result, shorter, (f"From {request.start:g} the sweep failed ({first.reason}); it starts at "
                                 f"{shorter.start:g} instead.")
    return None, request, f"Not computed: {first.reason}."


def _curve(result) -> Curve:
    return Curve(tuple(float(v) for v in result.sweep.values), tuple(float(v) for v in result.values),
                 result.output)


def _spans(result) -> tuple:
    return tuple((float(a), float(b), "off the conducting state") for a, b in result.branch.lost)


def compliance_section(context: NoteContext) -> tuple[Section, Any]:
    """Output current against output voltage with the compliance (headroom) marked; the sweep request beside."""
    title = "Compliance"
    if context.kind == "reference":
        return Section("compliance", title, (Paragraph("Not applicable: the output is a node voltage."),)), None
    result, request, why = _sweep(context, output_sweep_request(context))
    if result is None:
        return Section("compliance", title, (Paragraph(why),)), None
    m = result.metrics
    rows = (("compliance by current (low side)", Number(m.by_current_low, "V")),
            ("first device out of its region (low side)", m.device_low or "-"),
            ("compliance by device region (low side)", Number(m.by_region_low, "V")),
            ("output current at the reference voltage", Number(m.reference_current, "A")),
            ("reference voltage", Number(m.reference_voltage, "V")))
    markers = tuple(Marker(v, label, colour=colour) for v, label, colour in (
        (m.by_current_low, "compliance (headroom)", "tab:red"), (m.by_region_low, "region edge", "tab:orange"),
        (abs(_source_value(context, context.output)), "operating point", "tab:green")) if v is not None)
    plot = Plot("compliance", "Output current against output voltage", (_curve(result),),
                f"{result.sweep.variable} [V]", f"{result.output} [A]", markers, _spans(result))
    return Section("compliance", title, (*((Paragraph(why),) if why else ()),
        Paragraph(f"The output source swept from {result.sweep.values[0]:g} V to {result.sweep.values[-1]:g} V "
                  f"({result.sweep.values.size} points, built-in models); compliance is where the current departs by "
                  f"{100 * m.fraction:g} % from its {m.basis} at the reference voltage."),
        Table(("quantity", "value"), rows, "Compliance"),
        Figure(plot, "Output current against output voltage; the compliance (headroom) is marked."),
    )), request


def temperature_section(context: NoteContext) -> tuple[Section, Any]:
    """Output against temperature: box TC, slope, zero-slope temperature, curvature; the sweep request beside."""
    result, request, why = _sweep(context, temperature_sweep_request(context))
    if result is None:
        return Section("temperature", "Temperature", (Paragraph(why),)), None
    m = result.metrics
    unit = result.output_unit
    rows = (("output at the nominal temperature", Number(m.nominal_value, unit)),
            ("lowest output", Number(m.minimum, unit)), ("highest output", Number(m.maximum, unit)),
            ("TC, box method", Number(m.box_tc_ppm, "ppm/degC")),
            ("slope at the nominal temperature", Number(m.slope_ppm, "ppm/degC")),
            ("temperature of zero slope", Number(m.zero_slope_temperature, "degC")),
            ("curvature, relative", Number(m.curvature_ppm, "ppm/degC^2")))
    markers = [Marker(m.minimum, "box: lowest", "y", "tab:gray"), Marker(m.maximum, "box: highest", "y", "tab:gray")]
    if m.zero_slope_temperature is not None:
        markers.append(Marker(m.zero_slope_temperature, "zero slope", colour="tab:green"))
    plot = Plot("temperature", "Output against temperature", (_curve(result),), "temperature [degC]",
                f"{result.output} [{unit}]", tuple(markers), _spans(result))
    low, high = context.request.temperatures
    return Section("temperature", "Temperature", (
        Paragraph(f"The temperature swept from {low:g} to {high:g} degC ({result.sweep.values.size} points, built-in "
                  "models); the box TC is (highest - lowest) / (nominal output x temperature span)."),
        Table(("quantity", "value"), rows, "Temperature behaviour"),
        Figure(plot, "Output against temperature with the box (lowest, highest) and the zero-slope temperature."),
    )), request


def supply_section(context: NoteContext) -> tuple[Section, Any]:
    """Output against supply and the line sensitivity; the sweep request beside (None without a supply)."""
    if context.supply is None:
        return Section("supply", "Supply", (Paragraph("Not applicable: the circuit has no supply source."),)), None
    result, request, why = _sweep(context, supply_sweep_request(context))
    if result is None:
        return Section("supply", "Supply", (Paragraph(why),)), None
    m = result.metrics
    rows = (("nominal supply", Number(m.nominal_supply, "V")), ("output there", Number(m.nominal_value,
                                                                                        result.output_unit)),
            ("line sensitivity", Number(m.percent_per_volt, "%/V")),
            ("normalised sensitivity (dX/X)/(dV/V)", Number(m.normalized_db, "dB")))
    plot = Plot("supply", "Output against supply", (_curve(result),), f"{request.vary} [V]",
                f"{result.output} [{result.output_unit}]", (Marker(m.nominal_supply, "nominal supply",
                                                                   colour="tab:green"),), _spans(result))
    return Section("supply", "Supply", (*((Paragraph(why),) if why else ()),
        Paragraph(f"{request.vary} swept from {request.start:g} V to {request.stop:g} V ({request.points} points, "
                  "built-in models)."),
        Table(("quantity", "value"), rows, "Line sensitivity"),
        Figure(plot, "Output against supply; the nominal supply is marked."),
    )), request
