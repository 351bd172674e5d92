"""The metrics of a sized candidate, each with its unit and its source (formula, operating point or sweep).

Design layer, the step after :mod:`~symbias.design.sizing` (a sized
candidate -> a mapping of metric name to :class:`Metric`).  The names are the
spec's (``symbias.design.spec.METRICS``: ``headroom`` is checked against
``headroom_max``, ``rout`` against ``rout_min``, ...); a few more are shown
beside them.  Every number is taken at the nominal supply, 27 degC and the
spec's output voltage unless its source says otherwise:

==================  ==========  ===================================================================
metric              unit        source
==================  ==========  ===================================================================
rout                ohm         exact output-resistance formula (hybrid-pi with ro and gmb, every
                                device its own symbols) at the operating point; the lower of the
                                first output and a copy of it
headroom            V           output sweep: the lowest voltage across the output at which the
                                current stays within 1 % of its tangent at the operating point;
                                beside it the headroom formula (:mod:`symbias.dc.headroom`); a
                                reference: the lowest supply within 1 % of its output, less it
ratio_error         1           DC ratio ``1 - (Iout/Iin)/ideal`` at the operating point
                                (:func:`symbias.pipeline.mirror_ratio`), and its worst case over
                                the output range (headroom to the highest supply) from the sweep
random_error        1           Pelgrom's law to first order at ``sigma`` standard deviations
                                (:mod:`symbias.design.montecarlo`); the Monte Carlo run beside it
tc                  ppm/degC    temperature sweep over the spec's range, box method
line_sensitivity    %/V         supply sweep over the spec's range, ``|dX/X|/dV``
supply_min          V           the supply the block needs: its current sources keep ``source_drop``
                                across them, and a supply sweep keeps the output within 1 %
devices, area       1, um^2     counted: transistors and diodes; gate, emitter and resistor area
                                (``[layout]`` of the process)
supply_current      A           the current the supply (and bias) sources deliver
voltage_error       1           a reference's output voltage against the spec's
==================  ==========  ===================================================================

A metric that cannot be measured holds ``None`` and says why; the verdict
counts that as a failed requirement where the spec has one.

Examples
--------
>>> from symbias.design.spec import parse_spec
>>> from symbias.design.candidates import candidates, spec_process
>>> from symbias.design.sizing import size
>>> spec = parse_spec('[block]\\nfamily = "current-mirror"\\ncurrent = "5uA"\\n[supply]\\nmin = 1.6\\nmax = 2\\n')
>>> mirror, = candidates(spec, only=["bjt-simple-mirror"])
>>> process = spec_process(spec)
>>> found = measure(mirror, spec, process, size(mirror, spec, process))
>>> round(found["rout"].value / 1e6, 2), found["rout"].unit, found["devices"].value
(12.02, 'ohm', 2)
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any, Mapping

import numpy as np

from ..errors import SymbiasError
from .candidates import Candidate, output_value, with_numbers
from .stages import StageTimer

__all__ = ["Metric", "measure", "DEFAULT_TEMPERATURE", "COMPLIANCE_FRACTION"]

#: Temperature range of the TC when the spec gives none (degC).
DEFAULT_TEMPERATURE = (-40.0, 125.0)
#: Departure of the output that ends its working range (headroom, minimum supply).
COMPLIANCE_FRACTION = 0.01
_SWEEP_POINTS, _TEMPERATURE_STEP, _LINE_POINTS = 100, 5.0, 9


@dataclass(frozen=True)
class Metric:
    """One measured quantity of a candidate.

    Attributes
    ----------
    name : str
    value : float or None
        None when it could not be measured (``note`` says why) or does not apply.
    unit : str
    source : str
        How it was found.
    detail : mapping
        Further numbers (the formula beside a sweep, the worst case, the largest contributions).
    note : str
    """

    name: str
    value: float | None
    unit: str
    source: str
    detail: Mapping[str, Any] = field(default_factory=dict)
    note: str = ""

    def __post_init__(self) -> None:
        object.__setattr__(self, "detail", MappingProxyType(dict(self.detail)))

    def __reduce__(self):
        return (Metric, (self.name, self.value, self.unit, self.source, dict(self.detail), self.note))

    def to_dict(self) -> dict[str, Any]:
        """Plain data: ``value``, ``unit``, ``source`` and the rest."""
        out = {"value": self.value, "unit": self.unit, "source": self.source}
        out.update(self.detail)
        if self.note:
            out["note"] = self.note
        return out


def _missing(name: str, unit: str, source: str, err: SymbiasError) -> Metric:
    return Metric(name, None, unit, source, note=f"could not be measured: {err.reason}")


def measure(candidate: Candidate, spec, process, sizing, timer: StageTimer | None = None) -> dict[str, Metric]:
    """Every metric of a sized candidate (see the module docstring)."""
    timer = timer or StageTimer()
    values, point = dict(sizing.values), sizing.point
    out: dict[str, Metric] = {}
    with timer.stage("formulas"):
        out["rout"] = _guarded(_rout, "rout", "ohm", "exact formula", candidate, values, point)
    with timer.stage("operating points"):
        if candidate.family == "current-mirror":
            out["ratio_error"] = _guarded(_ratio_error, "ratio_error", "1", "DC ratio", candidate, process, values,
                                          point)
        out["random_error"] = _guarded(_random_error, "random_error", "1", "Pelgrom, first order", candidate,
                                       process, values, point, spec.limits.sigma)
        if candidate.family == "reference":
            out["voltage"] = Metric("voltage", float(output_value(candidate, point)), "V", "operating point")
            if spec.block.voltage is not None:
                out["voltage_error"] = Metric("voltage_error", out["voltage"].value / spec.block.voltage - 1.0, "1",
                                              "operating point against the spec's voltage")
    with timer.stage("sweeps"):
        out.update(_sweeps(candidate, spec, process, values, point, out.get("ratio_error")))
    with timer.stage("formulas"):
        if "headroom" in out and out["headroom"].value is not None and candidate.family != "reference":
            out["headroom"] = _with_formula(out["headroom"], candidate, process, values, point)
    out["devices"] = Metric("devices", len(candidate.circuit.devices), "1", "counted: transistors and diodes")
    out["area"] = _area(candidate, process, values)
    out["supply_current"] = Metric("supply_current", _supply_current(candidate, point), "A",
                                   "operating point: current of the supply and bias sources")
    with timer.stage("formulas"):
        out.update(_spectral(candidate, spec, process, values))
    return out


def _guarded(function, name: str, unit: str, source: str, *args) -> Metric:
    try:
        return function(*args)
    except SymbiasError as err:  # the metric says why it has no value; the verdict counts it as failed
        return _missing(name, unit, source, err)


def _rout(candidate: Candidate, values, point) -> Metric:
    """The exact output resistance of the first output and of a copy of it, at the operating point."""
    from ..analyses import output_resistance
    from ..devices.options import SmallSignalOptions
    from ..linear.network import bias_values
    from ..pipeline.derivation import value_at

    options = SmallSignalOptions(ro=True, gmb=True)
    circuit = candidate.formula_circuit
    ports = [p for p in (candidate.output, f"{candidate.output}_2") if circuit.has_element(p) or p in circuit.nodes]
    numbers = {**values, **bias_values(circuit, point.small_signal_values(), options)}
    found = {}
    for port in ports:
        formula = output_resistance(circuit, port, options)
        value, missing = value_at(formula, numbers)
        found[port] = math.inf if value is None and not missing else value
    worst = min(found, key=lambda p: found[p] if found[p] is not None else math.inf)
    detail = {"per_output": {p: v for p, v in found.items()}} if len(found) > 1 else {}
    return Metric("rout", found[worst], "ohm", "exact formula (hybrid-pi, ro, gmb) at the operating point",
                  {**detail, "port": worst})


def _ratio_error(candidate: Candidate, process, values, point) -> Metric:
    from ..pipeline.mirror_ratio import mirror_ratio
    from ..pipeline.targets import DesignInputs

    inputs = DesignInputs(process, 27.0, values)
    ratio = mirror_ratio(candidate.target(), inputs, candidate.output, candidate.input, point=point)
    causes = {c.name: {"exact": c.exact, "leading_order": c.formula} for c in ratio.causes}
    return Metric("ratio_error", ratio.error, "1", "DC ratio 1 - (Iout/Iin)/ideal at the operating point",
                  {"ratio": ratio.ratio, "ideal": ratio.ideal, "input_current": ratio.input_current,
                   "causes": causes})


def _random_error(candidate: Candidate, process, values, point, sigma: float) -> Metric:
    from .montecarlo import first_order_random

    found = first_order_random(candidate, process, values, point)
    largest = {name: share for name, share in found.contributions[:3]}
    return Metric("random_error", sigma * found.relative, "1",
                  f"Pelgrom's law to first order, {sigma:g} sigma", {"sigma": sigma, "relative_sigma": found.relative,
                                                                      "largest_variance_shares": largest})


def _sweeps(candidate: Candidate, spec, process, values, point, ratio: Metric | None) -> dict[str, Metric]:
    """headroom (and the worst ratio error over the output range), tc, line sensitivity, minimum supply."""
    out: dict[str, Metric] = {}
    if candidate.family == "reference":
        out["headroom"] = _guarded(_reference_headroom, "headroom", "V", "supply sweep", candidate, spec, process,
                                   values, point)
    else:
        out["headroom"] = _guarded(_output_sweep, "headroom", "V", "output sweep", candidate, spec, process,
                                   values, point, ratio)
        if ratio is not None and "worst_over_output_range" in out["headroom"].detail:
            worst = out["headroom"].detail
            out["ratio_error"] = Metric(ratio.name, ratio.value, ratio.unit, ratio.source,
                                        {**ratio.detail, "worst_over_output_range": worst["worst_over_output_range"],
                                         "output_range": worst["output_range"]}, ratio.note)
            out["headroom"] = Metric("headroom", out["headroom"].value, "V", out["headroom"].source,
                                     {k: v for k, v in worst.items() if k not in ("worst_over_output_range",
                                                                                  "output_range")})
    out["tc"] = _guarded(_temperature, "tc", "ppm/degC", "temperature sweep", candidate, spec, process, values,
                         point)
    supplies = candidate.topology.roles.get("supply", ())
    if supplies:
        out["line_sensitivity"] = _guarded(_line, "line_sensitivity", "%/V", "supply sweep", candidate, spec,
                                           process, values, point, supplies[0])
    out["supply_min"] = _guarded(_supply_min, "supply_min", "V", "current-source drops and supply sweep", candidate,
                                 spec, process, values, point, supplies)
    return out


def _probe(candidate: Candidate) -> str:
    return f"V({candidate.output})" if candidate.family == "reference" else f"Iout({candidate.output})"


def _output_sweep(candidate: Candidate, spec, process, values, point, ratio: Metric | None) -> Metric:
    from ..dc.sweep import compliance, sweep_source

    top = max(spec.supply.max, 2.0 * spec.output_voltage)
    sweep, low = _sweep_down(candidate, candidate.output, top, process, values, point)
    # measured from the top of the range, where every candidate works: a cell already out of its working
    # region at the spec's output voltage shows its true headroom, not the tangent of its triode region
    found = compliance(sweep, _probe(candidate), fraction=COMPLIANCE_FRACTION, reference=top)
    headroom = found.by_current_low if found.by_current_low is not None else low
    starved = _starved_source(candidate, sweep, spec.supply.source_drop)
    detail: dict[str, Any] = {"by_current": found.by_current_low, "by_region": found.by_region_low,
                              "first_device_out": found.device_low, "by_current_source": starved,
                              "swept_from": low}
    if starved is not None and starved > headroom:
        headroom = starved
    note = "" if headroom > low or low == 0 else f"at most: the DC model does not solve below {low:.3g} V"
    if ratio is not None and ratio.value is not None:
        low = max(spec.limits.headroom_max or headroom, headroom)
        inside = (sweep.values >= low) & (sweep.values <= spec.supply.max)
        if inside.any():
            iin, ideal = ratio.detail["input_current"], ratio.detail["ideal"]
            errors = 1.0 - sweep.probe(_probe(candidate))[inside] / iin / ideal
            worst = errors[np.argmax(np.abs(errors))]
            detail.update(worst_over_output_range=float(worst), output_range=[float(low), float(spec.supply.max)])
    source = f"output sweep: lowest voltage across the output within {COMPLIANCE_FRACTION:.0%} of the tangent at " \
             f"{top:g} V, every current source keeping {spec.supply.source_drop:g} V"
    return Metric("headroom", float(headroom), "V", source, detail, note)


def _starved_source(candidate: Candidate, sweep, drop: float) -> float | None:
    """The highest swept voltage below which a current source feeding the block keeps less than ``drop``.

    An ideal current source keeps its current at any voltage; a real one (a
    transistor from the supply) needs ``drop`` across it, so where the block
    pushes a source's node past that, the block has lost its current.
    Linear between sweep points; None when every source keeps its drop.
    """
    x = sweep.values
    order = np.argsort(x)[::-1]  # from the top, where the block works, down
    worst = None
    from ..circuit import GROUND

    def volts(node: str) -> np.ndarray:
        return np.zeros_like(x) if node == GROUND else sweep.probe(f"V({node})")

    for source in candidate.circuit.elements_of("I"):
        plus, minus = source.nodes[:2]
        across = volts(plus) - volts(minus)
        short = across[order] < drop
        if not short.any() or short[0]:
            continue
        k = int(np.argmax(short))
        a, b = order[k - 1], order[k]
        t = (across[a] - drop) / (across[a] - across[b]) if across[a] != across[b] else 0.0
        edge = float(x[a] + t * (x[b] - x[a]))
        worst = edge if worst is None else max(worst, edge)
    return worst


def _sweep_down(candidate: Candidate, source: str, top: float, process, values, point):
    """A sweep of ``source`` from as low as the DC model solves up to ``top``, and where it starts.

    From 0 V first; a model that cannot be solved that low (a junction forced
    on hard by a voltage source, a Newton that does not settle) is swept again
    from a tenth of ``top`` higher each time.  The compliance found in the
    sweep is then exact; one not reached is at most the sweep's start.  (Each failed
    attempt costs the solver's full set of fallbacks, so the steps are coarse.)

    Raises
    ------
    SymbiasError
        When no range down to half of ``top`` solves (the last failure).
    """
    from ..dc.sweep import sweep_source

    failure: SymbiasError | None = None
    for low in (0.0, 0.15 * top, 0.3 * top, 0.5 * top):
        try:
            return sweep_source(candidate.circuit, source, low, top, _SWEEP_POINTS, process=process,
                                temperature=27.0, values=values, follow=point), low
        except SymbiasError as err:  # tried again from higher up; the last failure is raised below
            failure = err
    raise failure


def _with_formula(metric: Metric, candidate: Candidate, process, values, point) -> Metric:
    """The swept headroom with the headroom formula's value and form beside it."""
    from ..dc.headroom import headroom

    if candidate.direction == "source":  # the closed form reads the output node as the source's first node
        return Metric(metric.name, metric.value, metric.unit, metric.source,
                      {**metric.detail, "formula": None,
                       "formula_note": "the headroom formula covers outputs to ground (sinks) only"}, metric.note)
    try:  # the formula reads device sizes as numbers
        found = headroom(with_numbers(candidate.circuit, values), candidate.output, process, 27.0, values, op=point)
    except SymbiasError as err:  # no closed form for this circuit: the sweep stands alone and says so
        return Metric(metric.name, metric.value, metric.unit, metric.source,
                      {**metric.detail, "formula": None, "formula_note": err.reason}, metric.note)
    value = found.value if found.kind == "minimum" else None
    return Metric(metric.name, metric.value, metric.unit, metric.source,
                  {**metric.detail, "formula": value, "formula_form": str(found.simplified)}, metric.note)


