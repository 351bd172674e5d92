"""Device capacitances and series resistances at a bias point, from the SPICE model parameters.

Device level (plain numbers in, plain numbers out).  The DC operating point
gives ``gm``, ``rpi``, ``ro`` and ``gmb``; the capacitances of the
small-signal models (``cpi cmu ccs``, ``cgs cgd cdb csb``) and the BJT
series resistances (``rb re``) come from the model card here, with the laws
of the SPICE models the reference decks use, so that a comparison with the
simulator compares like with like:

* junctions: ``C = CJ0 (1 - V/VJ)**-M`` for ``V < FC*VJ``, continued by its
  tangent above (SPICE's depletion law; ``FC`` default 0.5);
* BJT (Gummel-Poon parameters): ``cpi = TF*gm + CJE law(vbe; VJE, MJE)``
  (forward transit time, ``XTF = 0``), ``cmu = CJC law(vbc; VJC, MJC)``
  (all of it at the internal base, ``XCJC = 1``), ``ccs = CJS law(vsc; VJS,
  MJS)`` with ``vsc`` the substrate-to-collector voltage; junction values
  scale with the device area times m; ``rb = RB/area`` (low-current base
  resistance, no ``IRB``), ``re = RE/area``.  Defaults are SPICE's: every
  capacitance 0, ``VJE = VJC = VJS = 0.75``, ``MJE = MJC = 0.33``, ``MJS = 0``;
* MOS (level 1): Meyer's gate capacitances of the oxide capacitance
  ``COX W Leff`` (``COX = 3.9 eps0/TOX``, ``Leff = L - 2 LD``; none without
  TOX) in cutoff, triode and saturation (``cgs = 2/3 COX W Leff`` in
  saturation), plus the overlaps ``CGSO*W`` and ``CGDO*W``; the bulk
  junctions from ``CBD`` and ``CBS`` (``PB`` 0.8, ``MJ`` 0.5); everything
  times m.  The gate-bulk capacitance has no place in the small-signal model
  and is left out.

Temperature laws of the junction parameters are not applied (the values hold
at the model's TNOM).  The vacuum permittivity is the CODATA 2018 value.

Examples
--------
>>> round(junction_capacitance(1e-12, -2.0, 0.75, 0.5) * 1e12, 4)
0.5222
>>> c = bjt_parasitics({"TF": 1e-10, "CJE": 1e-12, "CJC": 5e-13}, vbe=0.7, vbc=-1.3, vsc=-2.0, gm=0.004)
>>> round(c["cpi"] * 1e12, 3), round(c["cmu"] * 1e12, 3)
(2.017, 0.359)
"""

from __future__ import annotations

import math
from typing import Mapping

__all__ = [
    "AC_PARAMETERS",
    "EPSILON_0",
    "OXIDE_PERMITTIVITY",
    "junction_capacitance",
    "oxide_capacitance",
    "bjt_parasitics",
    "mos_parasitics",
    "meyer_capacitances",
]

#: Card parameters read beyond the DC laws, by element letter: the capacitance and parasitic-resistance
#: laws here and the noise densities of :mod:`symbias.noise` (KF, AF, NGAMMA).  The device models name
#: them as used, so a card that carries them draws no "not modelled" warning.
AC_PARAMETERS: dict[str, tuple[str, ...]] = {
    "Q": ("CJE", "VJE", "MJE", "CJC", "VJC", "MJC", "CJS", "VJS", "MJS", "FC", "TF", "RB", "RE", "KF", "AF"),
    "M": ("TOX", "CGSO", "CGDO", "CBD", "CBS", "PB", "MJ", "FC", "LD", "KF", "AF", "NGAMMA"),
    "D": ("KF", "AF"),
}

#: Vacuum permittivity in F/m (CODATA 2018).
EPSILON_0 = 8.8541878128e-12
#: Relative permittivity of silicon dioxide (common practice).
OXIDE_PERMITTIVITY = 3.9


def junction_capacitance(c0: float, v: float, vj: float, m: float, fc: float = 0.5) -> float:
    """SPICE's depletion capacitance of a junction at forward voltage ``v``.

    ``c0 (1 - v/vj)**-m`` below ``fc*vj``, the tangent of that law above it.

    Examples
    --------
    >>> junction_capacitance(1e-12, 0.0, 0.75, 0.33)
    1e-12
    """
    if c0 == 0:
        return 0.0
    if v < fc * vj:
        return c0 * (1.0 - v / vj) ** (-m)
    # SPICE's linear continuation beyond fc*vj
    return c0 / (1.0 - fc) ** (1.0 + m) * (1.0 - fc * (1.0 + m) + m * v / vj)


def _get(params: Mapping[str, float], key: str, default: float) -> float:
    value = params.get(key)
    return default if value is None else float(value)


