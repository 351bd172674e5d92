"""The DC current ratio of a mirror at its operating point and its systematic error, split by cause.

Pipeline step beside :mod:`~symbias.pipeline.derivation`: a target, design
inputs, an output voltage source and an input current source ->
:class:`MirrorRatio`.  The small-signal gain ``d iout / d iin`` of a derived
formula is a different number: it is the slope, this is ``Iout / Iin`` at the
operating point, and with unequal collector (drain) voltages the two can even
differ in sign of their error.

The error is ``epsilon = 1 - ratio/ideal`` (positive when the mirror gives
less than its ideal ratio, as for the small-signal error of
:mod:`symbias.transfer_error`), ``ideal`` being the ratio with every cause
removed (the size ratio).  Causes, each removed by setting model parameters
or element values and solving again (all variants in one batched solve,
:func:`symbias.dc.operating_point.operating_points`, from the conducting
operating point):

* ``finite beta (base current)``: ``BF`` of every bipolar model to infinity;
* ``output-voltage mismatch (Early effect)``: ``VAF`` to infinity;
* ``output-voltage mismatch (channel-length modulation)``: ``LAMBDA`` to 0;
* ``body effect``: ``GAMMA`` to 0;
* ``degeneration mismatch``: every emitter (source) resistor of a degenerated
  group of transistors sharing a base (gate) set to the value matched to the
  input device's, ``R_k = R_in size_in / size_k``.

Each cause's *exact* error is the error with that cause alone present (the
others removed); the sum differs from the total by the interaction of the
causes (:attr:`MirrorRatio.interaction`).  Its *leading-order* form is the
first term of its expansion in the cause's small parameter ``p`` (``1/BF``,
``1/VAF``, ``LAMBDA``, ``GAMMA``, the relative resistor mismatch), found from
exact solves with the parameter scaled down by 10 and 100: ``epsilon ~ a p^n``
with ``n`` the integer power and ``a`` its coefficient; for the simple
mirror that is ``2/BF`` (Gray, Hurst, Lewis and Meyer, ch. 4) and
``-(VCB2 - VCB1)/VAF`` (the model's Early factor acts on VCB; the textbook
writes VCE).

Examples
--------
>>> from symbias.pipeline.targets import load_target, design_inputs
>>> target = load_target("examples/simple_mirror.cir")
>>> result = mirror_ratio(target, design_inputs(target), "Vout", "Iref")
>>> round(result.ratio, 4), round(result.ideal, 6), round(100 * result.error, 2)
(1.0136, 1.0, -1.36)
>>> [(c.name, c.formula) for c in result.causes]
[('finite beta (base current)', '2/BF'), ('output-voltage mismatch (Early effect)', '-1.827 V/VAF')]
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Mapping

import numpy as np

from ..errors import AnalysisError, CircuitError
from .targets import DesignInputs, Target

__all__ = ["RatioCause", "MirrorRatio", "mirror_ratio", "CAUSE_NAMES"]

#: The causes, in the order they are reported.
CAUSE_NAMES = ("finite beta (base current)", "output-voltage mismatch (Early effect)",
               "output-voltage mismatch (channel-length modulation)", "body effect", "degeneration mismatch")
#: Scale factors of a cause's small parameter for the leading-order fit.
_FIT_SCALES = (0.1, 0.01)
#: What "infinite" BF is in a solve (base currents 1e-15 of the collector's).
_NO_BASE_CURRENT = 1e15
#: A cause whose error stays below this (as a fraction) is not a cause of this circuit (solver rounding).
_NEGLIGIBLE = 1e-8


@dataclass(frozen=True)
class RatioCause:
    """One cause of a mirror's DC ratio error.

    Attributes
    ----------
    name : str
        One of :data:`CAUSE_NAMES`.
    exact : float
        The error ``1 - ratio/ideal`` with this cause alone present.
    leading : float or None
        Its leading-order value ``a p^n`` (None when no power law fits).
    formula : str or None
        The leading-order form as text (``2/BF``, ``-1.827 V/VAF``).
    coefficient, power : float or None, int or None
        ``a`` and ``n`` of ``a p^n``.
    parameter : str
        The small parameter ``p`` and its value at the operating point.
    changed : tuple of str
        The sample keys set to remove the cause (``QN.BF``, ``R2``).
    """

    name: str
    exact: float
    leading: float | None
    formula: str | None
    coefficient: float | None
    power: int | None
    parameter: str
    changed: tuple[str, ...]

    def to_dict(self) -> dict:
        """Plain-dict form for JSON."""
        return {"name": self.name, "exact": self.exact, "leading": self.leading, "formula": self.formula,
                "coefficient": self.coefficient, "power": self.power, "parameter": self.parameter,
                "changed": list(self.changed)}


@dataclass(frozen=True)
class MirrorRatio:
    """The DC current ratio ``Iout/Iin`` at the operating point and its systematic error.

    Attributes
    ----------
    output, input : str
        The output voltage source and the input current source.
    output_current : float
        ``Iout`` (A), signed as :mod:`symbias.conventions` says.
    input_current : float
        ``Iin`` (A): the input source's value as written.
    ratio : float
        ``Iout / Iin``.
    ideal : float
        The ratio with every cause removed.
    error : float
        ``1 - ratio/ideal``.
    causes : tuple of RatioCause
        Each cause present, with its exact and leading-order error.
    temperature : float
        degC.
    meaning : str
        Which way ``Iout`` counts.
    """

    output: str
    input: str
    output_current: float
    input_current: float
    ratio: float
    ideal: float
    error: float
    causes: tuple[RatioCause, ...]
    temperature: float
    meaning: str

    @property
    def interaction(self) -> float:
        """The total error minus the sum of the causes' exact errors (their cross terms)."""
        return self.error - sum(c.exact for c in self.causes)

    def cause(self, name: str) -> RatioCause | None:
        """The cause of that name (None when absent)."""
        return next((c for c in self.causes if c.name == name), None)

    def to_dict(self) -> dict:
        """Plain-dict form for JSON (currents in A, errors as fractions)."""
        return {"output": self.output, "input": self.input, "output_current": self.output_current,
                "input_current": self.input_current, "ratio": self.ratio, "ideal": self.ideal, "error": self.error,
                "interaction": self.interaction, "temperature": self.temperature, "meaning": self.meaning,
                "causes": [c.to_dict() for c in self.causes]}


