"""A quantity over frequency at the bias point: Zout(f) or a transfer, poles, zeros, the -3 dB point.

Pipeline step for frequency results: a target, its design inputs and a
:class:`FrequencyRequest` -> :class:`FrequencyResult`.  The quantity is
derived exactly with capacitances (``s``), its symbols take their values at
the operating point (capacitances and series resistances from the model
cards, :mod:`~symbias.pipeline.parasitics`), and :mod:`symbias.frequency` gives
the response, the poles and zeros and the frequency where its magnitude
falls 3 dB (for an output impedance: where the output resistance falls 3 dB).
By default a current source or mirror gives its output impedance, a
reference its supply rejection ``v(ref)/v(supply)``.

With ``approximate``, each coefficient of ``s`` is cut to its dominant terms
(:func:`symbias.approx.approximate_frequency`) over ranges of +-``spread``
around the bias point (capacitances the card leaves at zero are set to zero
first) and over the band, with the dominant pole and zero in closed form.

:func:`output_impedance_at` is the number a ranking against a spec's
``rout_min_frequency`` needs.

Examples
--------
>>> from symbias.pipeline.targets import load_target, design_inputs
>>> target = load_target("examples/mos_cascode.cir")
>>> result = frequency_analysis(target, design_inputs(target), FrequencyRequest())
>>> result.formula.label, round(result.response.corner / 1e3)  # kHz where Rout has fallen 3 dB
('Rout at Vout', 213)
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Mapping

from ..devices.options import SmallSignalOptions
from ..errors import AssumptionError, UsageError
from .bias import BiasPoint, bias_point
from .parasitics import numeric_options, with_parasitic_values
from .quantities import Quantity, default_quantities
from .targets import DesignInputs, Target

__all__ = ["FrequencyRequest", "FrequencyResult", "frequency_analysis", "default_frequency_quantity",
           "output_impedance_at"]

_SUPPLY_NAMES = ("vcc", "vdd", "vsupply", "vs")


@dataclass(frozen=True)
class FrequencyRequest:
    """What to compute.

    Parameters
    ----------
    quantity : Quantity or None
        None: :func:`default_frequency_quantity`.
    start, stop, per_decade
        The frequencies (Hz) of the response.
    options : SmallSignalOptions
        Capacitances on by default.
    backend : str or None
    approximate : bool
        Add the coefficient-by-coefficient approximation.
    spread : float
        Relative half-width of each symbol's range around the bias point for ``approximate``.
    assumptions : tuple of str
        Further statements for ``approximate``.
    tolerance, samples, seed
        Of the approximation.

    Examples
    --------
    >>> FrequencyRequest().options.capacitances
    True
    """

    quantity: Quantity | None = None
    start: float = 1.0
    stop: float = 1e9
    per_decade: int = 20
    options: SmallSignalOptions = field(default_factory=lambda: SmallSignalOptions(capacitances=True))
    backend: str | None = None
    approximate: bool = False
    spread: float = 0.3
    assumptions: tuple[str, ...] = ()
    tolerance: float = 0.10
    samples: int = 96
    seed: int = 0

    def __post_init__(self) -> None:
        object.__setattr__(self, "assumptions", tuple(self.assumptions))
        if not 0 <= self.spread < 1:
            raise AssumptionError(f"spread must be in [0, 1), got {self.spread:g}", path="--spread")


@dataclass(frozen=True, eq=False)
class FrequencyResult:
    """Everything :func:`frequency_analysis` computed.

    Parameters
    ----------
    target, request
    quantity : Quantity
    formula : Formula
        The exact result in ``s``.
    bias : BiasPoint
    response : FrequencyResponse
    approximation : FrequencyApproximation or None
    notes : tuple of str
        Model parts left out, and why.
    """

    target: Target
    request: FrequencyRequest
    quantity: Quantity
    formula: Any
    bias: BiasPoint
    response: Any
    approximation: Any = None
    notes: tuple[str, ...] = ()


def default_frequency_quantity(target: Target) -> Quantity:
    """Output impedance at the output, or for a reference (an output node) its supply rejection.

    Raises
    ------
    CircuitError
        When no output can be found.

    Examples
    --------
    >>> from symbias.pipeline.targets import load_target
    >>> default_frequency_quantity(load_target("widlar-bandgap"))
    Quantity(kind='voltage_gain', arguments=('vref', 'Vcc'))
    >>> default_frequency_quantity(load_target("bjt-simple-mirror")).kind
    'output_resistance'
    """
    output = target.roles.get("output")
    circuit = target.circuit
    if output and not circuit.has_element(str(output)):
        supplies = list(target.roles.get("supply") or [])
        supplies += [e.name for e in circuit.elements_of("V") if e.name.lower() in _SUPPLY_NAMES]
        if supplies:
            return Quantity("voltage_gain", (str(output), str(supplies[0])))
    return default_quantities(target)[0]


def _zeroed(formula, values: Mapping[str, float]):
    """The formula with the symbols whose value is 0 set to 0 (a capacitance the card does not give)."""
    ring = formula.ring
    zero = [i for i, v in enumerate(formula.variables)
            if v.power == 1 and v.symbol in values and values[v.symbol] == 0]
    if not zero:
        return formula
    kept = []
    for poly in (formula.numerator, formula.denominator):
        kept.append(ring.from_terms([(e, c) for e, c in ring.terms(poly) if not any(e[i] for i in zero)]))
    if ring.is_zero(kept[1]):
        return formula
    return formula.with_polynomials(*kept)


def _approximation(formula, values: Mapping[str, float], request: FrequencyRequest):
    from ..approx import approximate_frequency, nominal_ranges

    reduced = _zeroed(formula, values)
    names = [s.name for s in reduced.symbols if s.name != "s"]
    ranges = nominal_ranges({n: values[n] for n in names}, request.spread, names=names)
    try:
        return approximate_frequency(reduced, (*request.assumptions, *ranges), tolerance=request.tolerance,
                                     samples=request.samples, seed=request.seed, band=(request.start, request.stop))
    except AssumptionError as err:
        raise err.located(path="--assume") from None


def frequency_analysis(target: Target, inputs: DesignInputs, request: FrequencyRequest | None = None,
                       point=None) -> FrequencyResult:
    """The requested quantity over frequency at the bias point (see the module docstring).

    ``point``: the operating point of ``target`` for ``inputs`` when the caller has it already
    (:func:`~symbias.pipeline.bias.operating_point_of`'s), so it is not solved again.

    Raises
    ------
    UsageError, CircuitError, AnalysisError, ConvergenceError
        For a bad band or quantity, a singular network, a DC solve that fails.
    """
    from ..analyses import QUANTITIES
    from ..frequency import frequency_response, log_frequencies

    request = request or FrequencyRequest()
    frequencies = log_frequencies(request.start, request.stop, request.per_decade)
    quantity = request.quantity or default_frequency_quantity(target)
    options, notes = numeric_options(target, inputs, request.options)
    formula = QUANTITIES[quantity.kind][0](target.circuit, *quantity.arguments, options=options,
                                          backend=request.backend)
    bias = with_parasitic_values(target, bias_point(target, inputs, options, point), options)
    missing = sorted(s.name for s in formula.symbols if s.name != "s" and s.name not in bias.values)
    if missing:
        raise UsageError(f"{formula.label}: no number at the bias point for {', '.join(missing)} "
                         "(give them with --set)", path=target.where)
    response = frequency_response(formula, bias.values, frequencies)
    approximation = _approximation(formula, bias.values, request) if request.approximate else None
    return FrequencyResult(target, request, quantity, formula, bias, response, approximation, notes)


def output_impedance_at(target: Target, inputs: DesignInputs, frequency: float, port: str | None = None,
                        options: SmallSignalOptions | None = None) -> float:
    """``|Zout(j 2 pi f)|`` (ohm) at one frequency: the number a spec's ``rout_min_frequency`` limits.

    Examples
    --------
    >>> from symbias.pipeline.targets import load_target, design_inputs
    >>> target = load_target("examples/simple_mirror.cir")
    >>> round(output_impedance_at(target, design_inputs(target), 1.0) / 1e6, 2)
    3.05
    """
    if not (math.isfinite(frequency) and frequency > 0):
        raise UsageError(f"the frequency must be a positive number of Hz, got {frequency:g}")
    port = port or str(default_quantities(target)[0].arguments[0])
    request = FrequencyRequest(Quantity("output_resistance", (port,)), frequency, frequency * 10.0, 1,
                               options or SmallSignalOptions(capacitances=True))
    return abs(frequency_analysis(target, inputs, request).response.at(frequency))
