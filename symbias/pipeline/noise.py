"""Output noise of a target at its bias point: numbers over frequency, ranked contributions, closed forms.

Pipeline step for noise: a :class:`~symbias.pipeline.targets.Target`, its
:class:`~symbias.pipeline.targets.DesignInputs` and a :class:`NoiseRequest`
-> :class:`NoiseResult`.  The steps:

1. the output: a current source or mirror at its output voltage source
   (short-circuit noise current), a reference at its output node (noise
   voltage); by default the target's output role;
2. the numbers use every device's own small-signal values (no matched
   symbols), capacitances and series resistances from the model cards
   (:mod:`~symbias.pipeline.parasitics`), the sources' densities from the bias
   currents (:mod:`symbias.noise.densities`), and a numeric solve over
   frequency (:mod:`symbias.noise.spectrum`);
3. the closed forms use the requested options (``match`` for readable forms):
   every source's exact transfer, its low-frequency form and, on request, its
   leading-order form; the output noise as ``sum H_i(0)^2 S_i``.

:func:`output_noise_density` is the number a ranking against a spec's
``noise_max`` at ``noise_frequency`` needs.

Examples
--------
>>> from symbias.pipeline.targets import load_target, design_inputs
>>> target = load_target("examples/simple_mirror.cir")
>>> result = noise_analysis(target, design_inputs(target), NoiseRequest(closed_form=False))
>>> [row.element for row in result.spectrum.by_element(1e3)]
['Q2', 'Q1']
>>> round(output_noise_density(target, design_inputs(target), 1e3) / (2 * 1.602176634e-19 * 20e-6), 2)
2.04
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Any

from ..devices.options import SmallSignalOptions
from ..errors import UsageError
from .bias import BiasPoint, bias_point
from .parasitics import model_cards, numeric_options, with_parasitic_values
from .targets import DesignInputs, Target

__all__ = ["NoiseRequest", "NoiseResult", "noise_analysis", "default_noise_output", "output_noise_density"]

_OUTPUT_NAMES = ("vout", "vo")


@dataclass(frozen=True)
class NoiseRequest:
    """What to compute.

    Parameters
    ----------
    output : str or None
        A voltage source (noise current) or a node (noise voltage); None: the
        target's output (:func:`default_noise_output`).
    start, stop : float
        Band in Hz: the spectrum and the integrated noise.
    per_decade : int
        Frequencies per decade of the spectrum.
    at : float
        Hz where contributions are ranked.
    options : SmallSignalOptions
        Device models (capacitances by default).
    closed_form : bool
        Derive every source's exact transfer and the closed-form total.
    approximate : bool
        Add each low-frequency transfer's leading-order form.
    assumptions, default_assumptions, tolerance, samples, seed
        As for :class:`~symbias.pipeline.derivation.DeriveRequest`.
    backend : str or None

    Examples
    --------
    >>> NoiseRequest(start=10.0, stop=1e6).at
    1000.0
    """

    output: str | None = None
    start: float = 1.0
    stop: float = 1e8
    per_decade: int = 20
    at: float = 1e3
    options: SmallSignalOptions = field(default_factory=lambda: SmallSignalOptions(capacitances=True))
    closed_form: bool = True
    approximate: bool = False
    assumptions: tuple[str, ...] = ()
    default_assumptions: bool = True
    tolerance: float = 0.10
    samples: int = 2000
    seed: int = 0
    backend: str | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "assumptions", tuple(self.assumptions))
        if not (math.isfinite(self.at) and self.at > 0):
            raise UsageError(f"the ranking frequency must be a positive number of Hz, got {self.at:g}", path="--at")


@dataclass(frozen=True, eq=False)
class NoiseResult:
    """Everything :func:`noise_analysis` computed.

    Parameters
    ----------
    target, request
    bias : BiasPoint
        The operating point and the values the numbers use.
    spectrum : NoiseSpectrum
    formula : OutputNoiseFormula or None
        The closed forms (with ``closed_form``).
    corner : float or None
        The 1/f corner (Hz); ``corner_note`` says how it was found.
    notes : tuple of str
        Model parts left out, and why.
    """

    target: Target
    request: NoiseRequest
    bias: BiasPoint
    spectrum: Any
    formula: Any
    corner: float | None
    corner_note: str
    notes: tuple[str, ...] = ()

    @property
    def density_at(self) -> float:
        """The output density at the ranking frequency."""
        return float(self.spectrum.total[self.spectrum.index(self.request.at)])

    @property
    def integrated(self) -> float:
        """The output noise power over the band (A^2 or V^2)."""
        return self.spectrum.integrated(self.request.start, self.request.stop)


def default_noise_output(target: Target) -> str:
    """The output a noise analysis reads when none is named: the output role, else a source ``Vout``/``Vo``.

    Raises
    ------
    UsageError
        When the circuit has neither.

    Examples
    --------
    >>> from symbias.pipeline.targets import load_target
    >>> default_noise_output(load_target("widlar-bandgap")), default_noise_output(load_target("bjt-simple-mirror"))
    ('vref', 'Vout')
    """
    output = target.roles.get("output")
    if output:
        return str(output)
    for element in target.circuit.elements_of("V"):
        if element.name.lower() in _OUTPUT_NAMES:
            return element.name
    raise UsageError("name the output with --output (a voltage source for a current output, or a node)",
                     path=target.where)


def _numbers_options(target: Target, inputs: DesignInputs, options: SmallSignalOptions):
    """Per-device symbols (no matching) without the parts no model gives a number for."""
    plain = replace(options, match=False, beta=False, symbolic_passives=False)
    return numeric_options(target, inputs, plain)


def _frequencies(request: NoiseRequest):
    import numpy as np

    from ..frequency import log_frequencies

    grid = log_frequencies(request.start, request.stop, request.per_decade)
    return np.unique(np.append(grid, request.at))


def noise_analysis(target: Target, inputs: DesignInputs, request: NoiseRequest | None = None,
                   point=None) -> NoiseResult:
    """Output noise at the bias point over a band, ranked, integrated, with closed forms on request.

    ``point``: the operating point of ``target`` for ``inputs`` when the caller has it already
    (:func:`~symbias.pipeline.bias.operating_point_of`'s), so it is not solved again.

    Raises
    ------
    UsageError, CircuitError, AnalysisError, ConvergenceError
        For a bad band or output, a singular network, a DC solve that fails.
    """
    from ..linear.network import expand
    from ..noise import noise_output, noise_sources, noise_spectrum, source_densities

    request = request or NoiseRequest()
    output = request.output or default_noise_output(target)
    frequencies = _frequencies(request)
    options, notes = _numbers_options(target, inputs, request.options)
    where = noise_output(target.circuit, output)
    bias = with_parasitic_values(target, bias_point(target, inputs, options, point), options)
    cards = model_cards(target, inputs)
    flicker = [name for name, card in cards.items() if card.get("KF", 0.0) > 0]
    network = expand(target.circuit, options)
    sources = noise_sources(target.circuit, network, flicker)
    densities = source_densities(sources, target.circuit, bias.point, cards, inputs.temperature, bias.values)
    spectrum = noise_spectrum(network, sources, densities, where, bias.values, frequencies)
    corner, corner_note = spectrum.flicker_corner()
    # the closed forms keep the requested matching but only the parasitic resistances the numbers have
    symbolic = replace(request.options, parasitics=options.parasitics)
    formula = _closed_form(target, output, request, symbolic, flicker) if request.closed_form else None
    return NoiseResult(target, request, bias, spectrum, formula, corner, corner_note, notes)


def _closed_form(target: Target, output: str, request: NoiseRequest, symbolic: SmallSignalOptions, flicker):
    from ..noise import output_noise_formula

    formula = output_noise_formula(target.circuit, output, symbolic, flicker, request.backend)
    if not request.approximate:
        return formula
    from ..approx import approximate
    from ..errors import AssumptionError

    forms = []
    for term in formula.terms:
        try:
            forms.append(approximate(term.low_frequency, request.assumptions, tolerance=request.tolerance,
                                     defaults=request.default_assumptions, samples=request.samples,
                                     seed=request.seed))
        except AssumptionError as err:
            raise err.located(path="--assume") from None
    return formula.with_approximations(forms)


def output_noise_density(target: Target, inputs: DesignInputs, frequency: float, output: str | None = None,
                         options: SmallSignalOptions | None = None) -> float:
    """The output noise density (A^2/Hz or V^2/Hz) at one frequency: the number a spec's ``noise_max`` limits.

    Examples
    --------
    >>> from symbias.pipeline.targets import load_target, design_inputs
    >>> target = load_target("mos-simple-mirror")
    >>> output_noise_density(target, design_inputs(target), 1e3) > 0
    True
    """
    request = NoiseRequest(output=output, start=frequency, stop=frequency * 10.0, per_decade=1, at=frequency,
                           options=options or SmallSignalOptions(capacitances=True), closed_form=False)
    result = noise_analysis(target, inputs, request)
    return result.density_at