@dataclass(frozen=True)
class _Cause:
    """How to scale one cause: sample key -> (actual value, value with the cause removed, scaling law)."""

    name: str
    parameter: str
    value: float
    unit: str
    keys: Mapping[str, tuple[float, float, str]]

    def at(self, t: float) -> dict[str, float]:
        """Sample values with the cause's small parameter scaled by ``t`` (1: as is, 0: removed)."""
        out = {}
        for key, (actual, removed, law) in self.keys.items():
            if law == "inverse":  # p = 1/X
                out[key] = removed if t == 0 else actual / t
            else:  # p proportional to X - removed
                out[key] = removed + t * (actual - removed)
        return out


def _models(circuit, kinds: tuple[str, ...]) -> dict[str, Any]:
    """Model key -> (model, first element using it) for the devices of the given letters."""
    found = {}
    for element in circuit.devices:
        if element.kind in kinds:
            model = circuit.model_of(element)
            found.setdefault(model.key, (model, element))
    return found


def _parameter(circuit, inputs: DesignInputs, element, name: str, default: float) -> float:
    from ..devices.dc_context import resolved_model_parameters

    _, params, _ = resolved_model_parameters(circuit, element, inputs.process, inputs.values)
    return float(params.get(name, default))


def _model_causes(circuit, inputs: DesignInputs) -> list[_Cause]:
    from ..devices.bjt import BJT_DEFAULTS
    from ..devices.mos import MOS_DEFAULTS

    causes = []
    table = (
        (CAUSE_NAMES[0], ("Q",), "BF", BJT_DEFAULTS, "inverse", _NO_BASE_CURRENT, "1/BF", ""),
        (CAUSE_NAMES[1], ("Q",), "VAF", BJT_DEFAULTS, "inverse", 0.0, "1/VAF", " V"),
        (CAUSE_NAMES[2], ("M",), "LAMBDA", MOS_DEFAULTS, "linear", 0.0, "LAMBDA", " V"),
        (CAUSE_NAMES[3], ("M",), "GAMMA", MOS_DEFAULTS, "linear", 0.0, "GAMMA", " V^0.5"),
    )
    for name, kinds, key, defaults, law, removed, parameter, unit in table:
        keys = {}
        for model_key, (model, element) in _models(circuit, kinds).items():
            actual = _parameter(circuit, inputs, element, key, defaults[key])
            if key == "VAF" and actual == 0:
                actual = math.inf  # SPICE: VAF = 0 means none
            present = math.isfinite(actual) and actual > 0 if law == "inverse" else actual != 0
            if present:
                keys[f"{model.name}.{key}"] = (actual, removed, law)
        if keys:
            actual = next(iter(keys.values()))[0]
            value = 1.0 / actual if law == "inverse" else actual
            causes.append(_Cause(name, parameter, value, unit, keys))
    return causes


