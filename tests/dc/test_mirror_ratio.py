"""The DC current ratio of a mirror at its operating point and its systematic error split by cause.

``derive --gain Vout/Iref --mirror-error --at-bias`` used to print the
small-signal gain (0.983 A/A, "error ~ 2/beta") where ``bias`` shows 20.27 uA
out for 20 uA in: the DC ratio is 1.0136, an error of the other sign from the
unequal collector voltages.  Now both are shown, each named.

References:

* Gray, Hurst, Lewis and Meyer, Analysis and Design of Analog Integrated
  Circuits, 5th ed., ch. 4 (equation numbers from memory): the simple bipolar
  mirror's ratio ``(1 + VCE2/VA)/(1 + VCE1/VA) / (1 + 2/beta)``; with the
  Gummel-Poon Early factor ``1 - VBC/VAF`` of the model it is exactly
  ``(1 + VCB2/VAF)/(1 + VCB1/VAF) / (1 + 2/BF)``; an ``N``-area output gives
  ``(1 + N)/beta`` to first order, the Wilson mirror ``2/beta^2``;
* the MOS mirror's ``(1 + lambda VDS2)/(1 + lambda VDS1)`` in saturation
  (common practice; the square law of SPICE level 1);
* Debian's ngspice at the same bias, with the model cards changed the way the
  split removes each cause (BF huge, VAF or LAMBDA none, GAMMA 0, a resistor
  matched).
"""

from __future__ import annotations

import json
import math

import pytest

from support.library_checks import output_current, spice_op, with_models
from symbias.cli import main
from symbias.simulator.ngspice import simulator
from symbias.pipeline import design_inputs, load_target
from symbias.pipeline.mirror_ratio import CAUSE_NAMES, mirror_ratio

needs_ngspice = pytest.mark.skipif(simulator() is None, reason="ngspice is not on PATH")
BETA, EARLY, LAMBDA, BODY, DEGENERATION = CAUSE_NAMES


def _ratio(identifier: str, values=None):
    target = load_target(identifier)
    inputs = design_inputs(target, values=values)
    return target, inputs, mirror_ratio(target, inputs, "Vout", "Iref")


def test_simple_bjt_mirror_split_against_the_textbook():
    _, _, result = _ratio("examples/simple_mirror.cir")  # BF = 120, VAF = 60, Vout = 2.5 V, 20 uA
    beta = result.cause(BETA)
    # base currents alone: ratio 1/(1 + 2/BF) exactly (Gray et al. ch. 4)
    assert beta.exact == pytest.approx(1 - 1 / (1 + 2 / 120), rel=1e-5)
    assert beta.power == 1 and beta.coefficient == pytest.approx(2.0, rel=1e-3) and beta.formula == "2/BF"
    early = result.cause(EARLY)
    # Early effect alone (no base current, so IC1 = Iref and VBE = VT ln(1 + Iref/IS)):
    # (1 + VCB2/VAF)/(1 + VCB1/VAF) with VCB1 = 0 (the diode) and VCB2 = Vout - VBE
    vt = 1.380649e-23 * 300.15 / 1.602176634e-19  # CODATA 2018 k and q
    vbe0 = vt * math.log1p(20e-6 / 1e-16)
    assert early.exact == pytest.approx(-(2.5 - vbe0) / 60, rel=1e-6)
    assert early.power == 1 and early.coefficient == pytest.approx(-(2.5 - vbe0), rel=1e-4)  # -(VCB2 - VCB1) V
    # the whole ratio against the textbook's VCE form: they differ by (VBE/VA)(VCE2 - VCE1)/VA, 3e-4 here
    vbe = 0.6726  # at the operating point (bias)
    textbook = (1 + 2.5 / 60) / (1 + vbe / 60) / (1 + 2 / 120)
    assert result.ratio == pytest.approx(textbook, rel=5e-4)
    assert result.ratio == pytest.approx(1.0136, abs=1e-4) and result.error < 0  # more out than in
    assert result.error == pytest.approx(beta.exact + early.exact + result.interaction)


