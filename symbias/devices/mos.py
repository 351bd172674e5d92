"""Large-signal (DC) MOS transistor model with temperature laws.

Device level of the numeric side.  In strong inversion the model *is* the
square law of SPICE level 1 (Shichman-Hodges), with channel-length
modulation and the body effect::

    VTH = VTO + GAMMA (sqrt(PHI - vbs) - sqrt(PHI))
    ID  = beta/2 (F(vgs - VTH)**2 - F(vgd - VTH)**2) (1 + LAMBDA vds),  beta = KP W/L m

where ``F(v) = v`` for ``v >= s`` and ``F(v) = s exp(v/s - 1)`` below, with
``s = 2 n VT`` and the slope factor ``n = 1 + GAMMA/(2 sqrt(PHI))``.  For
``v >= s`` on both terms this is exactly level 1 in the triode region, and
once ``vds`` exceeds the overdrive by a few ``s`` the reverse term vanishes
and it is level 1 in saturation.  Below ``vgs - VTH = s`` the current falls
exponentially with the physical subthreshold slope ``n VT`` per e-fold, and
``F`` joins the square law with matching value and slope (C1), so Newton sees
no kink.  Like the forward/reverse (EKV-style) form, one expression covers
subthreshold, saturation and triode with no region switch.

The device is symmetric: when ``vds < 0`` drain and source swap roles.
Voltages and currents are in the nmos frame; a pmos is evaluated with signs
flipped (``polarity``); its VTO is given negative, as in SPICE.

Temperature: ``VTO`` magnitude changes by ``TCV`` volt per kelvin and
``KP(T) = KP (T/Tnom)**BEX`` (mobility).

Examples
--------
>>> m = MosModel.from_params("nmos", {"VTO": 0.7, "KP": 100e-6, "LAMBDA": 0.0})
>>> t = m.at(27.0, w=10e-6, l=1e-6)
>>> round(float(mos_currents(1.2, 2.0, 0.0, t).id) / (0.5 * 100e-6 * 10 * 0.5**2), 12)
1.0
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields
from typing import Mapping

import numpy as np

from ..errors import CircuitError
from .dc_context import DcStamp, DeviceStamp
from .parasitics import AC_PARAMETERS
from .review import ABOVE_ZERO_KELVIN, NON_NEGATIVE, POSITIVE, Range, review_parameters
from .nonlinear import GMIN, ION_MIN, MAX_CURRENT, Description, DeviceModel, HeadroomRole, Violation
from .temperature import kelvin, thermal_voltage

__all__ = [
    "MosModel",
    "MosAtTemperature",
    "MosCurrents",
    "MOS_DEFAULTS",
    "mos_currents",
    "mos_limit",
    "mos_region",
    "mos_small_signal",
    "stack_mos",
    "mos_numbers",
    "mos_mismatch",
    "mos_size",
    "mos_dc",
    "MOS",
    "BULK_FORWARD_LIMIT",
]

#: Parameter defaults where neither the netlist nor the process gives one (SPICE level-1
#: defaults; TCV and BEX default to no temperature dependence).
MOS_DEFAULTS: dict[str, float] = {
    "VTO": 0.0, "KP": 2e-5, "LAMBDA": 0.0, "GAMMA": 0.0, "PHI": 0.6, "TCV": 0.0, "BEX": 0.0,
}

#: Largest change of vgs (V) the solver takes in one Newton step.
VGS_STEP = 0.5
#: Forward bias (V) of a bulk junction beyond which a result is refused (bulk diodes are not modelled).
BULK_FORWARD_LIMIT = 0.5
#: Parameters the model reads (``AVT``, ``ABETA``: mismatch coefficients, see :func:`mos_mismatch`).
MOS_PARAMETERS = ("VTO", "KP", "LAMBDA", "GAMMA", "PHI", "TCV", "BEX", "AVT", "ABETA")
#: Valid range of each parameter and what it is (checked where a device is stamped).
MOS_RANGES: dict[str, tuple[Range, str]] = {
    "KP": (POSITIVE, "transconductance parameter mu Cox, A/V^2"),
    "LAMBDA": (NON_NEGATIVE, "channel-length modulation, 1/V"),
    "GAMMA": (NON_NEGATIVE, "body-effect coefficient, V^0.5"),
    "PHI": (POSITIVE, "surface potential 2 phi_F, V"),
    "AVT": (NON_NEGATIVE, "Pelgrom coefficient of the threshold, V m"),
    "ABETA": (NON_NEGATIVE, "Pelgrom coefficient of beta, m"),
    "TNOM": (ABOVE_ZERO_KELVIN, "nominal temperature, degC"),
}


@dataclass(frozen=True)
class MosModel:
    """Parameters of a MOS transistor model (SPICE level-1 names plus TCV, BEX).

    Examples
    --------
    >>> MosModel.from_params("pmos", {"VTO": -0.7}).polarity
    -1
    """

    polarity: int
    VTO: float
    KP: float
    LAMBDA: float
    GAMMA: float
    PHI: float
    TCV: float
    BEX: float
    TNOM: float

    @classmethod
    def from_params(cls, type_: str, params: Mapping[str, float], tnom: float = 27.0) -> "MosModel":
        """Build from upper-case parameters; missing ones take :data:`MOS_DEFAULTS`."""
        merged = {**MOS_DEFAULTS, "TNOM": tnom, **{k: float(v) for k, v in params.items()}}
        polarity = -1 if type_ == "pmos" else 1
        names = [f.name for f in fields(cls) if f.name != "polarity"]
        return cls(polarity, **{name: merged[name] for name in names})

    def at(self, celsius: float, w: float = 1.0, l: float = 1.0, multiplier: float = 1.0) -> "MosAtTemperature":
        """Temperature-adjusted values at ``celsius`` for a device of size ``w``/``l`` times ``multiplier``.

        Examples
        --------
        >>> m = MosModel.from_params("nmos", {"VTO": 0.7, "TCV": -2e-3})
        >>> round(m.at(127.0).vto, 6)
        0.5
        """
        params = {name: getattr(self, name) for name in ("VTO", "KP", "LAMBDA", "GAMMA", "PHI", "TCV", "BEX", "TNOM")}
        numbers = mos_numbers({**params, "polarity": self.polarity, "w": w, "l": l, "mult": multiplier}, celsius)
        return MosAtTemperature(**{f.name: _plain(getattr(numbers, f.name)) for f in fields(MosAtTemperature)})


def _plain(value):
    return value.item() if isinstance(value, (np.ndarray, np.generic)) and np.ndim(value) == 0 else value


@dataclass(frozen=True)
class MosAtTemperature:
    """A MOS device's numbers at one temperature (nmos frame); floats or equal-length arrays."""

    polarity: object
    vto: object
    beta: object
    lam: object
    gamma: object
    phi: object
    s: object
    vt: object