def _size(element, context) -> float:
    if element.kind == "M":
        return float(context.instance(element, "w", 1.0) / context.instance(element, "l", 1.0)
                     * context.multiplier(element, ("m",)))
    return float(context.multiplier(element, ("m", "area")))


def _degeneration(circuit, inputs: DesignInputs, input_node: str) -> list[_Cause]:
    """The degeneration-mismatch cause: resistors of degenerated transistors sharing a control node."""
    from ..circuit import GROUND
    from ..devices.dc_context import StampContext

    context = StampContext.create(circuit, inputs.process, inputs.temperature, inputs.values)
    groups: dict[str, list] = {}
    for element in circuit.devices:
        if element.kind in ("Q", "M"):
            groups.setdefault(element.nodes[1], []).append(element)
    keys = {}
    for devices in groups.values():
        resistors = []
        for device in devices:
            low = device.nodes[2]
            found = [r for r in circuit.elements_of("R") if low != GROUND and low in r.nodes]
            resistors.append(found[0] if len(found) == 1 else None)
        if len(devices) < 2 or None in resistors:
            continue
        if len({_other(r, d.nodes[2]) for r, d in zip(resistors, devices)}) != 1:  # no common return node
            continue
        reference = next((i for i, d in enumerate(devices) if d.nodes[0] == input_node), 0)
        base = float(context.value(resistors[reference], "resistance")) * _size(devices[reference], context)
        for device, resistor in zip(devices, resistors):
            actual = float(context.value(resistor, "resistance"))
            matched = base / _size(device, context)
            if not math.isclose(actual, matched, rel_tol=1e-9):
                keys[resistor.name] = (actual, matched, "linear")
    if not keys:
        return []
    actual, matched, _ = next(iter(keys.values()))
    return [_Cause(CAUSE_NAMES[4], "dR/R", actual / matched - 1.0, "", keys)]


def _other(resistor, node: str) -> str:
    a, b = resistor.nodes[:2]
    return b if a == node else a