@pytest.mark.parametrize("identifier, coefficient, power, source", [
    ("bjt-ratioed-mirror", 5.0, 1, "Gray et al. ch. 4: (1 + N)/beta with N = 4 (from memory)"),
    ("bjt-wilson-mirror", 2.0, 2, "Gray et al. ch. 4: Wilson mirror 2/beta^2 (from memory)"),
])
def test_leading_order_of_the_base_current_error(identifier, coefficient, power, source):
    _, _, result = _ratio(identifier)
    beta = result.cause(BETA)
    assert beta.power == power and beta.coefficient == pytest.approx(coefficient, rel=5e-3), source


def test_mos_mirror_split_against_the_square_law():
    target, _, result = _ratio("mos-simple-mirror")  # LAMBDA = 0.05, Vout = 1 V, 50 uA, KP W/L = 2 mA/V^2
    assert [c.name for c in result.causes] == [LAMBDA]  # no gate current; sources shared: no body effect
    vgs = 0.7197  # at the operating point (bias)
    square_law = (1 + 0.05 * 1.0) / (1 + 0.05 * vgs)  # common practice
    assert result.ratio == pytest.approx(square_law, rel=1e-4)
    assert result.cause(LAMBDA).exact == pytest.approx(1 - square_law, rel=1e-3)
    # to first order in LAMBDA, VDS1 is the gate voltage without it: VTO + sqrt(2 Iref/(KP W/L))
    vgs0 = 0.5 + math.sqrt(2 * 50e-6 / 2e-3)
    assert result.cause(LAMBDA).coefficient == pytest.approx(-(1.0 - vgs0), rel=1e-3)  # -(VDS2 - VDS1) V


@needs_ngspice
@pytest.mark.parametrize("identifier", ["bjt-simple-mirror", "bjt-pnp-simple-mirror", "mos-simple-mirror"])
def test_ratio_and_causes_against_ngspice_at_the_same_bias(identifier):
    target, inputs, result = _ratio(identifier)
    values = dict(inputs.values)
    iref = values["IREF"]
    ngspice = output_current(spice_op(target.circuit, values, ["i(vout)"]), "Vout") / iref
    assert result.ratio == pytest.approx(ngspice, rel=1e-5)
    bjt = target.circuit.devices[0].kind == "Q"
    # every cause removed: the size ratio
    ideal = with_models(target.circuit, **({"BF": 1e15, "VAF": None} if bjt else {"LAMBDA": 0, "GAMMA": 0}))
    ideal_ratio = output_current(spice_op(ideal, values, ["i(vout)"]), "Vout") / iref
    assert result.ideal == pytest.approx(ideal_ratio, rel=1e-6)
    alone = {EARLY: {"BF": 1e15}, BETA: {"VAF": None}, LAMBDA: {"GAMMA": 0}}
    for cause in result.causes:
        circuit = with_models(target.circuit, **alone[cause.name])
        ratio = output_current(spice_op(circuit, values, ["i(vout)"]), "Vout") / iref
        assert cause.exact == pytest.approx(1 - ratio / ideal_ratio, rel=1e-3, abs=1e-7), cause.name


def _ngspice_ratio(tmp_path, text: str, iref: float) -> float:
    path = tmp_path / "variant.cir"
    path.write_text(text)
    circuit = load_target(str(path)).circuit
    return output_current(spice_op(circuit, {}, ["i(vout)"]), "Vout") / iref