def stack_mos(items: list[MosAtTemperature]) -> MosAtTemperature:
    """Stack per-device values into one object of arrays (one entry per device).

    Examples
    --------
    >>> m = MosModel.from_params("nmos", {})
    >>> stack_mos([m.at(27.0), m.at(27.0, w=2.0)]).beta
    array([2.e-05, 4.e-05])
    """
    return MosAtTemperature(**{
        f.name: np.array([getattr(item, f.name) for item in items], dtype=float) for f in fields(MosAtTemperature)
    })


@dataclass(frozen=True)
class MosCurrents:
    """Drain current (nmos frame, into the drain) and its partial derivatives.

    ``vth`` and ``vov`` are those of the side acting as source; ``reversed``
    marks devices whose drain and source swapped roles.
    """

    id: np.ndarray
    did_dvgs: np.ndarray
    did_dvds: np.ndarray
    did_dvbs: np.ndarray
    vth: np.ndarray
    vov: np.ndarray
    forward: np.ndarray
    reversed: np.ndarray


def _threshold(vbs, t: MosAtTemperature):
    """VTH and dVTH/dvbs; for vbs > 0 the level-1 linear continuation of the square root."""
    sqrt_phi = np.sqrt(t.phi)
    if not np.any(t.gamma):
        return t.vto + np.zeros_like(vbs), np.zeros_like(vbs)
    root = np.sqrt(np.maximum(t.phi - np.minimum(vbs, 0.0), 0.0))
    if not (vbs > 0.0).any() and (root > 0).all():  # the usual case: bulk reverse-biased or at the source
        return t.vto + t.gamma * (root - sqrt_phi), t.gamma * (-0.5 / root)
    linear = sqrt_phi - np.maximum(vbs, 0.0) / (2.0 * sqrt_phi)
    sarg = np.where(vbs <= 0.0, root, np.maximum(linear, 0.0))
    dsarg = np.where(vbs <= 0.0, -0.5 / np.where(root > 0, root, 1.0), np.where(linear > 0, -0.5 / sqrt_phi, 0.0))
    return t.vto + t.gamma * (sarg - sqrt_phi), t.gamma * dsarg


