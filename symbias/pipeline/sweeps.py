"""DC sweeps of a target and their metrics: compliance, line sensitivity, temperature coefficient.

Pipeline step for large-signal behaviour: a target, design inputs and a
:class:`SweepRequest` -> :class:`SweepResult` (the sweep and the metrics its
kind calls for):

* varying the source that holds the output (``Vout``): output current against
  output voltage and the compliance voltage, by current and by device region;
* varying any other source (the supply): line sensitivity of the output;
* varying ``temp``: box-method temperature coefficient, zero-slope temperature
  and curvature.

The sweep follows the state the operating point reports
(:func:`~symbias.pipeline.bias.operating_point_of`: the conducting state of a
self-biased cell): it starts at the swept value nearest the nominal one, from
that operating point, and :class:`BranchCheck` says where the circuit leaves
that branch.  Every metric has its unit (:data:`METRICS`,
:meth:`SweepResult.units`); the default output of a current source is
``Iout(Vout)``, signed as :mod:`symbias.conventions` says.

Examples
--------
>>> from symbias.pipeline.targets import load_target, design_inputs
>>> target = load_target("examples/simple_mirror.cir")
>>> result = run_sweep(target, design_inputs(target), SweepRequest("Vout", 0.0, 5.0, 51))
>>> result.kind, result.output, result.output_unit
('compliance', 'Iout(Vout)', 'A')
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Callable

from ..circuit import Circuit
from ..errors import CircuitError, SymbiasError, UsageError
from ..limits import check_points, temperature_problem
from .targets import DesignInputs, Target

__all__ = ["SweepRequest", "SweepResult", "BranchCheck", "run_sweep", "default_output", "TEMPERATURE", "METRICS"]

#: Metric key -> (label, unit) for each kind of sweep; ``{out}`` is the output's unit, ``{swept}`` the swept one's.
METRICS: dict[str, dict[str, tuple[str, str]]] = {
    "compliance": {
        "reference_voltage": ("reference output voltage", "V"),
        "reference_current": ("output current at the reference", "{out}"),
        "fraction": ("departure counted as failure", "1"),
        "basis": ("departure measured from", ""),
        "by_current_low": ("compliance by current, low side", "V"),
        "by_current_high": ("compliance by current, high side", "V"),
        "by_region_low": ("compliance by device region, low side", "V"),
        "by_region_high": ("compliance by device region, high side", "V"),
        "device_low": ("first device out of its region, low side", ""),
        "device_high": ("first device out of its region, high side", ""),
    },
    "temperature": {
        "output": ("output", ""),
        "nominal_temperature": ("nominal temperature", "degC"),
        "nominal_value": ("output at the nominal temperature", "{out}"),
        "minimum": ("lowest output", "{out}"),
        "maximum": ("highest output", "{out}"),
        "box_tc_ppm": ("TC, box method", "ppm/degC"),
        "slope_ppm": ("slope at the nominal temperature", "ppm/degC"),
        "zero_slope_temperature": ("temperature of zero slope", "degC"),
        "curvature": ("curvature", "{out}/degC^2"),
        "curvature_ppm": ("curvature, relative", "ppm/degC^2"),
    },
    "line": {
        "output": ("output", ""),
        "nominal_supply": ("nominal value of the swept source", "{swept}"),
        "nominal_value": ("output at the nominal value", "{out}"),
        "percent_per_volt": ("line sensitivity", "%/{swept}"),
        "normalized_db": ("normalised sensitivity (dX/X)/(dV/V)", "dB"),
        "rejection_db": ("DC rejection dV/dX", "dB"),
    },
}

#: The name that sweeps the temperature instead of a source.
TEMPERATURE = ("temp", "temperature")
_OUTPUT_SOURCES = ("vout", "vo", "vo1", "vout1")
_OUTPUT_NODES = ("vref", "ref", "vbg", "vo", "out", "vout")
_BASES = ("tangent", "level")


@dataclass(frozen=True)
class SweepRequest:
    """One sweep: what varies, over which range, and what is watched.

    Parameters
    ----------
    vary : str
        A voltage or current source, or ``temp``.
    start, stop : float
        First and last value (V, A or degC).
    points : int
        Number of points.
    output : str or None
        ``V(node)`` or ``I(element)``; None picks :func:`default_output`.
    fraction : float
        Compliance: departure of the output current that counts.
    basis : {"tangent", "level"}
        Compliance: measure the departure from the tangent at mid-sweep or from its level.

    Raises
    ------
    UsageError
        Fewer than 2 points, a range that is not finite, a temperature outside
        the models' range (:func:`symbias.limits.temperature_problem`).
    LimitError
        More than :data:`symbias.limits.MAX_SWEEP_POINTS` points.

    Examples
    --------
    >>> SweepRequest("temp", -40, 125).varies_temperature
    True
    """

    vary: str
    start: float
    stop: float
    points: int = 201
    output: str | None = None
    fraction: float = 0.01
    basis: str = "tangent"

    def __post_init__(self) -> None:
        if self.basis not in _BASES:
            raise UsageError(f"basis must be one of {', '.join(_BASES)}, got {self.basis!r}", path="--basis")
        if not 0 < self.fraction < 1:
            raise UsageError(f"fraction must be between 0 and 1, got {self.fraction:g}", path="--fraction")
        if self.points < 2:
            raise UsageError(f"a sweep needs at least 2 points, got {self.points}", path="--points")
        check_points(self.points)
        for value, flag in ((self.start, "--from"), (self.stop, "--to")):
            if not math.isfinite(value):
                raise UsageError(f"the sweep range must be finite, got {value}", path=flag)
            if self.varies_temperature and temperature_problem(value) is not None:
                raise UsageError(temperature_problem(value), path=flag)
        if not math.isfinite(self.stop - self.start):
            raise UsageError(f"the sweep range {self.start:g} .. {self.stop:g} is wider than floating point holds",
                             path="--to")

    @property
    def varies_temperature(self) -> bool:
        """True for a temperature sweep."""
        return self.vary.lower() in TEMPERATURE


@dataclass(frozen=True)
class BranchCheck:
    """Whether a sweep stayed on the state its operating point reports.

    Parameters
    ----------
    states : StateSurvey or None
        The DC states found at the nominal point (None without a search).
    reference_current : float or None
        Total transistor current of that state (A).
    lost : tuple of (float, float)
        Ranges of swept values where the total transistor current is below
        :data:`~symbias.dc.solutions.ZERO_FRACTION` of the reference: off the
        conducting branch (empty when there is one state, or none is lost).
    note : str or None
        Why the sweep could not start from the nominal operating point.
    """

    states: Any = None
    reference_current: float | None = None
    lost: tuple[tuple[float, float], ...] = ()
    note: str | None = None

    def to_dict(self) -> dict:
        """Plain-dict form for JSON."""
        return {"states": None if self.states is None else self.states.to_dict(),
                "reference_current": self.reference_current, "lost": [list(pair) for pair in self.lost],
                "note": self.note}


@dataclass(frozen=True, eq=False)
class SweepResult:
    """A sweep with the output watched and the metrics of its kind.

    Parameters
    ----------
    sweep : Sweep
        From :mod:`symbias.dc.sweep`.
    output : str
        The probe watched.
    kind : {"compliance", "line", "temperature"}
    metrics : Compliance, LineMetrics or TemperatureMetrics
    branch : BranchCheck
        Whether the sweep stayed on the reported state.
    """

    sweep: Any
    output: str
    kind: str
    metrics: Any
    branch: BranchCheck = BranchCheck()

    @property
    def values(self):
        """The output at every sweep point."""
        return self.sweep.probe(self.output)

    @property
    def output_unit(self) -> str:
        """``V`` for a voltage probe, ``A`` for a current."""
        return "V" if self.output.strip().lower().startswith("v(") or self.output.strip().lower() in \
            self.sweep.circuit.nodes else "A"

    @property
    def swept_unit(self) -> str:
        """``degC``, ``V`` (a voltage source) or ``A`` (a current source)."""
        if self.sweep.variable == "temp":
            return "degC"
        return "A" if self.sweep.circuit.element(self.sweep.variable).kind == "I" else "V"

    @property
    def output_meaning(self) -> str:
        """Which way the output counts: the convention of an ``Iout`` probe, SPICE's for ``I(...)``."""
        from ..conventions import OUTPUT_PROBE, SPICE_BRANCH, output_current

        text = self.output.strip()
        if text.lower().startswith(OUTPUT_PROBE.lower() + "("):
            return output_current(self.sweep.circuit, text[len(OUTPUT_PROBE) + 1:-1].strip()).meaning
        if self.output_unit == "A":
            return f"{SPICE_BRANCH} (a voltage source); from the first node to the second (other elements)"
        return "node voltage to ground"

    def units(self) -> dict[str, str]:
        """Metric key -> unit (see :data:`METRICS`)."""
        return {key: unit.format(out=self.output_unit, swept=self.swept_unit)
                for key, (_, unit) in METRICS[self.kind].items()}


