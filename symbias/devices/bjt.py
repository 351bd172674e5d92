"""Large-signal (DC) bipolar transistor model with temperature laws.

Device level of the numeric side.  The model is the Ebers-Moll transport form
with the forward Early effect, written as the SPICE Gummel-Poon model reduces
to when only IS, BF, BR, NF, NR and VAF are given (no high injection, no
leakage, no series resistances), so that it agrees with a simulator on the
same parameters::

    Icc = IS (exp(vbe/(NF VT)) - 1)        forward transport current
    Iec = IS (exp(vbc/(NR VT)) - 1)        reverse transport current
    qb  = 1 / (1 - vbc/VAF)                base charge (forward Early effect)
    IC  = (Icc - Iec)/qb - Iec/BR
    IB  = Icc/BF + Iec/BR + GMIN (vbe + vbc)

Voltages and currents are in the npn frame; a pnp is evaluated with the
signs of its junction voltages and of its currents flipped (``polarity``).
A tiny conductance :data:`GMIN` across each junction keeps the nodal
matrix regular when a device is off, as circuit simulators do.

Temperature (degC in, kelvin inside; the SPICE laws)::

    IS(T) = IS exp((T/Tnom - 1) EG/VT(T)) (T/Tnom)**XTI
    BF(T) = BF (T/Tnom)**XTB,   BR(T) = BR (T/Tnom)**XTB

All functions take numpy arrays (one entry per device) so the solver
evaluates every transistor of a circuit in one call.

Examples
--------
>>> m = BjtModel.from_params("npn", {"IS": 1e-16, "BF": 100, "VAF": 50})
>>> t = m.at(27.0)
>>> c = bjt_currents(0.65, -2.0, t)
>>> round(float(c.ic / c.ib), 2)
104.0
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields
from typing import Mapping

import numpy as np

from .dc_context import DcStamp, DeviceStamp
from .parasitics import AC_PARAMETERS
from .review import ABOVE_ZERO_KELVIN, NON_NEGATIVE, POSITIVE, Range, review_parameters
from .nonlinear import (GMIN, ION_MIN, MAX_CURRENT, Description, DeviceModel, HeadroomRole, Violation, pn_limit,
                        safe_exp, safe_exp_and_slope, safe_exp_slope)
from .temperature import kelvin, thermal_voltage

__all__ = [
    "BjtModel",
    "BjtAtTemperature",
    "BjtCurrents",
    "BJT_DEFAULTS",
    "GMIN",
    "ION_MIN",
    "SATURATION_FRACTION",
    "bjt_currents",
    "bjt_limit",
    "bjt_region",
    "bjt_small_signal",
    "bjt_vcesat",
    "stack_bjts",
    "safe_exp",
    "bjt_numbers",
    "bjt_dc",
    "BJT",
]

#: Parameter defaults where neither the netlist nor the process gives one (SPICE defaults).
BJT_DEFAULTS: dict[str, float] = {
    "IS": 1e-16, "BF": 100.0, "BR": 1.0, "NF": 1.0, "NR": 1.0, "VAF": math.inf,
    "XTI": 3.0, "EG": 1.11, "XTB": 0.0, "BVEBO": 6.0,
}

#: The collector junction puts a device in saturation when it removes this
#: fraction of the collector current the active-region law would give.
SATURATION_FRACTION = 0.01

_REGIONS = np.array(["active", "saturation", "cutoff", "reverse"])

#: Parameters the model reads (``AIS`` is the mismatch coefficient, see :func:`bjt_mismatch`).
BJT_PARAMETERS = ("IS", "BF", "BR", "NF", "NR", "VAF", "XTI", "EG", "XTB", "BVEBO", "AIS")
#: Valid range of each parameter and what it is (checked where a device is stamped).
BJT_RANGES: dict[str, tuple[Range, str]] = {
    "IS": (POSITIVE, "transport saturation current, A"),
    "BF": (POSITIVE, "forward current gain"),
    "BR": (POSITIVE, "reverse current gain"),
    "NF": (POSITIVE, "forward emission coefficient"),
    "NR": (POSITIVE, "reverse emission coefficient"),
    "VAF": (NON_NEGATIVE, "forward Early voltage, V; 0 means none"),
    "EG": (POSITIVE, "band gap, eV"),
    "BVEBO": (POSITIVE, "emitter-base reverse voltage the model accepts, V"),
    "AIS": (NON_NEGATIVE, "mismatch coefficient of IS"),
    "TNOM": (ABOVE_ZERO_KELVIN, "nominal temperature, degC"),
}


@dataclass(frozen=True)
class BjtModel:
    """Parameters of a bipolar transistor model (SPICE names, SI units).

    ``VAF`` may be ``inf`` (no Early effect).  ``TNOM`` in degC.  ``BVEBO``
    (V) is the emitter-base reverse voltage beyond which the solver refuses a
    result, since the model has no breakdown.

    Examples
    --------
    >>> BjtModel.from_params("pnp", {"BF": 50}).polarity
    -1
    """

    polarity: int
    IS: float
    BF: float
    BR: float
    NF: float
    NR: float
    VAF: float
    XTI: float
    EG: float
    XTB: float
    TNOM: float
    BVEBO: float

    @classmethod
    def from_params(cls, type_: str, params: Mapping[str, float], tnom: float = 27.0) -> "BjtModel":
        """Build from upper-case parameters; missing ones take :data:`BJT_DEFAULTS`.

        A ``VAF`` of 0 means "none" (infinite), as in SPICE.
        """
        merged = {**BJT_DEFAULTS, "TNOM": tnom, **{k: float(v) for k, v in params.items()}}
        if merged["VAF"] == 0:
            merged["VAF"] = math.inf
        polarity = -1 if type_ == "pnp" else 1
        names = [f.name for f in fields(cls) if f.name != "polarity"]
        return cls(polarity, **{name: merged[name] for name in names})

    def at(self, celsius: float, multiplier: float = 1.0) -> "BjtAtTemperature":
        """Temperature-adjusted values at ``celsius`` for a device of ``multiplier`` unit devices.

        Examples
        --------
        >>> m = BjtModel.from_params("npn", {"IS": 1e-16, "XTI": 3, "EG": 1.11})
        >>> m.at(27.0).is_ == 1e-16
        True
        """
        params = {name: getattr(self, name) for name in ("IS", "BF", "BR", "NF", "NR", "VAF", "XTI", "EG", "XTB",
                                                         "TNOM", "BVEBO")}
        numbers = bjt_numbers({**params, "polarity": self.polarity, "mult": float(multiplier)}, celsius)
        return BjtAtTemperature(**{f.name: _plain(getattr(numbers, f.name)) for f in fields(BjtAtTemperature)})


def _plain(value):
    return value.item() if isinstance(value, (np.ndarray, np.generic)) and np.ndim(value) == 0 else value


@dataclass(frozen=True)
class BjtAtTemperature:
    """A BJT's numbers at one temperature; fields are floats or equal-length arrays."""

    polarity: object
    is_: object
    bf: object
    br: object
    nf: object
    nr: object
    inv_vaf: object
    vt: object
    mult: object
    bvebo: object = 6.0
    vcrit_forward: object = None
    vcrit_reverse: object = None

    def vcrit(self, reverse: bool = False):
        """Junction voltage above which Newton steps are limited (SPICE's critical voltage)."""
        stored = self.vcrit_reverse if reverse else self.vcrit_forward
        if stored is not None:
            return stored
        vtn = (self.nr if reverse else self.nf) * self.vt
        return vtn * np.log(vtn / (math.sqrt(2.0) * self.is_))