def _reference_headroom(candidate: Candidate, spec, process, values, point) -> Metric:
    from ..dc.sweep import compliance, sweep_source

    supplies = candidate.topology.roles.get("supply", ())
    if not supplies:
        return Metric("headroom", None, "V", "supply sweep", note="no supply source to sweep")
    sweep, low = _sweep_down(candidate, supplies[0], spec.supply.max, process, values, point)
    found = compliance(sweep, _probe(candidate), fraction=COMPLIANCE_FRACTION, reference=spec.supply.max)
    lowest = found.by_current_low if found.by_current_low is not None else low
    return Metric("headroom", float(lowest - output_value(candidate, point)), "V",
                  f"supply sweep: lowest supply within {COMPLIANCE_FRACTION:.0%} of the tangent at {spec.supply.max:g} "
                  f"V, less the output", {"supply": lowest})


def _temperature(candidate: Candidate, spec, process, values, point) -> Metric:
    from ..dc.sweep import sweep_temperature, temperature_metrics

    low, high = spec.limits.temperature or DEFAULT_TEMPERATURE
    points = max(5, int(round((high - low) / _TEMPERATURE_STEP)) + 1)
    sweep = sweep_temperature(candidate.circuit, low, high, points, process=process, values=values, follow=point)
    found = temperature_metrics(sweep, _probe(candidate))
    return Metric("tc", found.box_tc_ppm, "ppm/degC", f"temperature sweep {low:g} to {high:g} degC, box method",
                  {"slope_ppm": found.slope_ppm, "zero_slope_temperature": found.zero_slope_temperature,
                   "minimum": found.minimum, "maximum": found.maximum})