def default_output(circuit: Circuit) -> str:
    """The output probe when none is given: the current of a source named Vout/Vo, else a node vref/out.

    Raises
    ------
    CircuitError
        When no source or node has one of the usual output names.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> default_output(parse_netlist("t\\nV1 vref 0 1\\nR1 vref 0 1k\\n"))
    'V(vref)'
    """
    for element in circuit.elements_of("V"):
        if element.key in _OUTPUT_SOURCES:
            return f"Iout({element.name})"
    for node in _OUTPUT_NODES:
        if node in circuit.nodes:
            return f"V({node})"
    raise CircuitError("no output named Vout or vref: give --out V(node) or --out I(element)", path=circuit.path)


def run_sweep(target: Target, inputs: DesignInputs, request: SweepRequest,
              progress: Callable[[int, int], None] | None = None) -> SweepResult:
    """Run a sweep on the conducting state and compute its metrics.

    Raises
    ------
    CircuitError, ConvergenceError
        From the DC solve, an unknown source or an unknown output.

    Examples
    --------
    >>> from symbias.pipeline.targets import load_target, design_inputs
    >>> target = load_target("examples/dc_bandgap_core.cir")
    >>> result = run_sweep(target, design_inputs(target), SweepRequest("temp", -40, 125, 34))
    >>> result.kind, result.output, result.branch.lost
    ('temperature', 'V(vo)', ())
    """
    from ..dc import sweep as dcs
    from .simulation import corner_target

    if inputs.models != "built-in":
        raise UsageError("sweeps use the built-in models (ngspice's own .dc runs on the deck of symbias deck)",
                         path="--models")
    circuit = corner_target(target, inputs).circuit
    dcs.sweep_points(request.start, request.stop, request.points)  # reject an empty range before any work
    output = request.output or default_output(circuit)
    guess = dict(inputs.guess) or None
    nominal, branch = _nominal(target, inputs)
    if request.varies_temperature:
        sweep = dcs.sweep_temperature(circuit, request.start, request.stop, request.points, process=inputs.process,
                                      values=inputs.values, guess=guess, progress=progress, follow=nominal)
    else:
        sweep = dcs.sweep_source(circuit, request.vary, request.start, request.stop, request.points,
                                 process=inputs.process, temperature=inputs.temperature, values=inputs.values,
                                 guess=guess, progress=progress, follow=nominal)
    sweep.probe(output)  # an unknown output fails here, before any metric
    branch = _branch(sweep, branch)
    if request.varies_temperature:
        return SweepResult(sweep, output, "temperature", dcs.temperature_metrics(sweep, output), branch)
    compact = output.replace(" ", "").lower()
    if compact in (f"i({sweep.variable.lower()})", f"iout({sweep.variable.lower()})"):
        metrics = dcs.compliance(sweep, output, fraction=request.fraction, basis=request.basis)
        return SweepResult(sweep, output, "compliance", metrics, branch)
    return SweepResult(sweep, output, "line", dcs.line_sensitivity(sweep, output), branch)


def _nominal(target: Target, inputs: DesignInputs):
    """The operating point the sweep follows and the branch record so far (a note when there is none)."""
    from .bias import operating_point_of

    try:
        point = operating_point_of(target, inputs)
    except SymbiasError as err:  # the sweep can still run from its first point; the result says why
        return None, BranchCheck(note=f"no operating point at the nominal values ({err.reason}); the sweep "
                                      "starts from its first point")
    return point, BranchCheck(states=point.states)


def _branch(sweep, branch: BranchCheck) -> BranchCheck:
    """Where the sweep leaves the conducting state (checked when several states exist)."""
    from ..dc.states import branch_losses, device_current

    survey = branch.states
    if survey is None or not survey.several or survey.chosen_state.zero_current:
        return branch
    reference = survey.chosen_state.device_current
    lost = branch_losses(sweep.values, device_current(sweep.results), reference)
    return BranchCheck(survey, reference, lost)
