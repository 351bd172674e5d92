"""Large-signal (DC) junction diode model with the SPICE temperature laws.

Device level of the numeric side; the ``dc`` hook of ``D`` elements.  The
junction follows the Shockley equation with emission coefficient ``N``, and
the reverse and breakdown branches of the SPICE diode (as ngspice writes
them), so that it agrees with a simulator on the same parameters::

    VD >= -3 N VT:          ID = IS (exp(VD/(N VT)) - 1)
    -BVeff <= VD < -3 N VT: ID = -IS (1 + (3 N VT/(e VD))**3)
    VD < -BVeff:            ID = -IS exp(-(BVeff + VD)/(NBV VT))
    plus GMIN VD across the junction

``BVeff`` is ``BV`` moved so that the breakdown current at ``-BV`` is ``IBV``
(the SPICE adjustment).  ``RS`` is a series resistance: an internal node
between it and the junction.  ``area`` and ``m`` multiply ``IS``, ``IBV`` and
``CJO`` and divide ``RS``.

Temperature (degC in, kelvin inside)::

    IS(T) = IS exp((T/Tnom - 1) EG/(N VT(T))) (T/Tnom)**(XTI/N)

and ``CJO``, ``VJ`` follow the SPICE3 junction-potential law (only the
small-signal ``cj`` uses them).

Small-signal values: ``rd = RS/(area m) + 1/gd`` (the whole anode-cathode
resistance, ``gd = dID/dVD`` with GMIN), and where ``CJO`` or ``TT`` is given
``cj = CJO (1 - VD/VJ)**-M + TT gd`` (above ``FC VJ`` the usual linear
continuation).

Examples
--------
>>> t = diode_numbers({**DIODE_DEFAULTS, "IS": 1e-14, "TNOM": 27.0, "area": 1.0, "m": 1.0}, 27.0)
>>> i, g = diode_current(0.6, t)
>>> round(float(i) * 1e6, 2)
118.72
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Mapping

import numpy as np

from ..errors import CircuitError
from .dc_context import DcStamp, DeviceStamp
from .parasitics import AC_PARAMETERS
from .review import ABOVE_ZERO_KELVIN, NON_NEGATIVE, POSITIVE, Range, review_parameters
from .nonlinear import (GMIN, ION_MIN, MAX_CURRENT, Description, DeviceModel, Violation, pn_critical_voltage, pn_limit,
                        safe_exp, safe_exp_slope)
from .temperature import BOLTZMANN, CHARGE, kelvin, thermal_voltage

__all__ = [
    "DIODE_DEFAULTS",
    "DIODE_PARAMETERS",
    "DiodeAtTemperature",
    "diode_numbers",
    "diode_current",
    "diode_capacitance",
    "diode_dc",
    "DIODE",
]

#: Parameter defaults (SPICE's); ``BV`` infinite means no breakdown, ``NBV`` None means ``N``.
DIODE_DEFAULTS: dict[str, float] = {
    "IS": 1e-14, "N": 1.0, "RS": 0.0, "BV": math.inf, "IBV": 1e-3, "NBV": math.nan, "XTI": 3.0, "EG": 1.11,
    "CJO": 0.0, "VJ": 1.0, "M": 0.5, "TT": 0.0, "FC": 0.5,
}
#: Parameters the model reads (``AIS``: mismatch coefficient, as for a BJT).
DIODE_PARAMETERS = (*DIODE_DEFAULTS, "AIS")
_ALIASES = {"CJ0": "CJO", "CJ": "CJO", "PB": "VJ", "MJ": "M"}
#: Valid range of each parameter and what it is (checked where a device is stamped).
DIODE_RANGES: dict[str, tuple[Range, str]] = {
    "IS": (POSITIVE, "saturation current, A"),
    "N": (POSITIVE, "emission coefficient"),
    "RS": (NON_NEGATIVE, "series resistance, ohm"),
    "BV": (POSITIVE, "reverse breakdown voltage, V"),
    "IBV": (POSITIVE, "current at the breakdown voltage, A"),
    "NBV": (POSITIVE, "breakdown emission coefficient"),
    "EG": (POSITIVE, "band gap, eV"),
    "CJO": (NON_NEGATIVE, "zero-bias junction capacitance, F"),
    "VJ": (POSITIVE, "junction potential, V"),
    "M": (Range(0.0, 1.0, closed_low=True), "grading coefficient"),
    "FC": (Range(0.0, 1.0, closed_low=True), "forward-bias depletion capacitance coefficient"),
    "TT": (NON_NEGATIVE, "transit time, s"),
    "AIS": (NON_NEGATIVE, "mismatch coefficient of IS"),
    "TNOM": (ABOVE_ZERO_KELVIN, "nominal temperature, degC"),
}
_REFERENCE_KELVIN = 300.15
_GAP_AT_REFERENCE = 1.1150877  # eV: the silicon gap law below at 300.15 K, as SPICE writes it


@dataclass(frozen=True)
class DiodeAtTemperature:
    """A diode's numbers at one temperature (floats or ``(B, ndev)`` arrays); area and m folded in."""

    polarity: object
    csat: object
    vte: object
    vt: object
    breakdown: object
    xbv: object
    vtebrk: object
    vcrit: object
    rs: object
    cjo: object
    vj: object
    m: object
    fc: object
    tt: object
    capacitance: object