def _line(candidate: Candidate, spec, process, values, point, supply: str) -> Metric:
    from ..dc.sweep import sweep_source

    sweep = sweep_source(candidate.circuit, supply, spec.supply.min, spec.supply.max, _LINE_POINTS, process=process,
                         temperature=27.0, values=values, follow=point)
    y = sweep.probe(_probe(candidate))
    nominal = output_value(candidate, point)
    percent = float((y[-1] - y[0]) / (nominal * (spec.supply.max - spec.supply.min)) * 100.0)
    return Metric("line_sensitivity", abs(percent), "%/V",
                  f"supply sweep {spec.supply.min:g} to {spec.supply.max:g} V", {"signed": percent})


def _supply_min(candidate: Candidate, spec, process, values, point, supplies) -> Metric:
    """The supply the block needs: every current source keeps its drop, and the output stays within 1 %."""
    from ..dc.sweep import compliance, sweep_source

    needed, why = 0.0, []
    nominal = spec.supply.nominal
    for source in candidate.circuit.elements_of("I"):
        plus, minus = source.nodes[:2]
        across = point.voltage(plus) - point.voltage(minus)
        need = nominal - across + spec.supply.source_drop
        if need > needed:
            needed, why = need, [f"{source.name} keeps {spec.supply.source_drop:g} V across it"]
    if supplies:
        sweep, _ = _sweep_down(candidate, supplies[0], spec.supply.max, process, values, point)
        found = compliance(sweep, _probe(candidate), fraction=COMPLIANCE_FRACTION, reference=spec.supply.max)
        if found.by_current_low is not None and found.by_current_low > needed:
            needed, why = found.by_current_low, [f"the output stays within {COMPLIANCE_FRACTION:.0%}"]
    return Metric("supply_min", float(needed), "V", "current-source drops and supply sweep",
                  {"set_by": why[0] if why else "nothing: the block works down to 0 V"})


