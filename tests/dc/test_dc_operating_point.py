"""The DC operating point against closed forms, independent solves and textbook relations.

Sources: Gray, Hurst, Lewis, Meyer, "Analysis and Design of Analog Integrated
Circuits", 5th ed., ch. 1 (gm = IC/VT, ro = VA/IC) and ch. 4 (simple mirror
with finite beta, Widlar source: VT ln(IREF/IO) = IO RE); the delta-VBE of
two junctions at equal current, VT ln(n), and dVBE/dT of about -2 mV/K near
room temperature (common practice); a bandgap core trimmed to zero slope
gives about 1.2-1.3 V (common practice; Tsividis, IEEE JSSC 1980, from
memory: extrapolated bandgap VG0 about 1.206 V, used below as EG).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from symbias.dc.newton import DcOptions, residual
from symbias.dc.operating_point import operating_point
from symbias.dc.sweep import sweep_temperature, temperature_metrics
from symbias.dc.system import build_system
from symbias.devices.temperature import thermal_voltage
from symbias.errors import CircuitError, ConvergenceError
from symbias.netlist import parse_netlist, read_netlist
from symbias.process import demo_process_path, load_process

DECKS = Path(__file__).parents[1] / "decks"
VT = thermal_voltage(27.0)


def test_simple_mirror_matches_its_closed_form():
    c = read_netlist(DECKS / "bjt_simple_mirror.cir")
    op = operating_point(c)
    # Q1 at VCB = 0 and Q2 share VBE: Iref = Icc (1 + 2/BF), IC2 = Icc (1 + VCB2/VAF)
    icc = 100e-6 / (1 + 2 / 100)
    vbe = VT * math.log(icc / 1e-16 + 1)
    assert op.voltage("in") == pytest.approx(vbe, abs=1e-9)
    vcb2 = 2.5 - vbe
    assert -op.branch_currents["Vout"] == pytest.approx(icc * (1 + vcb2 / 50), rel=1e-7)
    # Gray et al. ch. 4: IOUT/IREF ~ (1 + (VCE2 - VCE1)/VA) / (1 + 2/beta)
    textbook = (1 + (2.5 - vbe) / 50) / (1 + 2 / 100)
    assert -op.branch_currents["Vout"] / 100e-6 == pytest.approx(textbook, rel=1e-6)


def test_solution_satisfies_the_nodal_equations_independently():
    for deck in ("bjt_wilson_mirror", "mos_cascode_mirror", "widlar_source"):
        c = read_netlist(DECKS / f"{deck}.cir")
        op = operating_point(c)
        system = build_system(c)
        net = residual(system, op.solution.x)
        assert np.max(np.abs(net)) < 1e-12, deck
        # KCL in the report itself: the emitter current is minus the sum of the others
        for dev in op.devices.values():
            assert sum(dev.currents.values()) == pytest.approx(0.0, abs=1e-15)


def test_widlar_source_obeys_its_equation():
    text = (DECKS / "widlar_source.cir").read_text().replace("VAF=50", "VAF=0")  # no Early effect
    op = operating_point(parse_netlist(text))
    q1, q2 = op.devices["Q1"], op.devices["Q2"]
    ic1, ic2 = q1.currents["c"], q2.currents["c"]
    # Gray et al. ch. 4 (Widlar): VT ln(IC1/IC2) = IE2 RE, with IE2 = IC2 (1 + 1/beta)
    assert VT * math.log(ic1 / ic2) == pytest.approx(-q2.currents["e"] * 5e3, rel=1e-6)
    from scipy.optimize import brentq

    solved = brentq(lambda i: VT * math.log(ic1 / i) - i * (1 + 1 / 100) * 5e3, 1e-9, ic1)
    assert ic2 == pytest.approx(solved, rel=1e-6)


def test_small_signal_values_match_finite_differences_of_the_solver():
    c = read_netlist(DECKS / "bjt_simple_mirror.cir")
    base = operating_point(c)
    q2 = base.devices["Q2"]
    dv = 1e-3
    up = operating_point(c, overrides={"Vout": 2.5 + dv})
    down = operating_point(c, overrides={"Vout": 2.5 - dv})
    go = -(up.branch_currents["Vout"] - down.branch_currents["Vout"]) / (2 * dv)
    assert 1 / q2.small_signal["ro"] == pytest.approx(go, rel=1e-5)
    di = 1e-7
    hi = operating_point(c, overrides={"Iref": 100e-6 + di})
    lo = operating_point(c, overrides={"Iref": 100e-6 - di})
    gm = (hi.devices["Q2"].output_current - lo.devices["Q2"].output_current) / (hi.voltage("in") - lo.voltage("in"))
    assert q2.small_signal["gm"] == pytest.approx(gm, rel=1e-5)
    # Gray et al. ch. 1: gm = IC/VT (the hybrid-pi gm here is dIC/dVBE at constant VCE)
    assert q2.small_signal["gm"] == pytest.approx(q2.output_current / VT, rel=1e-3)
    assert base.symbol_values()["gm_Q2"] == q2.small_signal["gm"]


def test_mos_small_signal_values_match_finite_differences():
    text = "m\nVg g 0 1.2\nVd d 0 2\nVb b 0 -0.5\nM1 d g 0 b NCH W=10u L=1u\n" \
           ".model NCH nmos (VTO=0.6 KP=100u LAMBDA=0.05 GAMMA=0.5 PHI=0.7)\n"
    c = parse_netlist(text)
    op = operating_point(c)
    s = op.small_signal("M1")
    h = 1e-4

    def drain(**over):
        return operating_point(c, overrides=over).devices["M1"].output_current

    assert s["gm"] == pytest.approx((drain(Vg=1.2 + h) - drain(Vg=1.2 - h)) / (2 * h), rel=1e-6)
    assert s["gmb"] == pytest.approx((drain(Vb=-0.5 + h) - drain(Vb=-0.5 - h)) / (2 * h), rel=1e-6)
    assert 1 / s["ro"] == pytest.approx((drain(Vd=2 + h) - drain(Vd=2 - h)) / (2 * h), rel=1e-6)
    assert op.devices["M1"].region == "saturation"


def test_pnp_and_pmos_signs():
    text = ("p\nVdd vdd 0 5\nIref in 0 50u\nQ1 in in vdd QP\nQ2 out in vdd QP\nVout out 0 1\n"
            "Ib g 0 20u\nM1 g g vdd vdd PCH W=10u L=1u\nM2 d g vdd vdd PCH W=10u L=1u\nVd d 0 2\n"
            ".model QP pnp (IS=1e-16 BF=50 VAF=30)\n.model PCH pmos (VTO=-0.7 KP=40u LAMBDA=0.05)\n")
    op = operating_point(parse_netlist(text))
    # the sources sit below their loads: current enters their + terminals
    assert op.branch_currents["Vout"] > 0 and op.branch_currents["Vd"] > 0
    q2, m2 = op.devices["Q2"], op.devices["M2"]
    assert q2.region == "active" and m2.region == "saturation"
    assert q2.voltages["vbe"] < 0 and q2.currents["c"] < 0 and q2.small_signal["gm"] > 0
    assert m2.voltages["vgs"] < 0 and m2.currents["d"] < 0 and m2.limits["vth"] < 0 < m2.limits["vov"]


def test_free_symbols_need_numbers():
    text = "r\nV1 a 0 1\nR1 a b RE\nQ1 b b 0 QN\n.model QN npn\n"
    c = parse_netlist(text, "sym.cir")
    op = operating_point(c, values={"RE": 1e3})
    assert op.element_currents["R1"] == pytest.approx((1 - op.voltage("b")) / 1e3)
    with pytest.raises(CircuitError) as info:
        operating_point(c)
    assert str(info.value).startswith("sym.cir:3: R1:") and "RE" in str(info.value)


def test_fallbacks_reach_the_same_answer():
    c = read_netlist(DECKS / "mos_cascode_mirror.cir")
    plain = operating_point(c)
    stepped = operating_point(c, options=DcOptions(max_iterations=3))
    assert stepped.method in ("gmin stepping", "source stepping")
    for node, value in plain.node_voltages.items():
        assert stepped.voltage(node) == pytest.approx(value, abs=1e-9)


def test_convergence_error_names_node_and_iteration():
    c = read_netlist(DECKS / "bjt_cascode_mirror.cir")
    with pytest.raises(ConvergenceError) as info:
        operating_point(c, options=DcOptions(max_iterations=2, step_iterations=1, source_min_step=0.05))
    message = str(info.value)
    assert message.startswith(str(DECKS / "bjt_cascode_mirror.cir") + ":")
    assert "node '" in message or "branch current" in message
    assert "iteration 2" in message


def test_delta_vbe_is_vt_ln_n():
    text = "d\nI1 0 a 10u\nI2 0 b 10u\nQ1 a a 0 QN\nQ2 b b 0 QN 8\n.model QN npn (IS=1e-16 BF=100)\n"
    op = operating_point(parse_netlist(text))
    assert op.voltage("a") - op.voltage("b") == pytest.approx(VT * math.log(8), rel=1e-6)


def test_vbe_temperature_slope_is_about_minus_two_millivolts_per_kelvin():
    text = "d\nI1 0 a 10u\nQ1 a a 0 QN\n.model QN npn\n"
    sweep = sweep_temperature(parse_netlist(text), 17.0, 37.0, 21, process=load_process(demo_process_path()))
    slope = np.gradient(sweep.probe("V(a)"), sweep.values)[10]
    assert slope == pytest.approx(-2e-3, abs=0.5e-3)  # common practice


def test_bandgap_core_trimmed_to_zero_slope_is_near_1v2():
    from scipy.optimize import brentq

    text = (DECKS / "bandgap_core_startup.cir").read_text()
    text = text.replace("R1 vo a 10k", "R1 vo a RT").replace("R2 vo b 10k", "R2 vo b RT")
    c = parse_netlist(text)

    def slope(rt):
        sweep = sweep_temperature(c, 22.0, 32.0, 5, values={"RT": rt})
        return float(np.polyfit(sweep.values, sweep.probe("V(vo)"), 1)[0])

    trimmed = brentq(slope, 5e3, 20e3, xtol=1.0)
    op = operating_point(c, values={"RT": trimmed})
    assert 1.2 < op.voltage("vo") < 1.3
    metrics = temperature_metrics(sweep_temperature(c, -40, 125, 34, values={"RT": trimmed}), "V(vo)")
    assert metrics.zero_slope_temperature == pytest.approx(27.0, abs=2.0)
    assert metrics.curvature < 0  # the bandgap's bow


def test_reversed_junction_and_forced_junction_are_refused():
    reverse = parse_netlist("r\nVb 0 b 10\nVc c 0 5\nQ1 c b 0 QN\n.model QN npn\n", "rev.cir")
    with pytest.raises(CircuitError) as info:
        operating_point(reverse)
    assert str(info.value).startswith("rev.cir:4: Q1: emitter-base junction reversed by 10 V")
    forced = parse_netlist("f\nVb b 0 1.5\nVc c 0 5\nQ1 c b 0 QN\n.model QN npn\n", "fwd.cir")
    with pytest.raises(CircuitError) as info:
        operating_point(forced)
    assert str(info.value).startswith("fwd.cir:4: Q1:") and "forced on hard" in str(info.value)


def test_no_dc_path_is_refused():
    # c and d reach the rest only through C1 and the gate of M1
    c = parse_netlist("n\nV1 a 0 1\nR1 a b 1k\nC1 b c 1p\nR2 c d 1k\nM1 b d 0 0 NCH\n.model NCH nmos\n", "cap.cir")
    with pytest.raises(CircuitError) as info:
        operating_point(c)
    assert str(info.value).startswith("cap.cir:4: node(s) c, d have no DC path to ground")


def test_process_models_and_netlist_overrides():
    process = load_process(demo_process_path())
    text = "p\nI1 0 a 10u\nQ1 a a 0 QN\nI2 0 b 10u\nQ2 b b 0 QX\n.model QN npn\n.model QX npn (IS=4e-17)\n"
    op = operating_point(parse_netlist(text), process)
    # QX takes every parameter of the demo npn except IS, which it doubles
    assert op.voltage("a") - op.voltage("b") == pytest.approx(VT * math.log(2), rel=1e-5)
    assert op.devices["Q1"].small_signal["beta"] == pytest.approx(120, rel=0.03)


def test_resistor_layer_temperature_coefficients():
    process = load_process(demo_process_path())
    text = "r\nI1 0 a 1m\nR1 a 0 1k layer=rpoly\nR2 a 0 1k tc1=2e-3\n"
    c = parse_netlist(text)
    hot = operating_point(c, process, temperature=77.0)
    r1 = 1e3 * (1 - 0.9e-3 * 50 + 1e-6 * 2500)
    r2 = 1e3 * (1 + 2e-3 * 50)
    assert hot.voltage("a") == pytest.approx(1e-3 * r1 * r2 / (r1 + r2), rel=1e-12)
