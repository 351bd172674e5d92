"""Normalised sensitivities S(F, x) = (x/F) dF/dx (symbias.sensitivity).

Checked against exact hand results (S(ro, ro) = 1; S of a parallel pair, derived
by hand: S(RA || RB, RA) = RB/(RA + RB)), against central finite differences
of the exact formula at random points, and at DC operating points against
central differences of the tests' own nodal solver (tests/support/reference_solver.py).
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest
import sympy

from support.reference_solver import reference_value  # noqa: E402

from symbias.analyses import output_resistance  # noqa: E402
from symbias.dc.operating_point import operating_point  # noqa: E402
from symbias.devices.options import SmallSignalOptions  # noqa: E402
from symbias.errors import AnalysisError  # noqa: E402
from symbias.linear.network import bias_values  # noqa: E402
from symbias.netlist import parse_netlist, read_netlist  # noqa: E402
from symbias.sensitivity import (  # noqa: E402
    group_sensitivity,
    parameter_symbols,
    sensitivities,
    sensitivity,
    sensitivity_value,
)
from symbias.symbols import ohm_power, symbols_of  # noqa: E402

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
rng = np.random.default_rng(77)


def finite_difference(formula, name, point, h=1e-6):
    up, down = dict(point), dict(point)
    up[name] = point[name] * (1 + h)
    down[name] = point[name] * (1 - h)
    f = formula.evaluate(point)
    return (formula.evaluate(up) - formula.evaluate(down)) / (2 * h * f)


def wilson_points(n=50):
    b = np.exp(rng.uniform(np.log(30), np.log(300), n))
    g = np.exp(rng.uniform(np.log(1e-4), np.log(1e-2), n))
    return {"beta": b, "gm": g, "ro": 3000 / g}


def test_rout_equal_to_ro_has_sensitivity_exactly_one():
    f = output_resistance(parse_netlist("t\nI1 0 a 1\nR1 a 0 ro\n"), "a")
    s = sensitivity(f, "ro")
    assert s.expr == 1
    assert float(sensitivity_value(f, "ro", {"ro": 12345.0})) == 1.0


def test_mos_device_alone_output_resistance_sensitivity_is_one():
    # a single MOS sink with its gate held: Rout = ro (common practice)
    deck = "sink\nVG g 0 1\nM1 d g 0 0 NM\nVout d 0 1\n.model NM nmos\n"
    f = output_resistance(parse_netlist(deck), "Vout", SmallSignalOptions(match=True))
    assert f.expr == sympy.Symbol("ro") and sensitivity(f, "ro").expr == 1


def test_parallel_pair_by_hand():
    f = output_resistance(parse_netlist("t\nI1 0 a 1\nR1 a 0 RA\nR2 a 0 RB\n"), "a")
    RA, RB = sympy.symbols("RA RB")
    assert sympy.simplify(sensitivity(f, "RA").expr - RB / (RA + RB)) == 0
    # a resistance is homogeneous of degree one in all resistances: the sensitivities sum to 1
    assert group_sensitivity(f, ["RA", "RB"], {"RA": 3.0, "RB": 7.0}) == pytest.approx(1.0, rel=1e-12)


@pytest.mark.parametrize("name", ["beta", "gm", "ro"])
def test_wilson_sensitivities_match_finite_differences(name):
    f = output_resistance(read_netlist(EXAMPLES / "wilson_mirror.cir"), "Vout", SmallSignalOptions(match=True, beta=True))
    point = wilson_points()
    numeric = sensitivity_value(f, name, point)
    np.testing.assert_allclose(numeric, finite_difference(f, name, point), rtol=1e-5, atol=1e-8)
    symbolic = sensitivity(f, name)
    np.testing.assert_allclose(symbolic.evaluate(point), numeric, rtol=1e-9, atol=1e-12)


def test_ranked_table_and_group_of_all_ro():
    deck = read_netlist(EXAMPLES / "wilson_mirror.cir")
    matched = output_resistance(deck, "Vout", SmallSignalOptions(match=True))
    separate = output_resistance(deck, "Vout", SmallSignalOptions())
    members = parameter_symbols(separate, "ro")
    assert members == ("ro_Q1", "ro_Q2", "ro_Q3")
    point = {"gm": 2e-3, "rpi": 5e4, "ro": 1.2e6}
    each = {f"{p}_{q}": v for p, v in point.items() for q in ("Q1", "Q2", "Q3")}
    group = group_sensitivity(separate, members, each)
    # scaling every ro together is the matched symbol's sensitivity
    assert group == pytest.approx(float(sensitivity_value(matched, "ro", point)), rel=1e-9)
    # and a finite difference of that scaling
    up = {k: (v * (1 + 1e-6) if k in members else v) for k, v in each.items()}
    down = {k: (v * (1 - 1e-6) if k in members else v) for k, v in each.items()}
    fd = (separate.evaluate(up) - separate.evaluate(down)) / (2e-6 * separate.evaluate(each))
    assert group == pytest.approx(float(fd), rel=1e-5)
    table = sensitivities(separate, each, symbolic=False, groups={"ro (all)": members})
    values = [abs(row.value) for row in table]
    assert values == sorted(values, reverse=True)
    assert {row.symbol for row in table} >= {"ro (all)", "ro_Q3", "gm_Q1"}


def test_sensitivity_to_absent_symbol_is_an_error():
    f = output_resistance(parse_netlist("t\nI1 0 a 1\nR1 a 0 RA\n"), "a")
    with pytest.raises(AnalysisError, match="does not depend"):
        sensitivity(f, "RB")


def test_parameter_symbols_refuses_a_plain_name():
    f = output_resistance(parse_netlist("t\nI1 0 a 1\nR1 a 0 RA\n"), "a")
    with pytest.raises(AnalysisError, match="not a device parameter"):
        parameter_symbols(f, "RA")


# -- at a DC operating point ---------------------------------------------------------------------
def at_bias(path, numbers=None):
    """Circuit, exact Rout at Vout and the symbol values at the DC operating point (plus netlist numbers)."""
    circuit = read_netlist(path)
    point = operating_point(circuit, values=numbers or {})
    values = dict(numbers or {})
    values.update(bias_values(circuit, point.small_signal_values(), SmallSignalOptions()))
    return circuit, output_resistance(circuit, "Vout", SmallSignalOptions()), values


def reference_sensitivity(circuit, values, name, h=1e-6):
    """Central difference of the reference solver's Rout at Vout in ``name``, normalised."""
    def rout(scale):
        point = dict(values)
        point[name] = values[name] * scale
        return float(reference_value(circuit, "output_resistance", ("Vout",), point, SmallSignalOptions()).real)

    return (rout(1 + h) - rout(1 - h)) / (2 * h * rout(1.0))