@needs_ngspice
def test_body_effect_against_ngspice(tmp_path):
    # a MOS source degenerated by design (only the output device has a source resistor, bulk at ground):
    # its threshold rises with its source voltage, which the body effect cause measures
    deck = ("nmos widlar-like source\nVdd vdd 0 3.3\nIref vdd in 40u\nM1 in in 0 0 NM W=10u L=1u\n"
            "M2 out in s2 0 NM W=10u L=1u\nR2 s2 0 2k\nVout out 0 1.5\n"
            ".model NM nmos (VTO=0.5 KP=200u LAMBDA=0.05 GAMMA=0.4 PHI=0.8)\n")
    (tmp_path / "m.cir").write_text(deck)
    _, _, result = _ratio(str(tmp_path / "m.cir"))
    assert {c.name for c in result.causes} == {LAMBDA, BODY}
    body = result.cause(BODY)
    assert body.exact > 0 and body.power == 1  # a higher threshold: less output current
    alone = deck.replace("LAMBDA=0.05", "LAMBDA=0")
    ideal = alone.replace("GAMMA=0.4", "GAMMA=0")
    expected = 1 - _ngspice_ratio(tmp_path, alone, 40e-6) / _ngspice_ratio(tmp_path, ideal, 40e-6)
    assert body.exact == pytest.approx(expected, rel=2e-3)
    assert result.ideal == pytest.approx(_ngspice_ratio(tmp_path, ideal, 40e-6), rel=1e-5)


@needs_ngspice
def test_degeneration_mismatch_against_ngspice(tmp_path):
    # a 1:2 npn mirror whose output resistor is not halved: matched would be 1k, it is 2k
    deck = ("degenerated npn mirror, mismatched\nVCC vcc 0 5\nIref vcc in 100u\nQ1 in in e1 QN\n"
            "Q2 out in e2 QN 2\nR1 e1 0 2k\nR2 e2 0 2k\nVout out 0 2.5\n.model QN npn (IS=1e-16 BF=120 VAF=60)\n")
    (tmp_path / "q.cir").write_text(deck)
    _, _, result = _ratio(str(tmp_path / "q.cir"))
    degeneration = result.cause(DEGENERATION)
    assert {c.name for c in result.causes} == {BETA, EARLY, DEGENERATION}
    assert result.ideal == pytest.approx(2.0, rel=1e-4) and degeneration.exact > 0.1
    alone = deck.replace("BF=120 VAF=60", "BF=1e15")
    ideal = alone.replace("R2 e2 0 2k", "R2 e2 0 1k")
    expected = 1 - _ngspice_ratio(tmp_path, alone, 100e-6) / _ngspice_ratio(tmp_path, ideal, 100e-6)
    assert degeneration.exact == pytest.approx(expected, rel=1e-4)


def test_derive_shows_the_dc_ratio_beside_the_small_signal_gain(capsys):
    argv = ["derive", "examples/simple_mirror.cir", "--gain", "Vout/Iref", "--mirror-error", "--at-bias"]
    assert main(argv) == 0
    text = capsys.readouterr().out
    assert "small-signal gain d iout/d iin at the operating point: 1.01314 A/A" in text
    assert "DC current ratio Iout/Iin: 1.01356 = 20.27uA / 20uA" in text
    assert "DC ratio error 1 - ratio/ideal: -1.356 %" in text
    assert "from finite beta (base current): +1.639 % exact;  leading order 2/BF" in text
    assert "small-signal error 1 - gain/ideal" in text
    assert main(argv + ["--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["dc_ratio"]["ratio"] == pytest.approx(1.01356, abs=1e-5)
    assert data["dc_ratio"]["output_current"] == pytest.approx(20.27e-6, rel=1e-3)
    assert [c["name"] for c in data["dc_ratio"]["causes"]] == [BETA, EARLY]
    assert data["transfer_error"]["kind"].startswith("small-signal")
    assert data["at_bias_kind"] == "small-signal value at the operating point"


def test_mirror_error_without_the_operating_point_says_how_to_get_the_dc_ratio(capsys):
    assert main(["derive", "examples/simple_mirror.cir", "--gain", "Vout/Iref", "--mirror-error"]) == 0
    assert "add --at-bias for Iout/Iin" in capsys.readouterr().out