def _gap(kelvin_t):
    """Silicon band gap (eV) against temperature, the law SPICE uses for junction potentials."""
    return 1.16 - (7.02e-4 * kelvin_t * kelvin_t) / (kelvin_t + 1108.0)


def _junction_potential_factor(kelvin_t):
    """SPICE3's ``pbfact`` of the junction-potential temperature law (volts)."""
    vt = BOLTZMANN * kelvin_t / CHARGE
    arg = -_gap(kelvin_t) / (2.0 * BOLTZMANN * kelvin_t) + _GAP_AT_REFERENCE / (
        BOLTZMANN * 2.0 * _REFERENCE_KELVIN)
    return -2.0 * vt * (1.5 * np.log(kelvin_t / _REFERENCE_KELVIN) + CHARGE * arg)


def _capacitance_at(params, t, tnom):
    """CJO and VJ at temperature by the SPICE3 law (checked against ngspice 39 in the tests)."""
    vj, grading = params["VJ"], params["M"]
    fact1, fact2 = tnom / _REFERENCE_KELVIN, t / _REFERENCE_KELVIN
    pbo = (vj - _junction_potential_factor(tnom)) / fact1
    old = (vj - pbo) / pbo
    potential = _junction_potential_factor(t) + fact2 * pbo
    new = (potential - pbo) / pbo
    cjo = params["CJO"] / (1.0 + grading * (400e-6 * (tnom - _REFERENCE_KELVIN) - old))
    return cjo * (1.0 + grading * (400e-6 * (t - _REFERENCE_KELVIN) - new)), potential


def _breakdown_voltage(bv, ibv, csat, vt, nbv):
    """SPICE's effective breakdown voltage: the current at ``-BV`` is ``IBV`` (fixed point solved)."""
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        small = ibv < csat * bv / vt
        cbv = np.where(small, csat * bv / vt, ibv)
        xbv = bv - nbv * vt * np.log(1.0 + cbv / csat)
        for _ in range(60):
            xbv = bv - nbv * vt * np.log(cbv / csat + 1.0 - xbv / vt)
    return np.where(small | ~np.isfinite(bv), bv, xbv)


def diode_numbers(params: Mapping[str, object], celsius) -> DiodeAtTemperature:
    """The temperature laws on parameter arrays (one column per device, one row per sample).

    ``params`` holds every key of :data:`DIODE_DEFAULTS`, ``TNOM``, ``area`` and ``m``.

    Examples
    --------
    >>> p = {**DIODE_DEFAULTS, "TNOM": 27.0, "area": 2.0, "m": 1.0}
    >>> float(diode_numbers(p, 27.0).csat)
    2e-14
    """
    celsius = np.asarray(celsius, dtype=float)
    t, tnom = kelvin(celsius), kelvin(np.asarray(params["TNOM"], dtype=float))
    vt = thermal_voltage(celsius)
    n = np.asarray(params["N"], dtype=float)
    units = np.asarray(params["area"], dtype=float) * params["m"]
    ratio = t / tnom
    csat = params["IS"] * units * np.exp((ratio - 1.0) * params["EG"] / (n * vt) + params["XTI"] / n * np.log(ratio))
    vte = n * vt
    nbv = np.where(np.isnan(params["NBV"]), n, params["NBV"])
    bv = np.asarray(params["BV"], dtype=float)
    cjo, vj = _capacitance_at(params, t, tnom)
    with np.errstate(divide="ignore"):
        rs = np.where(np.asarray(params["RS"]) > 0, params["RS"] / units, 0.0)
    return DiodeAtTemperature(
        polarity=np.ones_like(csat), csat=csat, vte=vte, vt=vt, breakdown=np.isfinite(bv) & (bv > 0),
        xbv=_breakdown_voltage(bv, params["IBV"] * units, csat, vt, nbv), vtebrk=nbv * vt,
        vcrit=pn_critical_voltage(vte, csat), rs=rs, cjo=cjo * units, vj=vj, m=np.asarray(params["M"], dtype=float),
        fc=np.asarray(params["FC"], dtype=float), tt=np.asarray(params["TT"], dtype=float),
        capacitance=(np.asarray(params["CJO"]) > 0) | (np.asarray(params["TT"]) > 0),
    )