def _smooth_overdrive(v, s):
    """F(v) and F'(v): v above the join s, s*exp(v/s - 1) below (C1 at v = s)."""
    below = s * np.exp(np.minimum(v / s - 1.0, 0.0))
    slope = below / s
    strong = v >= s
    return np.where(strong, v, below), np.where(strong, 1.0, slope)


def _forward_mode(vgs, vds, vbs, t: MosAtTemperature):
    # a diverging Newton trial may reach absurd voltages; the solver rejects the
    # non-finite result, so the overflow itself is not worth a warning
    with np.errstate(over="ignore", invalid="ignore"):
        return _forward_mode_values(vgs, vds, vbs, t)


def _forward_mode_values(vgs, vds, vbs, t: MosAtTemperature):
    vth, dvth = _threshold(vbs, t)
    vov = vgs - vth
    f, df = _smooth_overdrive(vov, t.s)
    r, dr = _smooth_overdrive(vov - vds, t.s)
    clm = 1.0 + t.lam * vds
    core = 0.5 * t.beta * (f * f - r * r)
    gm = t.beta * (f * df - r * dr) * clm
    gds = t.beta * r * dr * clm + core * t.lam
    gmb = -gm * dvth
    return core * clm, gm, gds, gmb, vth, vov, 0.5 * t.beta * f * f


def mos_currents(vgs, vds, vbs, t: MosAtTemperature) -> MosCurrents:
    """Drain current (nmos frame) and derivatives at ``vgs``, ``vds``, ``vbs``.

    The source current is ``-id``; the gate draws none.  The solver adds a
    conductance :data:`~symbias.devices.bjt.GMIN` from drain and from source to
    bulk, as simulators put across the bulk junctions.

    Examples
    --------
    >>> t = MosModel.from_params("nmos", {"VTO": 0.5, "KP": 1e-4}).at(27.0)
    >>> a, b = mos_currents(1.0, 0.3, 0.0, t), mos_currents(0.7, -0.3, -0.3, t)
    >>> bool(np.isclose(a.id, -b.id))
    True
    """
    vgs = np.asarray(vgs, dtype=float)
    vds = np.asarray(vds, dtype=float)
    vbs = np.asarray(vbs, dtype=float)
    flip = vds < 0.0
    if not flip.any():
        i_m, gm_m, gds_m, gmb_m, vth, vov, forward = _forward_mode(vgs, vds, vbs, t)
        return MosCurrents(i_m, gm_m, gds_m, gmb_m, vth, vov, forward, flip)
    # in reverse mode the drain acts as source: vgs' = vgd, vds' = -vds, vbs' = vbd
    vgs_m = np.where(flip, vgs - vds, vgs)
    vds_m = np.abs(vds)
    vbs_m = np.where(flip, vbs - vds, vbs)
    i_m, gm_m, gds_m, gmb_m, vth, vov, forward = _forward_mode(vgs_m, vds_m, vbs_m, t)
    return MosCurrents(
        id=np.where(flip, -i_m, i_m),
        did_dvgs=np.where(flip, -gm_m, gm_m),
        did_dvds=np.where(flip, gm_m + gds_m + gmb_m, gds_m),
        did_dvbs=np.where(flip, -gmb_m, gmb_m),
        vth=vth,
        vov=vov,
        forward=forward,
        reversed=flip,
    )


def mos_limit(v_new, v_old):
    """Limit a Newton update of vgs to :data:`VGS_STEP` volt.

    Examples
    --------
    >>> float(mos_limit(3.0, 0.0))
    0.5
    """
    v_new = np.asarray(v_new, dtype=float)
    return np.clip(v_new, v_old - VGS_STEP, v_old + VGS_STEP)


