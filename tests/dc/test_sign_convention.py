"""One sign convention for output currents, stated, in every command and format (docs/conventions.md).

An output current counts the way the transistor at the output node drives
it: into a sink (npn collector, nmos drain), out of a source (pnp collector,
pmos drain).  A working mirror of either polarity reads positive, however its
output source is written; SPICE branch currents keep their sign and say so.

References: Debian's ngspice on the same decks - its branch current
``i(vout)`` (positive into the + terminal) at the operating point and in its
AC analysis, related to the output current by the stated rule; the simple
mirror's gain ``1/(1 + 2/beta)`` is positive for either polarity (Gray,
Hurst, Lewis and Meyer, 5th ed., ch. 4, from memory).
"""

from __future__ import annotations

import csv
import json

import pytest

from support.library_checks import spice_ac, spice_op
from symbias.cli import main
from symbias.simulator.ngspice import simulator
from symbias.pipeline import load_target

needs_ngspice = pytest.mark.skipif(simulator() is None, reason="ngspice is not on PATH")

NPN = ("npn sink\nVcc vcc 0 5\nIref vcc in 100u\nQ1 in in 0 QN\nQ2 out in 0 QN\nVout out 0 2.5\n"
       ".model QN npn (IS=1e-16 BF=100 VAF=50)\n")
#: the pnp mirror with its output source written from the output node to ground, as a designer would
PNP = ("pnp source\nVcc vcc 0 5\nIref in 0 100u\nQ1 in in vcc QP\nQ2 out in vcc QP\nVout out 0 2.5\n"
       ".model QP pnp (IS=1e-16 BF=50 VAF=30)\n")
#: the same pnp mirror with its output source written from the supply to the output node
PNP_FROM_SUPPLY = PNP.replace("Vout out 0 2.5", "Vout vcc out 2.5")
CASES = {"npn": (NPN, "sinks"), "pnp": (PNP, "sources"), "pnp-from-supply": (PNP_FROM_SUPPLY, "sources")}


def _deck(tmp_path, name: str) -> str:
    text, _ = CASES[name]
    path = tmp_path / f"{name}.cir"
    path.write_text(text)
    return str(path)


def _json(capsys, argv):
    assert main(argv) == 0
    return json.loads(capsys.readouterr().out)


@pytest.mark.parametrize("name", sorted(CASES))
def test_derive_gain_is_positive_and_labelled(tmp_path, capsys, name):
    data = _json(capsys, ["derive", _deck(tmp_path, name), "--gain", "Vout/Iref", "--at-bias", "--json"])
    assert data["label"] == "iout(Vout)/i(Iref)"
    assert 0.9 < data["at_bias"] < 1.2  # 1/(1 + 2/beta) with the Early effect: positive for either polarity
    direction = CASES[name][1]
    sign = [a for a in data["assumptions"] if a.startswith("sign: iout(Vout)")]
    assert len(sign) == 1 and f" {direction} " in sign[0]
    assert any(a.startswith("sign: i(Iref) = the current of Iref as written") for a in data["assumptions"])


@pytest.mark.parametrize("name", sorted(CASES))
def test_bias_output_current_is_positive_and_labelled(tmp_path, capsys, name):
    data = _json(capsys, ["bias", _deck(tmp_path, name), "--json"])
    (out,) = data["output_currents"]
    assert out["probe"] == "Iout(Vout)" and out["direction"] == CASES[name][1] and out["unit"] == "A"
    assert out["value"] == pytest.approx(out["sign_vs_spice"] * data["branch_currents"]["Vout"])
    assert 90e-6 < out["value"] < 115e-6
    assert data["units"]["branch_currents"] == "A, SPICE sign: positive into the + terminal"
    assert main(["bias", _deck(tmp_path, name)]) == 0
    text = capsys.readouterr().out
    assert "Iout(Vout)" in text and f"positive: current Q2 ({'npn' if name == 'npn' else 'pnp'} collector)" in text


@pytest.mark.parametrize("name", sorted(CASES))
def test_sweeps_report_one_sign(tmp_path, capsys, name):
    deck = _deck(tmp_path, name)
    compliance = _json(capsys, ["sweep", deck, "--vary", "Vout", "--from", "0.5", "--to", "4", "--points", "15",
                                "--json"])
    assert compliance["output"] == "Iout(Vout)" and compliance["output_unit"] == "A"
    currents = compliance["outputs"]["Iout(Vout)"]
    assert min(currents) > 0 and compliance["metrics"]["reference_current"] > 0
    assert compliance["output_meaning"].startswith("current Q2")
    supply = _json(capsys, ["sweep", deck, "--vary", "Vcc", "--from", "4.5", "--to", "5.5", "--points", "11",
                            "--json"])
    assert supply["metrics"]["nominal_value"] > 0 and min(supply["outputs"]["Iout(Vout)"]) > 0
    table = tmp_path / "points.csv"
    assert main(["sweep", deck, "--vary", "Vout", "--from", "0.5", "--to", "4", "--points", "15",
                 "--csv", str(table)]) == 0
    rows = list(csv.DictReader(table.open()))
    assert [float(r["Iout(Vout) [A]"]) for r in rows] == currents


@needs_ngspice
@pytest.mark.parametrize("name", sorted(CASES))
def test_against_ngspice_branch_current(tmp_path, capsys, name):
    deck = _deck(tmp_path, name)
    out = _json(capsys, ["bias", deck, "--json"])["output_currents"][0]
    circuit = load_target(deck).circuit
    spice = spice_op(circuit, {}, ["i(vout)"])["i(vout)"]
    assert out["value"] == pytest.approx(out["sign_vs_spice"] * spice, rel=1e-5)
    # the small-signal gain: ngspice's AC branch current per unit AC reference current, same rule
    gain = _json(capsys, ["derive", deck, "--gain", "Vout/Iref", "--at-bias", "--json"])["at_bias"]
    ac = spice_ac(circuit, {}, "Iref", ["i(vout)"])["i(vout)"]
    assert gain == pytest.approx(out["sign_vs_spice"] * ac, rel=1e-3)
