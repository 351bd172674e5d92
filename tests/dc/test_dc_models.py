"""DC device models: constants, derivatives, square law, Early effect, temperature laws.

Sources: CODATA 2018 / SI 2019 exact constants; Gray, Hurst, Lewis, Meyer,
"Analysis and Design of Analog Integrated Circuits", 5th ed., ch. 1
(gm = IC/VT, ro = VA/IC); Razavi, "Design of Analog CMOS Integrated
Circuits", ch. 2 (square law, gm = 2 ID/Vov, gmb = gm*gamma/(2 sqrt(2 phiF + VSB)),
ro = 1/(lambda ID)); the SPICE temperature law of IS and BF (common practice,
as in the Gummel-Poon model documentation).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from symbias.devices.bjt import GMIN, BjtModel, bjt_currents, bjt_region, bjt_small_signal, bjt_vcesat
from symbias.devices.mos import MosModel, mos_currents, mos_region, mos_small_signal
from symbias.devices.temperature import BOLTZMANN, CHARGE, thermal_voltage

QN = BjtModel.from_params("npn", {"IS": 1e-16, "BF": 100, "BR": 1, "VAF": 50})
NCH = MosModel.from_params("nmos", {"VTO": 0.6, "KP": 100e-6, "LAMBDA": 0.05, "GAMMA": 0.5, "PHI": 0.7})


def test_thermal_voltage_uses_exact_codata_2018_constants():
    # CODATA 2018 / SI 2019: k = 1.380649e-23 J/K and q = 1.602176634e-19 C, both exact
    assert BOLTZMANN == 1.380649e-23 and CHARGE == 1.602176634e-19
    assert thermal_voltage(26.85) == pytest.approx(1.380649e-23 * 300.0 / 1.602176634e-19, rel=1e-15)
    assert thermal_voltage(26.85) == pytest.approx(0.025851999786, rel=1e-9)


def _fd(f, x, h=1e-7):
    return (f(x + h) - f(x - h)) / (2 * h)


@settings(max_examples=60, deadline=None)
@given(vbe=st.floats(-1.0, 0.85), vbc=st.floats(-5.0, 0.85), pnp=st.booleans())
def test_bjt_derivatives_match_finite_differences(vbe, vbc, pnp):
    t = (BjtModel.from_params("pnp", {"IS": 1e-16, "VAF": 30}) if pnp else QN).at(27.0)
    c = bjt_currents(vbe, vbc, t)
    for got, fn, x in (
        (c.dic_dvbe, lambda v: bjt_currents(v, vbc, t).ic, vbe),
        (c.dic_dvbc, lambda v: bjt_currents(vbe, v, t).ic, vbc),
        (c.dib_dvbe, lambda v: bjt_currents(v, vbc, t).ib, vbe),
        (c.dib_dvbc, lambda v: bjt_currents(vbe, v, t).ib, vbc),
    ):
        scale = abs(float(fn(x))) + 1e-15  # finite differences lose digits below ~1e-9 of the current
        assert float(got) == pytest.approx(float(_fd(fn, x)), rel=1e-4, abs=1e-12 + 1e-8 * scale / 1e-7)


@settings(max_examples=80, deadline=None)
@given(vgs=st.floats(-0.5, 3.0), vds=st.floats(-3.0, 3.0), vbs=st.floats(-2.0, 0.3))
def test_mos_derivatives_match_finite_differences(vgs, vds, vbs):
    t = NCH.at(27.0, w=10e-6, l=1e-6)
    c = mos_currents(vgs, vds, vbs, t)
    checks = (
        (c.did_dvgs, lambda v: mos_currents(v, vds, vbs, t).id, vgs),
        (c.did_dvds, lambda v: mos_currents(vgs, v, vbs, t).id, vds),
        (c.did_dvbs, lambda v: mos_currents(vgs, vds, v, t).id, vbs),
    )
    for got, fn, x in checks:
        assert float(got) == pytest.approx(float(_fd(fn, x, 1e-6)), rel=2e-3, abs=1e-11)


@settings(max_examples=60, deadline=None)
@given(vg=st.floats(0.0, 3.0), vd=st.floats(0.0, 3.0), vs=st.floats(0.0, 3.0))
def test_mos_is_symmetric_in_drain_and_source(vg, vd, vs):
    t = NCH.at(27.0)
    forward = mos_currents(vg - vs, vd - vs, 0.0 - vs, t).id
    swapped = mos_currents(vg - vd, vs - vd, 0.0 - vd, t).id
    assert float(forward) == pytest.approx(-float(swapped), rel=1e-9, abs=1e-18)


def test_mos_strong_inversion_is_the_square_law():
    # Razavi ch. 2: ID = KP/2 W/L (VGS - VTH)^2 (1 + lambda VDS) in saturation,
    # KP W/L ((VGS - VTH) VDS - VDS^2/2)(1 + lambda VDS) in triode
    t = NCH.at(27.0, w=20e-6, l=2e-6)
    beta, vov = 100e-6 * 10, 0.3
    sat = mos_currents(0.6 + vov, 1.5, 0.0, t).id
    assert float(sat) == pytest.approx(beta / 2 * vov**2 * (1 + 0.05 * 1.5), rel=1e-9)
    vds = 0.1
    tri = mos_currents(0.6 + vov, vds, 0.0, t).id
    assert float(tri) == pytest.approx(beta * (vov * vds - vds**2 / 2) * (1 + 0.05 * vds), rel=1e-12)


def test_mos_body_effect_threshold():
    # VTH = VTO + gamma (sqrt(PHI - VBS) - sqrt(PHI))  (Razavi ch. 2)
    c = mos_currents(2.0, 2.0, -1.0, NCH.at(27.0))
    assert float(c.vth) == pytest.approx(0.6 + 0.5 * (math.sqrt(1.7) - math.sqrt(0.7)), rel=1e-12)


def test_mos_small_signal_matches_square_law_formulas():
    t = NCH.at(27.0, w=10e-6, l=1e-6)
    vbs, vds = -0.5, 2.0
    c = mos_currents(1.5, vds, vbs, t)
    s = mos_small_signal(c, t)
    vov = float(c.vov)
    i_d = float(c.id)
    # gm = 2 ID / Vov (the (1 + lambda VDS) factor cancels); gmb = gm gamma / (2 sqrt(PHI - VBS))
    assert float(s["gm"]) == pytest.approx(2 * i_d / vov, rel=1e-9)
    assert float(s["gmb"]) == pytest.approx(float(s["gm"]) * 0.5 / (2 * math.sqrt(0.7 - vbs)), rel=1e-9)
    # ro = (1 + lambda VDS)/(lambda ID) exactly, about 1/(lambda ID)
    assert float(s["ro"]) == pytest.approx((1 + 0.05 * vds) / (0.05 * i_d), rel=1e-9)
    assert float(s["ro"]) == pytest.approx(1 / (0.05 * i_d), rel=0.11)


def test_mos_subthreshold_slope_and_continuity():
    t = NCH.at(27.0)
    n = 1 + 0.5 / (2 * math.sqrt(0.7))
    low = [float(mos_currents(0.6 + dv, 1.0, 0.0, t).id) for dv in (-0.3, -0.2)]
    # an e-fold per n VT below threshold
    assert math.log(low[1] / low[0]) == pytest.approx(0.1 / (n * t.vt), rel=1e-6)
    s = t.s
    below, above = (float(mos_currents(0.6 + s + d, 1.0, 0.0, t).id) for d in (-1e-9, 1e-9))
    assert below == pytest.approx(above, rel=1e-6)


def test_bjt_active_region_currents_and_small_signal():
    t = QN.at(27.0)
    vbe, vce = 0.68, 3.0
    c = bjt_currents(vbe, vbe - vce, t)
    ic, ib = float(c.ic), float(c.ib)
    vcb = vce - vbe
    icc = 1e-16 * (math.exp(vbe / t.vt) - 1)
    assert ic == pytest.approx(icc * (1 + vcb / 50), rel=1e-9)  # forward Early effect on VCB
    assert ib == pytest.approx(icc / 100 + GMIN * (vbe + vbe - vce), rel=1e-12)  # GMIN across each junction
    s = bjt_small_signal(c)
    # Gray et al. ch. 1: gm = IC/VT (here within the Early-effect correction VT/(VAF+VCB))
    assert float(s["gm"]) == pytest.approx(ic / t.vt, rel=1e-3)
    # Gummel-Poon Early form: ro = (VAF + VCB)/IC exactly; Gray et al.: ro ~ VA/IC
    assert float(s["ro"]) == pytest.approx((50 + vcb) / ic, rel=1e-6)
    assert float(s["ro"]) == pytest.approx(50 / ic, rel=vcb / 50 + 1e-3)
    assert float(s["rpi"]) == pytest.approx(100 / (icc / t.vt), rel=1e-3)
    assert str(bjt_region(c, vbe - vce, t)) == "active"


def test_bjt_saturation_edge_is_where_one_percent_is_lost():
    t = QN.at(27.0)
    vbe = 0.7
    vcesat = float(bjt_vcesat(vbe, t))
    vbc = vbe - vcesat
    c = bjt_currents(vbe, vbc, t)
    active = float(c.icc) * (1 - vbc / 50)
    assert (active - float(c.ic)) / active == pytest.approx(0.01, rel=1e-6)
    assert str(bjt_region(bjt_currents(vbe, vbc + 1e-3, t), vbc + 1e-3, t)) == "saturation"
    assert str(bjt_region(bjt_currents(vbe, vbc - 1e-3, t), vbc - 1e-3, t)) == "active"


def test_bjt_temperature_law():
    m = BjtModel.from_params("npn", {"IS": 1e-16, "BF": 100, "XTI": 3, "EG": 1.11, "XTB": 1.5})
    hot = m.at(125.0)
    t, tn = 398.15, 300.15
    vt = BOLTZMANN * t / CHARGE
    assert hot.is_ == pytest.approx(1e-16 * (t / tn) ** 3 * math.exp((t / tn - 1) * 1.11 / vt), rel=1e-12)
    assert hot.bf == pytest.approx(100 * (t / tn) ** 1.5, rel=1e-12)


def test_mos_temperature_law_and_regions():
    m = MosModel.from_params("nmos", {"VTO": 0.7, "KP": 1e-4, "TCV": -2e-3, "BEX": -1.5})
    hot = m.at(77.0)
    assert hot.vto == pytest.approx(0.6)
    assert hot.beta == pytest.approx(1e-4 * (350.15 / 300.15) ** -1.5)
    pm = MosModel.from_params("pmos", {"VTO": -0.8, "TCV": -2e-3}).at(127.0)
    assert pm.vto == pytest.approx(0.6)  # the magnitude falls for both types
    t = NCH.at(27.0)
    vds = np.array([2.0, 0.05, 2.0, 2.0])
    c = mos_currents(np.array([1.2, 1.2, 0.62, -0.5]), vds, 0.0, t)
    assert mos_region(c, vds, t).tolist() == ["saturation", "triode", "subthreshold", "cutoff"]