def mos_region(c: MosCurrents, vds, t: MosAtTemperature) -> np.ndarray:
    """Operating region: saturation, triode, subthreshold or cutoff.

    *cutoff*: forward current below :data:`~symbias.devices.bjt.ION_MIN`;
    *subthreshold*: overdrive below the join ``s = 2 n VT`` of the square law;
    above it *saturation* when ``|vds| >= vov``, else *triode*.

    Examples
    --------
    >>> t = MosModel.from_params("nmos", {"VTO": 0.5, "KP": 1e-4}).at(27.0)
    >>> mos_region(mos_currents([1.0, 1.0, 0.55, 0.0], [1.0, 0.1, 1.0, 1.0], 0.0, t), [1.0, 0.1, 1.0, 1.0], t).tolist()
    ['saturation', 'triode', 'subthreshold', 'cutoff']
    """
    vds = np.abs(np.asarray(vds, dtype=float))
    strong = c.vov >= t.s
    region = np.where(strong, np.where(vds >= c.vov, "saturation", "triode"), "subthreshold")
    return np.where(c.forward < ION_MIN, "cutoff", region)


def mos_small_signal(c: MosCurrents, t: MosAtTemperature) -> dict[str, np.ndarray]:
    """Small-signal values at the operating point: gm, gmb, ro (device in its normal orientation).

    ``gm = dID/dVGS``, ``gmb = dID/dVBS``, ``ro = 1/(dID/dVDS)``; in saturation
    these are ``beta*Vov*(1 + LAMBDA*VDS)``, ``gm*GAMMA/(2 sqrt(PHI - VBS))``
    and ``(1 + LAMBDA*VDS)/(LAMBDA*ID)``.

    Examples
    --------
    >>> t = MosModel.from_params("nmos", {"VTO": 0.5, "KP": 1e-4, "LAMBDA": 0.1}).at(27.0)
    >>> s = mos_small_signal(mos_currents(1.0, 2.0, 0.0, t), t)
    >>> round(float(s["gm"]) * 1e6, 3), round(float(s["ro"]) / 1e3, 3)
    (60.0, 800.0)
    """
    sign = np.where(c.reversed, -1.0, 1.0)
    gm = sign * c.did_dvgs
    gmb = sign * c.did_dvbs
    # undo the drain/source swap of mos_currents: there did_dvds = gm' + gds' + gmb'
    gds = np.where(c.reversed, c.did_dvds + c.did_dvgs + c.did_dvbs, c.did_dvds)
    with np.errstate(divide="ignore"):
        ro = np.where(gds > 0, 1.0 / np.where(gds > 0, gds, 1.0), np.inf)
    return {"gm": gm, "gmb": gmb, "ro": ro}



def mos_numbers(params: Mapping[str, object], celsius) -> MosAtTemperature:
    """The model's temperature laws on parameter arrays (one column per device, one row per sample).

    ``params`` holds ``VTO KP LAMBDA GAMMA PHI TCV BEX TNOM``, ``polarity``,
    ``w``, ``l`` and ``mult``.

    Examples
    --------
    >>> p = {**MOS_DEFAULTS, "VTO": 0.7, "TCV": -2e-3, "TNOM": 27.0, "polarity": 1, "w": 1.0, "l": 1.0, "mult": 1.0}
    >>> round(float(mos_numbers(p, 127.0).vto), 6)
    0.5
    """
    celsius = np.asarray(celsius, dtype=float)
    tnom = np.asarray(params["TNOM"], dtype=float)
    ratio = kelvin(celsius) / kelvin(tnom)
    vt = thermal_voltage(celsius)
    gamma = np.asarray(params["GAMMA"], dtype=float)
    phi = np.asarray(params["PHI"], dtype=float)
    n = 1.0 + gamma / (2.0 * np.sqrt(phi))
    polarity = np.asarray(params["polarity"], dtype=float)
    return MosAtTemperature(
        polarity=polarity,
        vto=polarity * params["VTO"] + params["TCV"] * (celsius - tnom),
        beta=params["KP"] * ratio ** np.asarray(params["BEX"], dtype=float) * (params["w"] / params["l"])
        * params["mult"],
        lam=np.asarray(params["LAMBDA"], dtype=float),
        gamma=gamma,
        phi=phi,
        s=2.0 * n * vt,
        vt=vt,
    )


