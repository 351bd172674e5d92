"""Error of a current transfer, epsilon = 1 - gain/ideal, and its split by cause (symbias.transfer_error)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import sympy

from symbias.analyses import current_gain
from symbias.errors import AnalysisError
from symbias.transfer_error import ideal_transfer, limit, transfer_error
from symbias.netlist import parse_netlist, read_netlist
from symbias.devices.options import SmallSignalOptions

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
beta, gm, ro = sympy.symbols("beta gm ro")
MATCH = SmallSignalOptions(match=True, beta=True)


def points(n=3000, seed=99):
    rng = np.random.default_rng(seed)
    b = np.exp(rng.uniform(np.log(30), np.log(1000), 30 * n))
    g = np.exp(rng.uniform(np.log(30), np.log(1e4), 30 * n))
    keep = g / b >= 30
    gm_ = np.full(keep.sum(), 1e-3)
    return {"beta": b[keep][:n], "gm": gm_[:n], "ro": g[keep][:n] / gm_[:n]}


def test_simple_mirror_error_is_two_over_beta():
    # Gray, Hurst, Lewis and Meyer, 5th ed., ch. 4 (simple bipolar mirror): error ~ 2/beta (from memory)
    gain = current_gain(read_netlist(EXAMPLES / "simple_mirror.cir"), "Vout", "Iref", MATCH)
    err = transfer_error(gain)
    assert err.ideal.expr == 1
    assert sympy.simplify(err.leading.expr - 2 / beta) == 0
    p = points()
    g = p["gm"]
    gain_by_hand = g / (g + 2 * g / p["beta"] + 1 / p["ro"])
    np.testing.assert_allclose(err.exact.evaluate(p), 1 - gain_by_hand, rtol=1e-9)
    fresh = np.max(np.abs((2 / p["beta"]) / (1 - gain_by_hand) - 1))
    assert fresh <= err.leading.error * (1 + 1e-6) + 1e-12 and err.leading.error <= 0.1
    causes = {c.name: c for c in err.causes}
    assert sympy.simplify(causes["finite beta"].leading.expr - 2 / beta) == 0
    assert sympy.simplify(causes["finite beta"].exact.expr - 2 / (beta + 2)) == 0  # ro -> oo, by hand
    early = causes["output conductance (Early effect)"]
    assert sympy.simplify(early.exact.expr - 1 / (gm * ro + 1)) == 0  # beta -> oo, by hand
    assert sympy.simplify(early.leading.expr - 1 / (gm * ro)) == 0


def test_wilson_cancels_the_first_order_beta_error():
    # Gray, Hurst, Lewis and Meyer, 5th ed., ch. 4 (Wilson current source): error ~ 2/beta^2 (from memory)
    gain = current_gain(read_netlist(EXAMPLES / "wilson_mirror.cir"), "Vout", "Iref", MATCH)
    err = transfer_error(gain)
    causes = {c.name: c for c in err.causes}
    assert sympy.simplify(causes["finite beta"].leading.expr - 2 / beta**2) == 0
    p = points(1000)
    exact = causes["finite beta"].exact.evaluate(p)
    fresh = np.max(np.abs((2 / p["beta"] ** 2) / exact - 1))
    assert fresh <= causes["finite beta"].leading.error * (1 + 1e-6) + 1e-12


def test_ratioed_mirror_ideal_is_the_area_ratio():
    deck = "ratio\nIref 0 in 1\nQ1 in in 0 QN\nQ2 out in 0 QN 3\nVout out 0 0\n.model QN npn\n"
    gain = current_gain(parse_netlist(deck), "Vout", "Iref", MATCH)
    assert ideal_transfer(gain).expr == 3
    err = transfer_error(gain)
    # base currents of 1 + 3 unit devices load the reference: gain = 3/(1 + 4/beta), so
    # epsilon = 4/(beta + 4) with ro ignored (by hand); 4/beta is 13 % off at beta = 30
    causes = {c.name: c for c in err.causes}
    assert sympy.simplify(causes["finite beta"].exact.expr - 4 / (beta + 4)) == 0
    assert sympy.simplify(err.leading.expr - 4 / (beta + 4)) == 0
    loose = transfer_error(gain, tolerance=0.2)
    assert sympy.simplify(loose.leading.expr - 4 / beta) == 0
    explicit = transfer_error(gain, 3)
    assert sympy.simplify(explicit.exact.expr - err.exact.expr) == 0


def test_limit_keeps_leading_powers():
    gain = current_gain(read_netlist(EXAMPLES / "simple_mirror.cir"), "Vout", "Iref", MATCH)
    assert sympy.simplify(limit(gain, "ro").expr - beta / (beta + 2)) == 0
    assert limit(gain, "beta", "zero").expr == 0
    with pytest.raises(AnalysisError, match="sideways"):
        limit(gain, "beta", "sideways")


@pytest.mark.parametrize("ideal", [0, float("inf"), "one", True])
def test_an_unusable_ideal_transfer_is_an_analysis_error(ideal):
    gain = current_gain(read_netlist(EXAMPLES / "simple_mirror.cir"), "Vout", "Iref", MATCH)
    with pytest.raises(AnalysisError, match="ideal transfer"):
        transfer_error(gain, ideal)