def stack_bjts(items: list[BjtAtTemperature]) -> BjtAtTemperature:
    """Stack per-device values into one object of arrays (one entry per device).

    Examples
    --------
    >>> m = BjtModel.from_params("npn", {})
    >>> stack_bjts([m.at(27.0), m.at(27.0, 2)]).mult
    array([1., 2.])
    """
    def column(name: str):
        values = [getattr(item, name) for item in items]
        return None if any(v is None for v in values) else np.array(values, dtype=float)

    return BjtAtTemperature(**{f.name: column(f.name) for f in fields(BjtAtTemperature)})


@dataclass(frozen=True)
class BjtCurrents:
    """Collector and base currents (npn frame) and their partial derivatives."""

    ic: np.ndarray
    ib: np.ndarray
    dic_dvbe: np.ndarray
    dic_dvbc: np.ndarray
    dib_dvbe: np.ndarray
    dib_dvbc: np.ndarray
    icc: np.ndarray
    iec: np.ndarray


def bjt_currents(vbe, vbc, t: BjtAtTemperature) -> BjtCurrents:
    """Terminal currents in the npn frame at junction voltages ``vbe``, ``vbc``.

    The emitter current is ``-(ic + ib)``.  Derivatives are exact (the solver's
    Jacobian and the small-signal values both come from them).

    Examples
    --------
    >>> t = BjtModel.from_params("npn", {"IS": 1e-16}).at(27.0)
    >>> c = bjt_currents(0.7, 0.0, t)
    >>> bool(abs(c.dic_dvbe / c.ic - 1 / t.vt) < 1e-6)
    True
    """
    vbe = np.asarray(vbe, dtype=float)
    vbc = np.asarray(vbc, dtype=float)
    vtf = t.nf * t.vt
    vtr = t.nr * t.vt
    forward, forward_slope = safe_exp_and_slope(vbe / vtf)
    reverse, reverse_slope = safe_exp_and_slope(vbc / vtr)
    scaled = t.mult * t.is_  # the multiplier folded in once, on the per-device numbers
    icc = scaled * (forward - 1.0)
    iec = scaled * (reverse - 1.0)
    gcc = (scaled / vtf) * forward_slope
    gec = (scaled / vtr) * reverse_slope
    early = 1.0 - vbc * t.inv_vaf  # 1/qb
    transport = icc - iec
    reverse_base = iec / t.br
    gmin = t.mult * GMIN
    gec_br = gec / t.br
    return BjtCurrents(
        ic=transport * early - reverse_base,
        ib=icc / t.bf + reverse_base + gmin * (vbe + vbc),
        dic_dvbe=gcc * early,
        dic_dvbc=-gec * early - transport * t.inv_vaf - gec_br,
        dib_dvbe=gcc / t.bf + gmin,
        dib_dvbc=gec_br + gmin,
        icc=icc,
        iec=iec,
    )