def _area(candidate: Candidate, process, values) -> Metric:
    """Gate, emitter and resistor area (um^2) from the ``[layout]`` of the process."""
    from ..devices.dc_context import StampContext

    context = StampContext.create(candidate.circuit, process, values=values)
    layout = process.layout
    parts = {"gate": 0.0, "emitter": 0.0, "resistor": 0.0}
    for element in candidate.circuit.elements:
        if element.kind == "M":
            w, length = (float(context.instance(element, key, 1e-6)) for key in ("w", "l"))
            parts["gate"] += w * length * float(context.multiplier(element, ("m",))) * 1e12
        elif element.kind == "Q" and "emitter_area" in layout:
            parts["emitter"] += float(context.multiplier(element, ("m", "area"))) * layout["emitter_area"]
        elif element.kind == "R" and "resistor_width" in layout and "layer" in element.params:
            layer = process.resistor(str(element.params["layer"]))
            resistance = float(context.value(element, "resistance"))
            parts["resistor"] += layer.squares(resistance) * layout["resistor_width"] ** 2
    counted = [k for k, key in (("emitter", "emitter_area"), ("resistor", "resistor_width")) if key not in layout]
    note = f"{' and '.join(counted)} area not counted: the process has no [layout] for it" if counted else ""
    return Metric("area", sum(parts.values()), "um^2", "counted from the sizes and the process [layout]",
                  {f"{k}_area": v for k, v in parts.items()}, note)


