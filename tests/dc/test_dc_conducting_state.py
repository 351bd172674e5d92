"""Self-biased cells are reported on their conducting state, with the other states and the start-up finding.

Every command that uses an operating point (``bias``, ``sweep``, ``derive
--at-bias``, ``deck``) takes it from the conducting state of a self-biased
cell, lists the other DC states and says when a zero-current state makes a
start-up circuit necessary; a sweep follows the conducting state and says
where it is lost.

References: Debian's ngspice on the same decks, started (``.nodeset``) from
the node voltages of each state symbias reports, converges to that state -
each is a DC solution of the circuit, not an artefact of the solver; the
same for the conducting state at each temperature of a sweep, and ngspice's
AC analysis at the conducting state for the output resistance ``derive
--at-bias`` reports.  That a bandgap core has a zero-current state and needs
start-up is common practice (Gray, Hurst, Lewis and Meyer, 5th ed., ch. 4,
self-biased references, from memory).
"""

from __future__ import annotations

import json

import pytest

from symbias.cli import main
from symbias.simulator.deck import reference_deck
from symbias.simulator.ngspice import run_reference, simulator
from symbias.pipeline import design_inputs, load_target

needs_ngspice = pytest.mark.skipif(simulator() is None, reason="ngspice is not on PATH")


def _json(capsys, argv):
    assert main(argv) == 0
    return json.loads(capsys.readouterr().out)


def _ngspice_vref(identifier: str, guess: dict, temperature: float = 27.0) -> float:
    target = load_target(identifier)
    inputs = design_inputs(target)
    deck = reference_deck(target.circuit, inputs.process, temperature, inputs.values, control="{control}",
                          guess=guess)
    table = run_reference(deck, "op", ["v(vref)"])
    assert table.shape == (1, 2)
    return float(table[0, 1])


@pytest.mark.parametrize("identifier, vref", [("brokaw-bandgap", 1.1831), ("opamp-bandgap", 1.1656)])
def test_bias_reports_the_conducting_state_and_the_others(capsys, identifier, vref):
    # a plain solve of these cells lands on a state of a few nA (VREF 0.40 V and 0.38 V)
    data = _json(capsys, ["bias", identifier, "--json"])
    assert data["node_voltages"]["vref"] == pytest.approx(vref, abs=1e-3)
    states = data["states"]
    assert states["reason"] == "conducting state" and states["needs_startup"] is True and states["count"] == 3
    chosen = states["states"][states["chosen"]]
    assert chosen["zero_current"] is False and chosen["device_current"] > 1e-5
    others = [s for s in states["states"] if not s["chosen"]]
    assert all(s["zero_current"] for s in others) and all(s["device_current"] < 1e-8 for s in others)
    assert main(["bias", identifier]) == 0
    text = capsys.readouterr().out
    assert "DC states: 3 found" in text and "other state" in text and "needs a start-up circuit" in text


@needs_ngspice
def test_every_reported_state_is_a_state_of_ngspice(capsys):
    data = _json(capsys, ["bias", "brokaw-bandgap", "--json"])
    for state in data["states"]["states"]:
        if not state["exact"]:
            continue  # held only by leakage: not an exact solution, so nothing for ngspice to land on
        guess = {n: v for n, v in state["node_voltages"].items()}
        assert _ngspice_vref("brokaw-bandgap", guess) == pytest.approx(guess["vref"], abs=1e-3)


def test_a_cell_with_one_state_says_so(capsys):
    data = _json(capsys, ["bias", "examples/simple_mirror.cir", "--json"])
    assert data["states"]["count"] == 1 and data["states"]["reason"] == "only state"
    assert data["states"]["needs_startup"] is False


def test_a_guess_picks_the_state_and_the_others_are_still_listed(capsys):
    data = _json(capsys, ["bias", "brokaw-bandgap", "--guess", "vref=0.4", "--guess", "c1=5", "--guess", "c2=5",
                          "--json"])
    states = data["states"]
    assert states["reason"] == "guess" and states["states"][states["chosen"]]["zero_current"] is True
    assert states["needs_startup"] is True and data["node_voltages"]["vref"] < 0.5


@needs_ngspice
def test_temperature_sweep_follows_the_conducting_state(capsys):
    # before: the sweep fell onto the 5 nA state below -10 degC and reported 3,700-7,600 ppm/degC
    data = _json(capsys, ["sweep", "brokaw-bandgap", "--vary", "temp", "--from", "-40", "--to", "125",
                          "--points", "34", "--json"])
    vref = data["outputs"]["V(vref)"]
    assert min(vref) > 1.17 and data["branch"]["lost"] == []
    assert data["metrics"]["box_tc_ppm"] < 100 and data["metric_units"]["box_tc_ppm"] == "ppm/degC"
    for index in (0, 13, 33):  # -40, 25 and 125 degC: ngspice started at the swept state stays on it
        guess = {n: values[index] for n, values in data["node_voltages"].items() if n != "0"}
        temperature = data["values"][index]
        assert _ngspice_vref("brokaw-bandgap", guess, temperature) == pytest.approx(vref[index], abs=1e-3)


def test_supply_sweep_says_where_the_conducting_state_is_lost(capsys):
    data = _json(capsys, ["sweep", "brokaw-bandgap", "--vary", "Vcc", "--from", "0", "--to", "5", "--points", "51",
                          "--json"])
    assert data["branch"]["lost"] == [[0.0, 0.0]]  # no supply, no current
    assert data["branch"]["states"]["needs_startup"] is True
    assert main(["sweep", "brokaw-bandgap", "--vary", "Vcc", "--from", "0", "--to", "5", "--points", "51"]) == 0
    text = capsys.readouterr().out
    assert "Off the conducting state at Vcc = 0 V" in text and "needs a start-up circuit" in text


@needs_ngspice
def test_derive_at_bias_evaluates_at_the_conducting_state(capsys, tmp_path):
    data = _json(capsys, ["derive", "brokaw-bandgap", "--rout", "vref", "--at-bias", "--json"])
    assert data["operating_point_states"]["needs_startup"] is True
    # ngspice's AC analysis at the conducting state (the deck's .nodeset): the impedance seen at vref
    deck = tmp_path / "brokaw.cir"
    assert main(["deck", "brokaw-bandgap", "--analysis", "none", "-o", str(deck)]) == 0
    lines = [line for line in deck.read_text().splitlines() if line.strip().lower() != ".end"]
    lines += ["Itest 0 vref DC 0 AC 1", ".control", "ac lin 1 1 1", f"wrdata {tmp_path / 'z.txt'} v(vref)", "quit",
              ".endc", ".end"]
    (tmp_path / "ac.cir").write_text("\n".join(lines) + "\n")
    import subprocess

    subprocess.run([simulator(), "-b", str(tmp_path / "ac.cir")], capture_output=True, check=True, timeout=60)
    z = float((tmp_path / "z.txt").read_text().split()[1])
    assert data["at_bias"] == pytest.approx(z, rel=1e-3)


@needs_ngspice
def test_the_deck_puts_the_simulator_on_the_conducting_state(capsys, tmp_path):
    deck = tmp_path / "brokaw.cir"
    assert main(["deck", "brokaw-bandgap", "-o", str(deck)]) == 0
    text = deck.read_text()
    assert "3 DC states found" in text and "needs a start-up circuit" in text and ".nodeset" in text
    import subprocess

    done = subprocess.run([simulator(), "-b", str(deck)], capture_output=True, text=True, timeout=60)
    line = next(line for line in done.stdout.splitlines() if line.strip().startswith("vref"))
    assert float(line.split("=")[1]) == pytest.approx(1.1831, abs=1e-3)