# -- the device interface (symbias.devices.nonlinear) ------------------------------------------------


def _stamp(model: DeviceModel, element, context) -> DcStamp:
    type_, params, tnom = context.model_parameters(element)
    review_parameters(element, context, {**params, "TNOM": tnom}, model_name="MOS model",
                      ranges=MOS_RANGES, modelled=(*MOS_PARAMETERS, *AC_PARAMETERS["M"], "TNOM"), essentials=("VTO", "KP"))
    merged = {**MOS_DEFAULTS, **params}
    numbers = {name: merged[name] for name in MOS_DEFAULTS}
    w, l = context.instance(element, "w", 1.0), context.instance(element, "l", 1.0)
    if np.any(np.asarray(w) <= 0) or np.any(np.asarray(l) <= 0):
        raise CircuitError(f"{element.name}: w and l must be positive", path=context.circuit.path, line=element.line)
    numbers.update(TNOM=tnom, polarity=-1.0 if type_ == "pmos" else 1.0, w=w, l=l,
                   mult=context.multiplier(element, ("m",)))
    d, g, s, b = element.nodes
    # simulators put GMIN across the bulk junctions; it also keeps an off device's nodes defined
    entries = tuple((p, q, sign * GMIN) for x in (d, s) for p, q, sign in ((x, x, 1.0), (b, b, 1.0), (x, b, -1.0),
                                                                         (b, x, -1.0)))
    return DcStamp(entries=entries, device=DeviceStamp(model, type_, (d, g, s, b), (d, g, s, b), numbers),
                   off=((s, g, 0.0), (g, s, 0.0)))


def _evaluate(t: MosAtTemperature, controls: np.ndarray):
    """Drain and source currents (the gate and bulk carry none) and their Jacobian."""
    c = mos_currents(controls[..., 0], controls[..., 1], controls[..., 2], t)
    currents = np.empty(controls.shape[:-1] + (2,))
    currents[..., 0], currents[..., 1] = c.id, -c.id
    jacobian = np.empty(currents.shape + (3,))
    jacobian[..., 0, 0], jacobian[..., 0, 1], jacobian[..., 0, 2] = c.did_dvgs, c.did_dvds, c.did_dvbs
    jacobian[..., 1, :] = -jacobian[..., 0, :]
    return currents, jacobian


def _limit(t: MosAtTemperature, new: np.ndarray, old: np.ndarray) -> np.ndarray:
    out = new.copy()
    out[..., 0] = mos_limit(new[..., 0], old[..., 0])
    return out


def _start(t: MosAtTemperature, kind: str, raw: np.ndarray) -> np.ndarray:
    out = raw.copy()
    out[..., 0] = t.vto + 1.0 if kind == "on" else 0.0
    return out


def _describe(t: MosAtTemperature, controls: np.ndarray) -> Description:
    vds = controls[..., 1]
    c = mos_currents(controls[..., 0], vds, controls[..., 2], t)
    limits = {"vth": t.polarity * c.vth, "vov": c.vov, "vdsat": np.maximum(c.vov, t.s)}
    currents = np.stack([c.id, -c.id], axis=-1)
    return Description(mos_region(c, vds, t), mos_small_signal(c, t), limits, currents)


def _check(t: MosAtTemperature, controls: np.ndarray, currents: np.ndarray) -> list[Violation]:
    vds, vbs = controls[..., 1], controls[..., 2]
    drain = currents[..., 0]
    forward = np.maximum(vbs, vbs - vds)
    return [
        Violation(forward > BULK_FORWARD_LIMIT, forward,
                  "{name}: bulk junction forward-biased by {value:.3g} V (bulk diodes are not modelled); tie the "
                  "bulk to the lowest (nmos) or highest (pmos) supply"),
        Violation(np.abs(drain) > MAX_CURRENT, drain, "{name}: implausible drain current {value:.3g} A"),
    ]