def mirror_ratio(target: Target, inputs: DesignInputs, output: str, input: str, point=None) -> MirrorRatio:
    """The DC ratio ``Iout/Iin`` of a mirror at its operating point, its error and its causes.

    Parameters
    ----------
    target, inputs
        The circuit and its numbers.
    output : str
        The voltage source holding the output node (``Vout``).
    input : str
        The current source feeding the input (``Iref``).
    point : OperatingPoint, optional
        The operating point, when already solved (the conducting state).

    Raises
    ------
    CircuitError
        When ``output`` is not a voltage source or ``input`` not a current source.
    AnalysisError
        When the input current is zero, the ideal ratio is zero, or a variant does not solve.
    ConvergenceError
        From the DC solve.
    """
    from ..conventions import output_current
    from ..dc.operating_point import operating_points
    from .bias import operating_point_of

    circuit = target.circuit
    out = output_current(circuit, output)
    if not circuit.has_element(input) or circuit.element(input).kind != "I":
        raise CircuitError(f"the mirror's input {input!r} must be a current source", path=circuit.path)
    source = circuit.element(input)
    point = point if point is not None else operating_point_of(target, inputs)
    iin = point.current(source.name)
    if iin == 0:
        raise AnalysisError(f"{source.name} is 0 A: no current ratio", path=circuit.path, line=source.line)
    causes = _model_causes(circuit, inputs) + _degeneration(circuit, inputs, source.nodes[1])
    variants = [{}, _all(causes, 0.0)]
    for cause in causes:
        others = _all([c for c in causes if c is not cause], 0.0)
        variants += [{**others, **cause.at(t)} for t in (1.0, *_FIT_SCALES)]
    ratios = _ratios(operating_points, circuit, inputs, point, variants, causes, out, iin)
    ideal = ratios[1]
    if ideal == 0:
        raise AnalysisError(f"the ideal ratio of {out.label}/{source.name} is zero", path=circuit.path)
    epsilon = 1.0 - ratios / ideal
    found = [_cause_result(cause, epsilon[2 + 3 * k: 5 + 3 * k]) for k, cause in enumerate(causes)
             if np.max(np.abs(epsilon[2 + 3 * k: 4 + 3 * k])) >= _NEGLIGIBLE]
    return MirrorRatio(out.source, source.name, float(ratios[0] * iin), float(iin), float(ratios[0]), float(ideal),
                       float(epsilon[0]), tuple(found), float(inputs.temperature), out.meaning)


def _all(causes: list[_Cause], t: float) -> dict[str, float]:
    out: dict[str, float] = {}
    for cause in causes:
        out.update(cause.at(t))
    return out


def _ratios(operating_points, circuit, inputs: DesignInputs, point, variants, causes, out, iin) -> np.ndarray:
    """``Iout/Iin`` of every variant, solved in one batch from the operating point."""
    actual = {}
    for cause in causes:
        actual.update(cause.at(1.0))
    samples = {key: np.array([variant.get(key, value) for variant in variants]) for key, value in actual.items()}
    if not samples:
        return np.full(len(variants), out.sign * point.branch_currents[out.source] / iin)
    solved = operating_points(circuit, inputs.process, samples, inputs.temperature, inputs.values, start=point)
    if solved.errors:
        index, error = solved.errors[0]
        raise AnalysisError(f"mirror ratio: a variant with causes removed did not solve ({error.reason})",
                            path=circuit.path)
    return out.sign * np.asarray(solved.branch_currents[out.source]) / iin


def _cause_result(cause: _Cause, errors: np.ndarray) -> RatioCause:
    exact, at_tenth, at_hundredth = (float(e) for e in errors)
    coefficient = power = leading = formula = None
    if at_tenth != 0 and at_hundredth != 0 and (at_tenth > 0) == (at_hundredth > 0):
        slope = math.log(at_tenth / at_hundredth) / math.log(_FIT_SCALES[0] / _FIT_SCALES[1])
        if abs(slope - round(slope)) < 0.25 and round(slope) >= 1:
            power = int(round(slope))
            leading = at_hundredth / _FIT_SCALES[1] ** power
            coefficient = leading / cause.value ** power
            formula = _formula(cause, coefficient, power)
    return RatioCause(cause.name, exact, leading, formula, coefficient, power,
                      f"{cause.parameter} = {cause.value:.4g}", tuple(cause.keys))


def _formula(cause: _Cause, coefficient: float, power: int) -> str:
    """``a p^n`` as text: ``2/BF``, ``-1.827 V/VAF``, ``0.31 V*LAMBDA``."""
    a = f"{coefficient:.4g}"
    unit = cause.unit if power == 1 else (f"{cause.unit}^{power}" if cause.unit else "")
    exponent = f"^{power}" if power > 1 else ""
    if cause.parameter.startswith("1/"):
        return f"{a}{unit}/{cause.parameter[2:]}{exponent}"
    return f"{a}{unit}*{cause.parameter}{exponent}"