def bjt_limit(v_new, v_old, t: BjtAtTemperature, reverse: bool = False):
    """Limit a Newton update of a junction voltage (the logarithmic pn-junction limiter).

    Above the critical voltage a step of more than two emission voltages is
    replaced by the step that changes the junction current by the same factor
    a linear step in current would, so the exponential cannot run away.

    Examples
    --------
    >>> t = BjtModel.from_params("npn", {}).at(27.0)
    >>> float(bjt_limit(5.0, 0.6, t)) < 0.8
    True
    """
    vtn = (t.nr if reverse else t.nf) * t.vt
    return pn_limit(v_new, v_old, vtn, t.vcrit(reverse))


def bjt_region(c: BjtCurrents, vbc, t: BjtAtTemperature) -> np.ndarray:
    """Operating region of each device: active, saturation, cutoff or reverse.

    *cutoff*: both transport currents below :data:`ION_MIN`; *reverse*: the
    collector junction injects more than the emitter junction; *saturation*:
    the forward-biased collector junction removes more than
    :data:`SATURATION_FRACTION` of the collector current the active-region law
    (``Icc/qb``) would give; otherwise *active*.

    Examples
    --------
    >>> t = BjtModel.from_params("npn", {"IS": 1e-16}).at(27.0)
    >>> bjt_region(bjt_currents([0.7, 0.7, 0.0], [-1.0, 0.65, -1.0], t), [-1.0, 0.65, -1.0], t).tolist()
    ['active', 'saturation', 'cutoff']
    """
    early = 1.0 - np.asarray(vbc, dtype=float) * t.inv_vaf
    forward = c.icc * early
    deficit = c.iec * (early + 1.0 / t.br)
    cutoff = (np.abs(c.icc) < ION_MIN * 1.0) & (np.abs(c.iec) < ION_MIN * 1.0)
    reverse = c.iec > c.icc
    saturated = deficit > SATURATION_FRACTION * forward
    codes = np.where(cutoff, 2, np.where(reverse, 3, np.where(saturated, 1, 0)))
    return _REGIONS[codes]


