"""Symbolic headroom against the swept compliance and the textbook forms.

Sources: minimum output voltage of a BJT cascode mirror VBE + VCE(sat), of a
Wilson mirror VBE + VCE(sat), of a MOS cascode VTH + 2 Vov and of a
wide-swing MOS cascode 2 Vov (Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4;
Johns and Martin, "Analog Integrated Circuit Design", ch. 6 for the
wide-swing cascode).
"""

from __future__ import annotations

from pathlib import Path

import pytest
import sympy

from symbias.dc.headroom import headroom
from symbias.dc.sweep import compliance, sweep_source
from symbias.errors import CircuitError
from symbias.netlist import parse_netlist, read_netlist

DECKS = Path(__file__).parents[1] / "decks"
S = sympy.Symbol


@pytest.mark.parametrize(
    "deck, simplified",
    [
        ("bjt_simple_mirror", S("VCEsat")),
        ("bjt_cascode_mirror", S("VBE") + S("VCEsat")),
        ("bjt_wilson_mirror", S("VBE") + S("VCEsat")),
        ("widlar_source", S("VCEsat") + S("V_RE")),
        ("mos_cascode_mirror", S("VTH") + 2 * S("Vov")),
        ("mos_wide_swing_cascode", 2 * S("Vov")),
    ],
)
def test_headroom_formula_and_swept_compliance_agree(deck, simplified):
    c = read_netlist(DECKS / f"{deck}.cir")
    h = headroom(c, "Vout")
    assert h.kind == "minimum"
    assert sympy.simplify(h.simplified - simplified) == 0
    swept = compliance(sweep_source(c, "Vout", 0.0, 5.0, 101))
    # the bias point moves a little between mid-supply and the edge (Early effect, lambda)
    assert h.value == pytest.approx(swept.by_region_low, abs=3e-3)
    assert swept.device_low.startswith(h.device)
    # the hand-analysis form is close to the exact one
    assert h.simplified_value == pytest.approx(h.value, abs=0.02)


def test_cascode_expression_in_device_symbols():
    h = headroom(read_netlist(DECKS / "bjt_cascode_mirror.cir"), "Vout")
    assert h.expression == S("VBE_Q1") + S("VBE_Q3") - S("VBE_Q4") + S("VCEsat_Q4")
    assert set(h.values) == {"VBE_Q1", "VBE_Q3", "VBE_Q4", "VCEsat_Q4"}
    assert all(ok for _, _, ok in h.conditions)


def test_pnp_source_has_a_maximum():
    text = ("p\nVdd vdd 0 5\nIref in 0 50u\nQ1 in in vdd QP\nQ2 out in vdd QP\nVout out 0 2.5\n"
            ".model QP pnp (IS=1e-16 BF=50 VAF=30)\n")
    c = parse_netlist(text)
    h = headroom(c, "Vout")
    assert h.kind == "maximum" and h.expression == S("Vdd") - S("VCEsat_Q2")
    swept = compliance(sweep_source(c, "Vout", 0.0, 5.0, 101))
    assert h.value == pytest.approx(swept.by_region_high, abs=3e-3)


def test_headroom_needs_an_output_device():
    c = parse_netlist("r\nVout out 0 1\nR1 out 0 1k\n", "r.cir")
    with pytest.raises(CircuitError):
        headroom(c, "Vout")
    with pytest.raises(CircuitError):
        headroom(c, "R1")
