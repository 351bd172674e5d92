"""DC sweeps of a target and their metrics: compliance, line sensitivity, temperature coefficient.

Pipeline step for large-signal behaviour: a target, design inputs and a
:class:`SweepRequest` -> :class:`SweepResult` (the sweep and the metrics its
kind calls for):

* varying the source that holds the output (``Vout``): output current against
  output voltage and the compliance voltage, by current and by device region;
* varying any other source (the supply): line sensitivity of the output;
* varying ``temp``: box-method temperature coefficient, zero-slope temperature
  and curvature.

Examples
--------
>>> from symbias.pipeline.targets import load_target, design_inputs
>>> target = load_target("examples/simple_mirror.cir")
>>> result = run_sweep(target, design_inputs(target), SweepRequest("Vout", 0.0, 5.0, 51))
>>> result.kind, result.output
('compliance', 'I(Vout)')
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Callable

from ..circuit import Circuit
from ..errors import CircuitError, UsageError
from ..limits import check_points, temperature_problem
from .targets import DesignInputs, Target

__all__ = ["SweepRequest", "SweepResult", "run_sweep", "default_output", "TEMPERATURE"]

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
    """

    sweep: Any
    output: str
    kind: str
    metrics: Any

    @property
    def values(self):
        """The output at every sweep point."""
        return self.sweep.probe(self.output)


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
            return f"I({element.name})"
    for node in _OUTPUT_NODES:
        if node in circuit.nodes:
            return f"V({node})"
    raise CircuitError("no output named Vout or vref: give --out V(node) or --out I(element)", path=circuit.path)


def run_sweep(target: Target, inputs: DesignInputs, request: SweepRequest,
              progress: Callable[[int, int], None] | None = None) -> SweepResult:
    """Run a sweep and compute its metrics.

    Raises
    ------
    CircuitError, ConvergenceError
        From the DC solve, an unknown source or an unknown output.

    Examples
    --------
    >>> from symbias.pipeline.targets import load_target, design_inputs
    >>> target = load_target("examples/dc_bandgap_core.cir")
    >>> result = run_sweep(target, design_inputs(target), SweepRequest("temp", -40, 125, 34))
    >>> result.kind, result.output
    ('temperature', 'V(vo)')
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
    if request.varies_temperature:
        sweep = dcs.sweep_temperature(circuit, request.start, request.stop, request.points, process=inputs.process,
                                      values=inputs.values, guess=guess, progress=progress)
    else:
        sweep = dcs.sweep_source(circuit, request.vary, request.start, request.stop, request.points,
                                 process=inputs.process, temperature=inputs.temperature, values=inputs.values,
                                 guess=guess, progress=progress)
    sweep.probe(output)  # an unknown output fails here, before any metric
    if request.varies_temperature:
        return SweepResult(sweep, output, "temperature", dcs.temperature_metrics(sweep, output))
    if output.replace(" ", "").lower() == f"i({sweep.variable.lower()})":
        metrics = dcs.compliance(sweep, output, fraction=request.fraction, basis=request.basis)
        return SweepResult(sweep, output, "compliance", metrics)
    return SweepResult(sweep, output, "line", dcs.line_sensitivity(sweep, output))