def _supply_current(candidate: Candidate, point) -> float:
    roles = candidate.topology.roles
    sources = [n for n in (*roles.get("supply", ()), *roles.get("bias", ()))
               if candidate.circuit.element(n).kind != "I"]
    if not sources:  # no supply (an ideal amplifier feeds the cell): every source but the outputs
        sources = [n for n in point.branch_currents if n not in candidate.outputs]
    return float(sum(abs(point.current(n)) for n in sources))


def _spectral(candidate: Candidate, spec, process, values) -> dict[str, Metric]:
    """Output noise density and output impedance at the spec's frequencies (only where the spec asks).

    Small-signal analyses with capacitances at the operating point
    (:func:`symbias.pipeline.noise.output_noise_density`,
    :func:`symbias.pipeline.frequency.output_impedance_at`), on the circuit
    with one copy of the output branch, as the output resistance.
    """
    limits = spec.limits
    out: dict[str, Metric] = {}
    if limits.noise_frequency is None and limits.rout_min_frequency is None:
        return out
    from ..pipeline.targets import DesignInputs

    inputs = DesignInputs(process, 27.0, values)
    target = candidate.target(candidate.formula_circuit)
    if limits.noise_frequency is not None:
        unit = "V/sqrt(Hz)" if candidate.family == "reference" else "A/sqrt(Hz)"
        out["noise"] = _guarded(_noise, "noise", unit, "noise analysis", target, inputs, limits.noise_frequency, unit)
    if limits.rout_min_frequency is not None:
        out["rout_at_frequency"] = _guarded(_impedance, "rout_at_frequency", "ohm", "frequency analysis", target,
                                            inputs, limits.rout_min_frequency, candidate.output)
    return out


def _noise(target, inputs, frequency: float, unit: str) -> Metric:
    from ..pipeline.noise import output_noise_density

    density = output_noise_density(target, inputs, frequency)
    return Metric("noise", math.sqrt(density), unit, f"noise analysis (capacitances, every device's sources) at "
                                                     f"{frequency:g} Hz")


def _impedance(target, inputs, frequency: float, port: str) -> Metric:
    from ..pipeline.frequency import output_impedance_at

    return Metric("rout_at_frequency", output_impedance_at(target, inputs, frequency, port), "ohm",
                  f"|Zout| with capacitances at {frequency:g} Hz")