def _junction(vd, t: DiodeAtTemperature):
    """Junction current and conductance without GMIN."""
    vd = np.asarray(vd, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        x = vd / t.vte
        forward_i = t.csat * (safe_exp(x) - 1.0)
        forward_g = t.csat * safe_exp_slope(x) / t.vte
        cube = (3.0 * t.vte / (np.where(vd < 0, vd, -1.0) * math.e)) ** 3
        reverse_i = -t.csat * (1.0 + cube)
        reverse_g = t.csat * 3.0 * cube / np.where(vd < 0, vd, -1.0)
        y = -(t.xbv + vd) / t.vtebrk
        breakdown_i = -t.csat * safe_exp(y)
        breakdown_g = t.csat * safe_exp_slope(y) / t.vtebrk
    in_breakdown = t.breakdown & (vd < -t.xbv)
    forward = vd >= -3.0 * t.vte
    current = np.where(forward, forward_i, np.where(in_breakdown, breakdown_i, reverse_i))
    slope = np.where(forward, forward_g, np.where(in_breakdown, breakdown_g, reverse_g))
    return current, slope


def diode_current(vd, t: DiodeAtTemperature):
    """Junction current (anode to cathode) and its derivative at junction voltage ``vd``, GMIN included.

    Examples
    --------
    >>> t = diode_numbers({**DIODE_DEFAULTS, "TNOM": 27.0, "area": 1.0, "m": 1.0}, 27.0)
    >>> i, g = diode_current(0.7, t)
    >>> bool(abs(g * t.vte / i - 1) < 1e-6)
    True
    """
    current, slope = _junction(vd, t)
    return current + GMIN * np.asarray(vd, dtype=float), slope + GMIN


def diode_capacitance(vd, t: DiodeAtTemperature):
    """Small-signal capacitance: depletion ``CJO (1 - VD/VJ)**-M`` (linear above ``FC VJ``) plus ``TT gd``.

    Examples
    --------
    >>> p = {**DIODE_DEFAULTS, "CJO": 1e-12, "M": 0.5, "VJ": 0.8, "TNOM": 27.0, "area": 1.0, "m": 1.0}
    >>> round(float(diode_capacitance(-2.4, diode_numbers(p, 27.0))) * 1e12, 6)
    0.5
    """
    vd = np.asarray(vd, dtype=float)
    _, gdb = _junction(vd, t)
    edge = t.fc * t.vj
    with np.errstate(invalid="ignore", divide="ignore"):
        below = t.cjo * (1.0 - np.minimum(vd, edge) / t.vj) ** (-t.m)
        f2 = (1.0 - t.fc) ** (1.0 + t.m)
        above = t.cjo / f2 * (1.0 - t.fc * (1.0 + t.m) + t.m * vd / t.vj)
    return np.where(vd < edge, below, above) + t.tt * gdb


# -- the device interface (symbias.devices.nonlinear) ------------------------------------------------


def _parameters(element, context) -> tuple[str, dict, object]:
    type_, params, tnom = context.model_parameters(element)
    merged = dict(DIODE_DEFAULTS)
    named = {}
    for key, value in params.items():
        name = _ALIASES.get(key, key)
        named[name if name in DIODE_PARAMETERS else key] = value
    review_parameters(element, context, {**named, "TNOM": tnom}, model_name="diode model",
                      ranges=DIODE_RANGES, modelled=(*DIODE_PARAMETERS, *AC_PARAMETERS["D"], "TNOM"))
    merged.update({k: v for k, v in named.items() if k in DIODE_PARAMETERS})
    return type_, merged, tnom


def _stamp(model: DeviceModel, element, context) -> DcStamp:
    type_, merged, tnom = _parameters(element, context)
    numbers = {name: merged[name] for name in DIODE_DEFAULTS}
    numbers.update(TNOM=tnom, area=context.instance(element, "area", 1.0), m=context.instance(element, "m", 1.0))
    context.multiplier(element, ("m", "area"))  # refuses a non-positive one
    anode, cathode = element.nodes
    rs = np.asarray(merged["RS"], dtype=float)
    if np.any(rs < 0) or (np.any(rs == 0) and np.any(rs > 0)):
        raise CircuitError(f"{element.name}: RS must be positive or zero in every sample, not both",
                           path=context.circuit.path, line=element.line)
    entries, internal, junction = (), (), anode
    if np.any(rs > 0):
        junction = f"{element.key}#a"
        g = numbers["area"] * numbers["m"] / merged["RS"]
        entries = ((anode, anode, g), (junction, junction, g), (anode, junction, -g), (junction, anode, -g))
        internal = (junction,)
    return DcStamp(entries=entries, internal_nodes=internal,
                   device=DeviceStamp(model, type_, (junction, cathode), (anode, cathode), numbers),
                   off=((cathode, anode, 0.0), (anode, cathode, 0.0)) + ((anode, junction, 0.0),) * bool(internal))


def _evaluate(t: DiodeAtTemperature, controls: np.ndarray):
    current, slope = diode_current(controls[..., 0], t)
    currents = np.stack([current, -current], axis=-1)
    return currents, np.stack([slope, -slope], axis=-1)[..., None]


def _limit(t: DiodeAtTemperature, new: np.ndarray, old: np.ndarray) -> np.ndarray:
    vd, previous = new[..., 0], old[..., 0]
    # in breakdown SPICE limits the voltage beyond the breakdown knee, with the breakdown emission voltage
    near = t.breakdown & (vd < np.minimum(0.0, -t.xbv + 10.0 * t.vtebrk))
    forward = pn_limit(vd, previous, t.vte, t.vcrit)
    if not near.any():
        return forward[..., None]
    with np.errstate(invalid="ignore"):  # devices without breakdown have xbv = inf; masked out below
        beyond = -(pn_limit(-(vd + t.xbv), -(previous + t.xbv), t.vtebrk, t.vcrit) + t.xbv)
    return np.where(near, beyond, forward)[..., None]


def _start(t: DiodeAtTemperature, kind: str, raw: np.ndarray) -> np.ndarray:
    out = np.zeros_like(raw)
    if kind == "on":
        out[..., 0] = t.vcrit
    return out


def _describe(t: DiodeAtTemperature, controls: np.ndarray) -> Description:
    vd = controls[..., 0]
    current, slope = diode_current(vd, t)
    region = np.where(t.breakdown & (vd < -t.xbv), "breakdown",
                      np.where(vd < 0, "reverse", np.where(current >= ION_MIN, "forward", "off")))
    rd = 1.0 / slope + t.rs
    cj = np.where(t.capacitance, diode_capacitance(vd, t), np.nan)
    return Description(region, {"rd": rd, "cj": cj}, {}, np.stack([current, -current], axis=-1))


def _check(t: DiodeAtTemperature, controls: np.ndarray, currents: np.ndarray) -> list[Violation]:
    current = currents[..., 0]
    return [Violation(np.abs(current) > MAX_CURRENT, current,
                      "{name}: {value:.3g} A through the diode (a voltage source across it?)")]


def diode_mismatch(params: Mapping[str, object], element, context) -> dict[str, tuple[object, object]]:
    """Random variation of one diode: ``IS`` with a relative sigma ``AIS / sqrt(2 area m)`` (as a BJT)."""
    coefficient = params.get("AIS", 0.0)
    if not np.any(np.asarray(coefficient) > 0):
        return {}
    units = context.multiplier(element, ("m", "area"))
    nominal = params.get("IS", DIODE_DEFAULTS["IS"])
    return {"IS": (nominal, nominal * coefficient / np.sqrt(2.0 * units))}


#: The junction diode as the DC solver sees it (the ``dc`` hook of ``D``).
DIODE = DeviceModel(
    letter="D",
    terminals=("a", "k"),
    controls=(("vd", 0, 1),),
    current_terminals=(0, 1),
    output="a",
    voltages=(("vd", 0, 1),),
    parameters=DIODE_PARAMETERS + tuple(_ALIASES),
    stamp=_stamp,
    numbers=diode_numbers,
    evaluate=_evaluate,
    limit=_limit,
    start=_start,
    describe=_describe,
    check=_check,
    fields=(("ID", "currents", "a", "A"), ("VD", "voltages", "vd", "V"), ("rd", "small_signal", "rd", "ohm"),
            ("cj", "small_signal", "cj", "F")),
    mismatch=diode_mismatch,
)

#: The ``dc`` hook named in :mod:`symbias.elements`.
diode_dc = DIODE
