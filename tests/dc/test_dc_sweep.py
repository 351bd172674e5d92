"""Sweeps and their metrics against closed forms (resistor TC polynomial, divider, saturation edge)."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from symbias.dc.sweep import (compliance, line_sensitivity, sweep_points, sweep_source, sweep_temperature,
                              temperature_metrics)
from symbias.devices.bjt import BjtModel, bjt_vcesat
from symbias.errors import CircuitError
from symbias.netlist import parse_netlist, read_netlist

DECKS = Path(__file__).parents[1] / "decks"


def test_temperature_metrics_of_a_quadratic_resistor():
    # V = I R0 (1 + TC1 dT + TC2 dT^2): zero slope at dT = -TC1/(2 TC2), curvature 2 TC2 I R0
    c = parse_netlist("r\nI1 0 a 1m\nR1 a 0 1k tc1=-1e-3 tc2=5e-6\n")
    sweep = sweep_temperature(c, -40.0, 150.0, 191)
    m = temperature_metrics(sweep, "V(a)")
    assert m.nominal_value == pytest.approx(1.0, rel=1e-12)
    assert m.zero_slope_temperature == pytest.approx(27.0 + 100.0, abs=1e-9)
    assert m.curvature == pytest.approx(1e-5, rel=1e-6)
    v = lambda dt: 1 - 1e-3 * dt + 5e-6 * dt * dt  # noqa: E731
    box = (v(-67.0) - v(100.0)) / (1.0 * 190.0) * 1e6
    assert m.box_tc_ppm == pytest.approx(box, rel=1e-9)
    assert m.slope_ppm == pytest.approx(-1e-3 * 1e6, rel=1e-6)


def test_line_sensitivity_of_a_divider():
    c = parse_netlist("d\nVdd a 0 5\nR1 a b 1k\nR2 b 0 1k\n")
    m = line_sensitivity(sweep_source(c, "Vdd", 4.0, 6.0, 21), "V(b)")
    assert m.nominal_supply == 5.0 and m.nominal_value == pytest.approx(2.5)
    assert m.percent_per_volt == pytest.approx(20.0)
    assert m.normalized_db == pytest.approx(0.0, abs=1e-9)
    assert m.rejection_db == pytest.approx(20 * math.log10(2))


def test_simple_mirror_compliance_is_the_saturation_edge():
    c = read_netlist(DECKS / "bjt_simple_mirror.cir")
    sweep = sweep_source(c, "Vout", 0.0, 5.0, 201)
    tangent = compliance(sweep)
    vbe = sweep.points[100].voltage("in")
    vcesat = float(bjt_vcesat(vbe, BjtModel.from_params("npn", {"IS": 1e-16, "BR": 1, "VAF": 50}).at(27.0)))
    assert tangent.by_region_low == pytest.approx(vcesat, abs=1e-3)
    assert tangent.device_low == "Q2 (saturation)"
    # the 1 % current criterion measured from the output-resistance line lands just above that edge:
    # once saturated, Q2's base current grows and takes part of Iref from Q1, lowering the shared VBE
    assert vcesat < tangent.by_current_low < vcesat + 0.015
    assert tangent.by_current_high is None and tangent.by_region_high is None
    # measured from the level instead, the Early slope alone uses up the 1 % about 0.5 V below mid-supply
    level = compliance(sweep, basis="level")
    assert level.by_current_low == pytest.approx(2.5 - 0.01 * (50 + 2.5 - vbe), abs=0.05)


def test_pnp_source_compliance_is_on_the_high_side():
    text = ("p\nVdd vdd 0 5\nIref in 0 50u\nQ1 in in vdd QP\nQ2 out in vdd QP\nVout out 0 2.5\n"
            ".model QP pnp (IS=1e-16 BF=50 VAF=30)\n")
    sweep = sweep_source(parse_netlist(text), "Vout", 0.0, 5.0, 101)
    result = compliance(sweep)
    assert result.by_region_low is None and result.device_high == "Q2 (saturation)"
    assert 5.0 - result.by_region_high == pytest.approx(0.13, abs=0.02)


def test_sweep_is_warm_started():
    c = read_netlist(DECKS / "bjt_cascode_mirror.cir")
    sweep = sweep_source(c, "Vout", 0.0, 5.0, 200)
    iterations = np.array([p.iterations for p in sweep.points])
    assert all(p.method == "newton (warm start)" for p in sweep.points[1:])
    assert iterations[1:].mean() < 6


@pytest.mark.parametrize("start, stop, points", [(1.0, 1.0, 11), (0.0, 1.0, 1), (0.0, math.inf, 11)])
def test_bad_ranges_are_refused(start, stop, points):
    with pytest.raises(CircuitError):
        sweep_points(start, stop, points)


def test_metric_misuse_is_refused():
    c = read_netlist(DECKS / "bjt_simple_mirror.cir")
    temp = sweep_temperature(c, 0.0, 50.0, 6)
    with pytest.raises(CircuitError):
        compliance(temp)
    with pytest.raises(CircuitError):
        line_sensitivity(temp, "I(Vout)")
    with pytest.raises(CircuitError):
        temperature_metrics(sweep_source(c, "Vout", 0, 5, 11), "I(Vout)")
    with pytest.raises(CircuitError):
        sweep_source(c, "Vnone", 0, 1, 3)
    with pytest.raises(CircuitError):
        temp.probe("V(nowhere)")
