"""``symbias derive --at-bias``: exact formulas evaluated at the DC operating point.

The small-signal values come from the DC solve; the checks compare against
independent relations: the simple mirror's Rout is the output device's ro
(Gray, Hurst, Lewis, Meyer, Analysis and Design of Analog ICs, 5th ed., ch. 4,
from memory), ro = (VAF + VCB)/IC for the Early model used (see docs/dc.md),
and the Wilson mirror's Rout ~ beta*ro/2 (same chapter, from memory).
"""

import json

import pytest

from symbias.cli import main
from symbias.dc.operating_point import operating_point
from symbias.netlist import read_netlist


def _derive_json(capsys, *args):
    assert main(["derive", *args, "--json"]) == 0
    return json.loads(capsys.readouterr().out)


def test_simple_mirror_rout_at_bias_is_ro_of_the_output_device(capsys):
    record = _derive_json(capsys, "examples/simple_mirror.cir", "--rout", "Vout", "--at-bias")
    point = operating_point(read_netlist("examples/simple_mirror.cir"))
    q2 = point.devices["Q2"]
    assert record["at_bias"] == pytest.approx(q2.small_signal["ro"], rel=1e-12)
    # Early model: ro = (VAF + VCB)/IC with VAF = 60 V from the deck
    vcb = point.node_voltages["out"] - point.node_voltages["in"]
    assert record["at_bias"] == pytest.approx((60 + vcb) / q2.output_current, rel=2e-3)


def test_wilson_rout_at_bias_matched_and_unmatched_agree_with_beta_ro_over_2(capsys):
    exact = _derive_json(capsys, "examples/wilson_mirror.cir", "--rout", "Vout", "--at-bias")["at_bias"]
    matched = _derive_json(capsys, "examples/wilson_mirror.cir", "--rout", "Vout", "--at-bias", "--match")["at_bias"]
    point = operating_point(read_netlist("examples/wilson_mirror.cir"))
    q3 = point.devices["Q3"].small_signal
    beta_ro_half = q3["gm"] * q3["rpi"] * q3["ro"] / 2
    assert exact == pytest.approx(beta_ro_half, rel=0.05)
    assert matched == pytest.approx(exact, rel=0.05)


def test_at_bias_with_a_symbol_left_free_names_it(capsys):
    assert main(["derive", "examples/degenerated_mirror.cir", "--rout", "Vout", "--at-bias"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "RE" in err[0] and "Traceback" not in err[0]


def test_at_bias_with_set_value(capsys):
    record = _derive_json(capsys, "examples/degenerated_mirror.cir", "--rout", "Vout", "--at-bias", "--set", "RE=2k")
    assert record["at_bias"] > 1e6