def test_simple_mirror_output_resistance_follows_ro2_one_to_one_at_the_bias_point():
    # Gray, Hurst, Lewis and Meyer, 5th ed., ch. 4: the simple mirror's Rout = ro2 (common practice)
    circuit, f, values = at_bias(EXAMPLES / "simple_mirror.cir")
    # the operating point names every device value, beta_Q1 and beta_Q2 too (unused by the rpi form)
    device_values = symbols_of(values, "gm", "rpi", "ro")
    assert set(device_values) == {f"{p}_{q}" for p in ("gm", "rpi", "ro") for q in ("Q1", "Q2")}
    rows = sensitivities(f, at=values)
    assert [(row.symbol, row.expr) for row in rows] == [("ro_Q2", 1)]
    assert rows[0].value == pytest.approx(1.0, rel=1e-15)
    assert reference_sensitivity(circuit, values, "ro_Q2") == pytest.approx(1.0, rel=1e-6)
    for name in sorted(set(device_values) - {"ro_Q2"}):  # nothing else moves it
        assert reference_sensitivity(circuit, values, name) == pytest.approx(0.0, abs=1e-9)


def test_sensitivities_at_the_bias_point_with_a_numeric_resistor():
    circuit, f, values = at_bias(EXAMPLES / "degenerated_mirror.cir", {"RE": 2e3})
    rows = sensitivities(f, at=values, symbolic=False)
    assert {row.symbol for row in rows} == set(symbols_of(values, "gm", "rpi", "ro")) | {"RE"}
    for row in rows:
        assert row.value == pytest.approx(reference_sensitivity(circuit, values, row.symbol), rel=1e-5, abs=1e-8)
    # a resistance is homogeneous of degree one in every resistance and inverse conductance (by hand)
    resistive = sum(row.value for row in rows if ohm_power(row.symbol, f.meanings) == 1)
    conductive = sum(row.value for row in rows if ohm_power(row.symbol, f.meanings) == -1)
    assert resistive - conductive == pytest.approx(1.0, rel=1e-9)


def test_a_table_at_arrays_of_values_is_refused():
    f = output_resistance(parse_netlist("t\nI1 0 a 1\nR1 a 0 RA\nR2 a 0 RB\n"), "a")
    with pytest.raises(AnalysisError, match="one point"):
        sensitivities(f, {"RA": [1.0, 2.0], "RB": [3.0, 4.0]})
    np.testing.assert_allclose(sensitivity_value(f, "RA", {"RA": [1.0, 2.0], "RB": [3.0, 4.0]}), [0.75, 4 / 6])
