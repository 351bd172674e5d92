"""Values at the bias point that the DC solve does not give: capacitances and series resistances.

Pipeline step beside :mod:`~symbias.pipeline.bias`.  An expansion with
capacitances (``--capacitances``, the ``full`` level) or BJT parasitic
resistances needs ``cpi cmu ccs``, ``cgs cgd cdb csb``, ``rb``, ``re``
numbers; :func:`parasitic_values` takes them from each device's model card at
its operating point (the laws of :mod:`symbias.devices.parasitics`), and
:func:`with_parasitic_values` adds them to a :class:`~symbias.pipeline.bias.BiasPoint`.

:func:`numeric_options` drops from a set of small-signal options the parts
no model gives a number for: ``rb`` or ``re`` when some device's card has no
``RB``/``RE`` (a zero series resistance would short its node), and ``rmu``,
which the SPICE model does not have; each drop comes with a note.

Examples
--------
>>> from symbias.devices.options import SmallSignalOptions
>>> from symbias.pipeline.targets import load_target, design_inputs
>>> target = load_target("examples/simple_mirror.cir")
>>> options, notes = numeric_options(target, design_inputs(target), SmallSignalOptions.level("full"))
>>> options.parasitics, options.capacitances, len(notes)
((), True, 3)
"""

from __future__ import annotations

from dataclasses import replace
from ..devices.options import SmallSignalOptions
from .bias import BiasPoint
from .targets import DesignInputs, Target

__all__ = ["parasitic_values", "with_parasitic_values", "numeric_options", "model_cards"]

_CARD_KEYS = {"rb": "RB", "re": "RE"}


def _card(target: Target, inputs: DesignInputs, element) -> dict[str, float]:
    from ..devices.dc_context import resolved_model_parameters

    _, params, _ = resolved_model_parameters(target.circuit, element, inputs.process, inputs.values)
    return {k.upper(): float(v) for k, v in params.items()}


def model_cards(target: Target, inputs: DesignInputs) -> dict[str, dict[str, float]]:
    """Every device's model parameters (process entry overridden by its ``.model`` card), by device name.

    Examples
    --------
    >>> from symbias.pipeline.targets import load_target, design_inputs
    >>> target = load_target("examples/simple_mirror.cir")
    >>> model_cards(target, design_inputs(target))["Q1"]["BF"]
    120.0
    """
    return {e.name: _card(target, inputs, e) for e in target.circuit.devices}


def _number(target: Target, inputs: DesignInputs, element, key: str, default: float) -> float:
    from ..devices.dc_context import element_number

    if key not in element.params:
        return default
    return element_number(element, element.params[key], inputs.values, target.circuit.path, key)


def parasitic_values(target: Target, inputs: DesignInputs, point) -> dict[str, dict[str, float]]:
    """Per device: capacitances (and ``rb``, ``re`` where the card gives them) at the operating point.

    Parameters
    ----------
    target, inputs
        The circuit and its numbers.
    point : OperatingPoint
        The solved DC operating point.

    Examples
    --------
    >>> from symbias.pipeline.targets import load_target, design_inputs
    >>> from symbias.pipeline.bias import operating_point_of
    >>> target = load_target("examples/simple_mirror.cir")
    >>> inputs = design_inputs(target)
    >>> sorted(parasitic_values(target, inputs, operating_point_of(target, inputs))["Q1"])
    ['ccs', 'cmu', 'cpi']
    """
    from ..devices.parasitics import bjt_parasitics, mos_parasitics

    circuit = target.circuit
    out: dict[str, dict[str, float]] = {}
    for element in circuit.devices:
        if element.kind not in ("Q", "M"):
            continue  # a diode's cj is part of its operating point already
        device = point.device(element.name)
        card = _card(target, inputs, element)
        sign = float(device.polarity)
        v = device.voltages
        if element.kind == "Q":
            substrate = element.nodes[3] if len(element.nodes) == 4 else "0"
            vsc = sign * (point.voltage(substrate) - point.voltage(element.nodes[0]))
            area = _number(target, inputs, element, "area", 1.0) * _number(target, inputs, element, "m", 1.0)
            out[device.name] = bjt_parasitics(card, vbe=sign * v["vbe"], vbc=sign * v["vbc"], vsc=vsc,
                                              gm=device.small_signal["gm"], area=area)
        else:
            w = _number(target, inputs, element, "w", 1e-4)
            length = _number(target, inputs, element, "l", 1e-4)
            m = _number(target, inputs, element, "m", 1.0)
            vth = sign * v["vgs"] - device.limits["vov"] if "vov" in device.limits else sign * device.limits["vth"]
            out[device.name] = mos_parasitics(card, vgs=sign * v["vgs"], vds=sign * v["vds"], vbs=sign * v["vbs"],
                                              vth=vth, w=w, l=length, m=m)
    return out


def with_parasitic_values(target: Target, bias: BiasPoint, options: SmallSignalOptions) -> BiasPoint:
    """The bias point with capacitance and series-resistance symbol values added (existing values kept).

    Examples
    --------
    >>> from symbias.devices.options import SmallSignalOptions
    >>> from symbias.pipeline.targets import load_target, design_inputs
    >>> from symbias.pipeline.bias import bias_point
    >>> target = load_target("examples/mos_cascode.cir")
    >>> options = SmallSignalOptions(capacitances=True)
    >>> point = with_parasitic_values(target, bias_point(target, design_inputs(target), options), options)
    >>> "cgs_M1" in point.values
    True
    """
    from ..linear.network import bias_values

    extras = parasitic_values(target, bias.inputs, bias.point)
    values = dict(bias.values)
    for name, value in bias_values(target.circuit, extras, options, bias.inputs.values).items():
        values.setdefault(name, value)
    return replace(bias, values=values)


def numeric_options(target: Target, inputs: DesignInputs, options: SmallSignalOptions
                    ) -> tuple[SmallSignalOptions, tuple[str, ...]]:
    """The options without the parasitic resistances no model card gives a number for, and why.

    Examples
    --------
    >>> from symbias.pipeline.targets import load_target, design_inputs
    >>> target = load_target("examples/simple_mirror.cir")
    >>> numeric_options(target, design_inputs(target), SmallSignalOptions(parasitics=("rmu",)))[1]
    ('rmu left out: the SPICE bipolar model has no base-collector resistance',)
    """
    kept, notes = [], []
    bjts = [e for e in target.circuit.devices if e.kind == "Q"]
    for part in options.parasitics:
        if part == "rmu":
            notes.append("rmu left out: the SPICE bipolar model has no base-collector resistance")
            continue
        lacking = [e.name for e in bjts if _card(target, inputs, e).get(_CARD_KEYS[part], 0.0) <= 0]
        if lacking:
            notes.append(f"{part} left out: no {_CARD_KEYS[part]} in the model of {', '.join(lacking)}")
            continue
        kept.append(part)
    return replace(options, parasitics=tuple(kept), extras=False), tuple(notes)