def bjt_small_signal(c: BjtCurrents) -> dict[str, np.ndarray]:
    """Hybrid-pi values at the operating point: gm, rpi, ro (and beta = gm*rpi).

    They are the exact linearisation with ``vce`` and ``vbe`` as the port
    voltages (``vbc = vbe - vce``)::

        gm  = dIC/dVBE at constant VCE
        rpi = 1 / (dIB/dVBE at constant VCE)
        ro  = 1 / (dIC/dVCE at constant VBE) = (VAF + VCB)/IC in the active region

    Examples
    --------
    >>> t = BjtModel.from_params("npn", {"IS": 1e-16, "VAF": 50}).at(27.0)
    >>> s = bjt_small_signal(bjt_currents(0.7, -2.0, t))
    >>> sorted(s)
    ['beta', 'gm', 'ro', 'rpi']
    """
    gm = c.dic_dvbe + c.dic_dvbc
    go = -c.dic_dvbc
    gpi = c.dib_dvbe + c.dib_dvbc
    with np.errstate(divide="ignore"):
        ro = np.where(go > 0, 1.0 / np.where(go > 0, go, 1.0), np.inf)
        rpi = np.where(gpi > 0, 1.0 / np.where(gpi > 0, gpi, 1.0), np.inf)
    return {"gm": gm, "rpi": rpi, "ro": ro, "beta": gm * rpi}


def bjt_vcesat(vbe, t: BjtAtTemperature, fraction: float = SATURATION_FRACTION):
    """Collector-emitter voltage at which a device at ``vbe`` enters saturation.

    The edge used by :func:`bjt_region`: the reverse junction removes
    ``fraction`` of the active-region collector current.  Solved by a few
    fixed-point steps (the Early factor hardly changes across them).

    Examples
    --------
    >>> t = BjtModel.from_params("npn", {"IS": 1e-16, "BR": 1}).at(27.0)
    >>> round(float(bjt_vcesat(0.7, t)), 3)
    0.137
    """
    vbe = np.asarray(vbe, dtype=float)
    icc = t.is_ * (np.exp(vbe / (t.nf * t.vt)) - 1.0)
    vbc = vbe - 0.1
    share, base, vtr = fraction * icc, 1.0 / t.br, t.nr * t.vt  # loop invariants (same products as in the loop)
    for _ in range(6):
        early = 1.0 - vbc * t.inv_vaf
        target = share * early / (early + base)
        vbc = vtr * np.log1p(target / t.is_)
    return vbe - vbc