def mos_mismatch(params: Mapping[str, object], element, context) -> dict[str, tuple[object, object]]:
    """Random variation of one MOS device by Pelgrom's law.

    ``AVT`` (V m) and ``ABETA`` (m) are Pelgrom's coefficients for the
    difference of a pair of devices of gate area ``W L``: ``sigma(dVT) =
    AVT / sqrt(W L)``, ``sigma(dbeta/beta) = ABETA / sqrt(W L)`` (Pelgrom,
    Duinmaijer and Welbers, IEEE JSSC 24(5), 1989).  Each device varies
    independently by ``1/sqrt(2)`` of that: ``VTO`` by ``AVT / sqrt(2 W L m)``
    (absolute), ``KP`` by ``ABETA / sqrt(2 W L m)`` (relative).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.devices.dc_context import StampContext
    >>> c = parse_netlist("t\\nI1 0 a 1m\\nM1 a a 0 0 NCH W=2u L=2u\\n.model NCH nmos (AVT=8e-9)\\n")
    >>> nominal, sigma = mos_mismatch({"VTO": 0.7, "AVT": 8e-9}, c.element("M1"), StampContext.create(c))["VTO"]
    >>> round(float(sigma) * 1e3, 4)
    2.8284
    """
    avt, abeta = params.get("AVT", 0.0), params.get("ABETA", 0.0)
    area = (context.instance(element, "w", 1.0) * context.instance(element, "l", 1.0)
            * context.multiplier(element, ("m",)))
    out: dict[str, tuple[object, object]] = {}
    if np.any(np.asarray(avt) > 0):
        out["VTO"] = (params.get("VTO", MOS_DEFAULTS["VTO"]), avt / np.sqrt(2.0 * area))
    if np.any(np.asarray(abeta) > 0):
        kp = params.get("KP", MOS_DEFAULTS["KP"])
        out["KP"] = (kp, kp * abeta / np.sqrt(2.0 * area))
    return out


def mos_size(element) -> float:
    """W/L times m of a MOS element, from its netlist numbers (1 for what is not given).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> mos_size(parse_netlist("t\\nV1 a 0 1\\nM1 a a 0 0 N W=4u L=1u m=2\\n.model N nmos\\n").element("M1"))
    8.0
    """
    params = element.params
    w = float(params["w"]) if "w" in params else 1.0
    l = float(params["l"]) if "l" in params else 1.0
    m = float(params["m"]) if "m" in params else 1.0
    return w / l * m


def _matched(prefix: str, device, source, ratio):
    import sympy

    scaled = sympy.Symbol("Vov") * sympy.sqrt(ratio)
    expr = (sympy.Symbol("VTH") + scaled) if prefix == "VGS" else scaled
    return expr, {"Vov": source.limits["vov"], "VTH": abs(device.limits["vth"])}


#: The MOS transistor as the DC solver sees it (the ``dc`` hook of ``M``).
MOS = DeviceModel(
    letter="M",
    terminals=("d", "g", "s", "b"),
    controls=(("vgs", 1, 2), ("vds", 0, 2), ("vbs", 3, 2)),
    current_terminals=(0, 2),
    output="d",
    voltages=(("vgs", 1, 2), ("vds", 0, 2), ("vbs", 3, 2)),
    parameters=MOS_PARAMETERS,
    stamp=_stamp,
    numbers=mos_numbers,
    evaluate=_evaluate,
    limit=_limit,
    start=_start,
    describe=_describe,
    check=_check,
    working_regions=frozenset({"saturation"}),
    fields=(("ID", "currents", "d", "A"), ("VGS", "voltages", "vgs", "V"), ("VDS", "voltages", "vds", "V"),
            ("gm", "small_signal", "gm", "S"), ("gmb", "small_signal", "gmb", "S"),
            ("ro", "small_signal", "ro", "ohm"), ("Vov", "limits", "vov", "V")),
    headroom=HeadroomRole(output=(0, 2), control=1, drop=("VGS", "vgs"), saturation=("Vov", "vdsat"),
                          matched=_matched, size=mos_size, smallest=("VTH",)),
    mismatch=mos_mismatch,
)

#: The ``dc`` hook named in :mod:`symbias.elements`.
mos_dc = MOS