def bjt_parasitics(params: Mapping[str, float], *, vbe: float, vbc: float, vsc: float, gm: float,
                   area: float = 1.0) -> dict[str, float]:
    """``cpi cmu ccs`` (F) and, where the card gives them, ``rb re`` (ohm) of one bipolar transistor.

    Voltages are in the npn frame (a pnp's are sign-flipped by the caller);
    ``gm`` is the device's total transconductance, ``area`` its area times m.

    Examples
    --------
    >>> sorted(bjt_parasitics({"RB": 200.0}, vbe=0.7, vbc=-1.0, vsc=-1.0, gm=0.01, area=2.0).items())
    [('ccs', 0.0), ('cmu', 0.0), ('cpi', 0.0), ('rb', 100.0)]
    """
    fc = _get(params, "FC", 0.5)
    cpi = _get(params, "TF", 0.0) * gm + area * junction_capacitance(
        _get(params, "CJE", 0.0), vbe, _get(params, "VJE", 0.75), _get(params, "MJE", 0.33), fc)
    cmu = area * junction_capacitance(_get(params, "CJC", 0.0), vbc, _get(params, "VJC", 0.75),
                                      _get(params, "MJC", 0.33), fc)
    ccs = area * junction_capacitance(_get(params, "CJS", 0.0), vsc, _get(params, "VJS", 0.75),
                                      _get(params, "MJS", 0.0), fc)
    out = {"cpi": cpi, "cmu": cmu, "ccs": ccs}
    for key, name in (("RB", "rb"), ("RE", "re")):
        if _get(params, key, 0.0) > 0:
            out[name] = _get(params, key, 0.0) / area
    return out


def oxide_capacitance(params: Mapping[str, float]) -> float | None:
    """Gate-oxide capacitance per area (F/m^2) from ``TOX``, or None when the card has no TOX.

    Examples
    --------
    >>> round(oxide_capacitance({"TOX": 2e-8}) * 1e3, 4)
    1.7266
    """
    tox = params.get("TOX")
    if tox is None or float(tox) <= 0:
        return None
    return OXIDE_PERMITTIVITY * EPSILON_0 / float(tox)


def meyer_capacitances(vgs: float, vds: float, vth: float, phi: float, oxide: float) -> tuple[float, float]:
    """Meyer's intrinsic gate-source and gate-drain capacitances (F) of a MOS transistor.

    ``oxide`` is the whole oxide capacitance ``COX W Leff``; ``vth`` the
    threshold with the body effect at the bias point; voltages in the nmos
    frame with ``vds >= 0``.  Saturation gives ``cgs = 2/3 oxide``, ``cgd = 0``;
    at ``vds = 0`` both are ``oxide/2``; below threshold the gate couples to
    the bulk instead (Meyer, RCA Review 1971; from memory).

    Examples
    --------
    >>> [round(c * 1e15, 6) for c in meyer_capacitances(1.5, 2.0, 0.5, 0.7, 3e-15)]
    [2.0, 0.0]
    """
    vgst = vgs - vth
    if vgst <= -phi / 2:
        return 0.0, 0.0
    if vgst <= 0:
        return max(0.0, 2.0 * oxide * (vgst / (1.5 * phi) + 1.0 / 3.0)), 0.0
    vdsat = vgst
    if vds >= vdsat:
        return 2.0 * oxide / 3.0, 0.0
    total = 2.0 * vdsat - vds
    cgd = 2.0 * oxide * (1.0 - vdsat * vdsat / (total * total)) / 3.0
    cgs = 2.0 * oxide * (1.0 - (vdsat - vds) ** 2 / (total * total)) / 3.0
    return cgs, cgd


def mos_parasitics(params: Mapping[str, float], *, vgs: float, vds: float, vbs: float, vth: float, w: float,
                   l: float, m: float = 1.0) -> dict[str, float]:
    """``cgs cgd cdb csb`` (F) of one MOS transistor at its bias (nmos frame; ``vth`` with body effect).

    Examples
    --------
    >>> c = mos_parasitics({"TOX": 2e-8, "CGSO": 1e-10, "CGDO": 1e-10}, vgs=1.0, vds=2.0, vbs=0.0, vth=0.5,
    ...                    w=1e-5, l=1e-6)
    >>> round(c["cgs"] * 1e15, 2), round(c["cgd"] * 1e15, 2), c["cdb"]
    (12.51, 1.0, 0.0)
    """
    swapped = vds < 0  # the terminal at the lower potential acts as the source
    if swapped:
        vgs, vds, vbs = vgs - vds, -vds, vbs - vds
    cox = oxide_capacitance(params)
    leff = l - 2.0 * _get(params, "LD", 0.0)
    intrinsic = (0.0, 0.0) if cox is None else meyer_capacitances(vgs, vds, vth, _get(params, "PHI", 0.6),
                                                                   cox * w * leff)
    cgs = intrinsic[0] + _get(params, "CGSO", 0.0) * w
    cgd = intrinsic[1] + _get(params, "CGDO", 0.0) * w
    pb, mj, fc = _get(params, "PB", 0.8), _get(params, "MJ", 0.5), _get(params, "FC", 0.5)
    vbd = vbs - vds
    csb = junction_capacitance(_get(params, "CBS", 0.0), vbs, pb, mj, fc)
    cdb = junction_capacitance(_get(params, "CBD", 0.0), vbd, pb, mj, fc)
    if swapped:
        cgs, cgd, csb, cdb = cgd, cgs, cdb, csb
    return {"cgs": m * cgs, "cgd": m * cgd, "cdb": m * cdb, "csb": m * csb}