def bjt_numbers(params: Mapping[str, object], celsius) -> BjtAtTemperature:
    """The SPICE temperature laws on parameter arrays (one column per device, one row per sample).

    ``params`` holds ``IS BF BR NF NR VAF XTI EG XTB TNOM BVEBO`` (``VAF``
    infinite or 0 for no Early effect), ``polarity`` and ``mult``.

    Examples
    --------
    >>> p = {**BJT_DEFAULTS, "TNOM": 27.0, "polarity": 1, "mult": 1.0}
    >>> float(bjt_numbers(p, 127.0).is_) / 1e-16 > 100
    True
    """
    celsius = np.asarray(celsius, dtype=float)
    ratio = kelvin(celsius) / kelvin(np.asarray(params["TNOM"], dtype=float))
    vt = thermal_voltage(celsius)
    vaf = np.asarray(params["VAF"], dtype=float)
    finite = np.isfinite(vaf) & (vaf != 0)
    with np.errstate(divide="ignore"):
        inv_vaf = np.where(finite, 1.0 / np.where(finite, vaf, 1.0), 0.0)
    beta_factor = ratio ** np.asarray(params["XTB"], dtype=float)
    is_t = params["IS"] * np.exp((ratio - 1.0) * params["EG"] / vt + params["XTI"] * np.log(ratio))
    vtf, vtr = params["NF"] * vt, params["NR"] * vt
    return BjtAtTemperature(
        polarity=np.asarray(params["polarity"], dtype=float),
        is_=is_t,
        bf=params["BF"] * beta_factor,
        br=params["BR"] * beta_factor,
        nf=np.asarray(params["NF"], dtype=float),
        nr=np.asarray(params["NR"], dtype=float),
        inv_vaf=inv_vaf,
        vt=vt,
        mult=np.asarray(params["mult"], dtype=float),
        bvebo=np.asarray(params["BVEBO"], dtype=float),
        vcrit_forward=vtf * np.log(vtf / (math.sqrt(2.0) * is_t)),
        vcrit_reverse=vtr * np.log(vtr / (math.sqrt(2.0) * is_t)),
    )


# -- the device interface (symbias.devices.nonlinear) ------------------------------------------------


def _stamp(model: DeviceModel, element, context) -> DcStamp:
    type_, params, tnom = context.model_parameters(element)
    review_parameters(element, context, {**params, "TNOM": tnom}, model_name="bipolar model",
                      ranges=BJT_RANGES, modelled=(*BJT_PARAMETERS, *AC_PARAMETERS["Q"], "TNOM"), essentials=("IS",))
    merged = {**BJT_DEFAULTS, **params}
    numbers = {name: merged[name] for name in ("IS", "BF", "BR", "NF", "NR", "VAF", "XTI", "EG", "XTB", "BVEBO")}
    numbers.update(TNOM=tnom, polarity=-1.0 if type_ == "pnp" else 1.0,
                   mult=context.multiplier(element, ("m", "area")))
    c, b, e = element.nodes[:3]
    return DcStamp(device=DeviceStamp(model, type_, (c, b, e), (c, b, e), numbers), off=((e, b, 0.0), (b, e, 0.0)))


def _terminal_currents(c: BjtCurrents) -> np.ndarray:
    currents = np.empty(np.shape(c.ic) + (3,))
    currents[..., 0], currents[..., 1] = c.ic, c.ib
    currents[..., 2] = -(c.ic + c.ib)
    return currents


def _evaluate(t: BjtAtTemperature, controls: np.ndarray):
    c = bjt_currents(controls[..., 0], controls[..., 1], t)
    currents = _terminal_currents(c)
    jacobian = np.empty(currents.shape + (2,))
    jacobian[..., 0, 0], jacobian[..., 0, 1] = c.dic_dvbe, c.dic_dvbc
    jacobian[..., 1, 0], jacobian[..., 1, 1] = c.dib_dvbe, c.dib_dvbc
    jacobian[..., 2, 0] = -(c.dic_dvbe + c.dib_dvbe)
    jacobian[..., 2, 1] = -(c.dic_dvbc + c.dib_dvbc)
    return currents, jacobian


def _limit(t: BjtAtTemperature, new: np.ndarray, old: np.ndarray) -> np.ndarray:
    out = np.empty_like(new)
    out[..., 0] = bjt_limit(new[..., 0], old[..., 0], t)
    out[..., 1] = bjt_limit(new[..., 1], old[..., 1], t, reverse=True)
    return out


def _start(t: BjtAtTemperature, kind: str, raw: np.ndarray) -> np.ndarray:
    out = np.zeros_like(raw)
    if kind == "on":
        out[..., 0] = t.vcrit()
    return out


def _describe(t: BjtAtTemperature, controls: np.ndarray) -> Description:
    vbe, vbc = controls[..., 0], controls[..., 1]
    c = bjt_currents(vbe, vbc, t)
    return Description(bjt_region(c, vbc, t), bjt_small_signal(c), {"vcesat": bjt_vcesat(vbe, t)},
                       _terminal_currents(c))


def _check(t: BjtAtTemperature, controls: np.ndarray, currents: np.ndarray) -> list[Violation]:
    vbe = controls[..., 0]
    bvebo = np.broadcast_to(t.bvebo, vbe.shape)
    worst = np.maximum(np.abs(currents[..., 0]), np.abs(currents[..., 1]))
    return [
        Violation(vbe < -bvebo, -vbe, "{name}: emitter-base junction reversed by {value:.3g} V, beyond BVEBO = "
                  "{limit:g} V (the model has no breakdown); check the sources driving it", bvebo),
        Violation(worst > MAX_CURRENT, worst,
                  "{name}: {value:.3g} A through a junction forced on hard (a voltage source across it?)"),
    ]


def bjt_mismatch(params: Mapping[str, object], element, context) -> dict[str, tuple[object, object]]:
    """Random variation of one BJT: ``IS`` with a relative sigma ``AIS / sqrt(2 area m)``.

    ``AIS`` (process or model card) is the sigma of the saturation-current
    ratio of two unit-area devices, so each device of ``area * m`` units
    varies by ``AIS / sqrt(2 area m)``; no ``AIS`` means no variation.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.devices.dc_context import StampContext
    >>> c = parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN 2\\n.model QN npn (IS=1e-16 AIS=0.02)\\n")
    >>> nominal, sigma = bjt_mismatch({"IS": 1e-16, "AIS": 0.02}, c.element("Q1"), StampContext.create(c))["IS"]
    >>> round(float(sigma / nominal), 6)
    0.01
    """
    coefficient = params.get("AIS", 0.0)
    if not np.any(np.asarray(coefficient) > 0):
        return {}
    units = context.multiplier(element, ("m", "area"))
    nominal = params.get("IS", BJT_DEFAULTS["IS"])
    return {"IS": (nominal, nominal * coefficient / np.sqrt(2.0 * units))}


def _matched(prefix: str, device, source, ratio):
    import sympy

    name = {"VBE": "VBE", "VCEsat": "VCEsat"}[prefix]
    value = abs(source.voltages["vbe"]) if prefix == "VBE" else source.limits["vcesat"]
    return sympy.Symbol(name), {name: value}


#: The bipolar transistor as the DC solver sees it (the ``dc`` hook of ``Q``).
BJT = DeviceModel(
    letter="Q",
    terminals=("c", "b", "e"),
    controls=(("vbe", 1, 2), ("vbc", 1, 0)),
    current_terminals=(0, 1, 2),
    output="c",
    voltages=(("vbe", 1, 2), ("vce", 0, 2), ("vbc", 1, 0)),
    parameters=BJT_PARAMETERS,
    stamp=_stamp,
    numbers=bjt_numbers,
    evaluate=_evaluate,
    limit=_limit,
    start=_start,
    describe=_describe,
    check=_check,
    working_regions=frozenset({"active"}),
    fields=(("IC", "currents", "c", "A"), ("VBE", "voltages", "vbe", "V"), ("VCE", "voltages", "vce", "V"),
            ("gm", "small_signal", "gm", "S"), ("rpi", "small_signal", "rpi", "ohm"),
            ("ro", "small_signal", "ro", "ohm"), ("VCEsat", "limits", "vcesat", "V")),
    headroom=HeadroomRole(output=(0, 2), control=1, drop=("VBE", "vbe"), saturation=("VCEsat", "vcesat"),
                          matched=_matched, size=lambda element: 1.0),
    mismatch=bjt_mismatch,
)

#: The ``dc`` hook named in :mod:`symbias.elements`.
bjt_dc = BJT
