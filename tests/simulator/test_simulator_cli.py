"""Bias values from ngspice on the command line, and every way the simulator can fail.

Reference: Debian's ngspice package (version 39) and what it really prints:
each failure below is provoked in ngspice itself, and where ngspice exits with
status 0 despite the failure the test shows that too (so reading its numbers
without looking for the failure would have given a wrong answer).  The model
cards are the invented ones of ``tests/decks/simulator/invented_kit.lib``.
"""

from __future__ import annotations

import json
import shutil
import subprocess
import warnings

import pytest

from symbias.cli import main
from symbias.errors import CircuitError, ModelWarning, SimulatorError, SimulatorWarning
from symbias.netlist import parse_netlist
from symbias.pipeline import DeriveRequest, derive, design_inputs, load_target, parse_quantity
from symbias.simulator.ngspice import run_ngspice
from symbias.simulator.operating_point import SimulatorSettings, simulator_operating_point

pytestmark = pytest.mark.skipif(shutil.which("ngspice") is None, reason="ngspice is not installed")

CASCODE = "tests/decks/simulator/bsim4_cascode.cir"
MIRROR = "tests/decks/simulator/corner_mirror.cir"
HAND = "tests/decks/simulator/hand_process.toml"  # level-1 values for the BSIM4 card's device
BSIM4 = "t\nVd d 0 1\nVg g 0 1\nM1 d g 0 0 NX W=1u L=0.5u\n.model NX nmos (level=54 {card})\n"


def _run(capsys, *argv):
    status = main(list(argv))
    out, err = capsys.readouterr()
    return status, out, err


def _one_line(err: str) -> str:
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err, err
    return lines[0]


# -- the options -----------------------------------------------------------------------------------------


def test_bias_from_ngspice_as_json(capsys):
    status, out, _ = _run(capsys, "bias", CASCODE, "--models", "ngspice", "--json")
    record = json.loads(out)
    assert status == 0 and record["models"] == "ngspice" and record["method"] == "ngspice"
    m4 = record["devices"]["M4"]
    assert m4["region"] == "saturation" and set(m4["small_signal"]) == {"gm", "gmb", "ro", "cgs", "cgd", "cdb", "csb"}
    assert record["branch_currents"]["Vout"] == pytest.approx(-20e-6, rel=0.05)


def test_derive_at_bias_takes_the_simulator_values(capsys):
    status, out, _ = _run(capsys, "derive", CASCODE, "--rout", "Vout", "--at-bias", "--models", "ngspice", "--json")
    assert status == 0
    record = json.loads(out)
    value = record["at_bias"]
    assert record["bias_models"] == "ngspice" and record["bias_corner"] is None
    target = load_target(CASCODE)
    request = DeriveRequest(quantities=(parse_quantity("output_resistance", "Vout", "--rout"),),
                            at_bias=design_inputs(target, models="ngspice"))
    assert value == pytest.approx(derive(target, request).results[0].value, rel=1e-12)
    with pytest.raises(CircuitError, match="LEVEL=54 is not modelled"):  # the card alone means nothing at level 1
        derive(target, DeriveRequest(quantities=request.quantities, at_bias=design_inputs(target)))
    with pytest.warns(ModelWarning):
        hand = design_inputs(target, process=HAND)
        built_in = derive(target, DeriveRequest(quantities=request.quantities, at_bias=hand))
    assert abs(built_in.results[0].value / value - 1) > 0.5  # square-law hand values are not the BSIM4 card


def test_a_column_per_corner(capsys):
    status, out, _ = _run(capsys, "bias", MIRROR, "--models", "ngspice", "--corner", "typical", "--corner", "fast")
    assert status == 0 and "typical" in out and "fast" in out and "Q2 beta" in out
    status, out, _ = _run(capsys, "bias", MIRROR, "--corner", "typical", "--corner", "fast", "--json")
    record = json.loads(out)
    assert status == 0 and record["models"] == "built-in" and list(record["corners"]) == ["typical", "fast"]


def test_model_check_shows_where_the_built_in_models_stop_describing_the_process(capsys):
    status, out, _ = _run(capsys, "bias", CASCODE, "--compare-models", "--process", HAND, "--json")
    assert status == 0
    rows = {(r["item"], r["quantity"]): r for r in json.loads(out)["comparisons"][0]["rows"]}
    assert abs(rows[("M2", "ro")]["relative"]) > 0.5  # symbias's square law on a level-54 card
    _, alone, _ = _run(capsys, "bias", CASCODE, "--models", "ngspice", "--json")
    assert rows[("M2", "ro")]["simulator"] == json.loads(alone)["devices"]["M2"]["small_signal"]["ro"]
    status, out, _ = _run(capsys, "bias", "examples/wilson_mirror.cir", "--compare-models", "--json")
    plain = json.loads(out)["comparisons"][0]["rows"]
    assert status == 0 and max(abs(r["relative"]) for r in plain if r["relative"] is not None) < 1e-4
    status, out, _ = _run(capsys, "bias", MIRROR, "--compare-models", "--corner", "typical", "--corner", "fast")
    assert status == 0 and out.count("Model check at 27 degC, .lib section") == 2 and "largest difference" in out


@pytest.mark.parametrize("argv, where", [
    (["derive", CASCODE, "--rout", "Vout", "--models", "ngspice"], "--models"),
    (["bias", CASCODE, "--all", "--models", "ngspice"], "--models"),
    (["bias", MIRROR, "--corner", "slow"], MIRROR),
    (["bias", "bjt-simple-mirror", "--corner", "fast"], "bjt-simple-mirror"),
    (["deck", MIRROR, "--corner", "typical", "--corner", "fast"], "--corner"),
])
def test_misuse_is_one_line_with_status_2(capsys, argv, where):
    status, _, err = _run(capsys, *argv)
    line = _one_line(err)
    assert status == 2 and where in line, line


def test_an_unknown_corner_lists_the_sections(capsys):
    _, _, err = _run(capsys, "bias", MIRROR, "--corner", "slow")
    assert "sections: fast, typical" in _one_line(err)


# -- failures ------------------------------------------------------------------------------------------------


def test_ngspice_missing_says_how_to_install_it(capsys, monkeypatch, tmp_path):
    monkeypatch.setenv("PATH", str(tmp_path))
    monkeypatch.delenv("SYMBIAS_NGSPICE", raising=False)
    status, _, err = _run(capsys, "bias", "examples/wilson_mirror.cir", "--models", "ngspice")
    line = _one_line(err)
    assert status == 1 and "ngspice is not installed" in line and "apt-get install ngspice" in line


NOT_CONVERGING = SimulatorSettings(options="itl1=3 gminsteps=0 srcsteps=0 noopiter",
                                   commands=("optran 0 0 0 0 0 0",))


def test_no_convergence_is_an_error_though_ngspice_exits_with_zero(tmp_path):
    circuit = parse_netlist("t\nVcc vcc 0 5\nR1 vcc a 1k\nQ1 a a 0 QQ\nR2 vcc b 10k\nQ2 b a 0 QQ\n"
                            ".model QQ npn (IS=1e-16)\n")
    settings = SimulatorSettings(options=NOT_CONVERGING.options, commands=NOT_CONVERGING.commands,
                                 keep=str(tmp_path / "kept"))
    with pytest.raises(SimulatorError, match="DC solution failed") as error:
        simulator_operating_point(circuit, settings=settings)
    assert str(tmp_path / "kept" / "deck.cir") in str(error.value)
    done = subprocess.run(["ngspice", "-b", "deck.cir"], cwd=tmp_path / "kept", capture_output=True, text=True,
                          timeout=60)
    assert done.returncode == 0 and "DC solution failed" in done.stdout


def test_a_card_ngspice_rejects(capsys, tmp_path):
    source = tmp_path / "card.cir"
    source.write_text(BSIM4.format(card="version=9.9"))
    status, _, err = _run(capsys, "bias", str(source), "--models", "ngspice", "--keep-deck", str(tmp_path / "k"))
    line = _one_line(err)
    assert status == 1 and line.startswith(f"{source}: ngspice failed: Error on line")
    assert "could not find a valid modelname" in line and f"deck kept in {tmp_path / 'k' / 'deck.cir'}" in line
    assert (tmp_path / "k" / "ngspice.log").read_text().count("valid modelname") >= 1


def test_an_error_in_the_output_of_a_run_that_exits_with_zero(tmp_path):
    circuit = parse_netlist(BSIM4.format(card="version=4.8 toxe=-1e-9"))
    with pytest.raises(SimulatorError, match="Fatal: Toxe = -1e-09 is not positive") as error:
        simulator_operating_point(circuit, settings=SimulatorSettings(keep=str(tmp_path)))
    assert "--keep-deck" not in str(error.value)
    done = subprocess.run(["ngspice", "-b", "deck.cir"], cwd=tmp_path, capture_output=True, text=True, timeout=60)
    # ngspice exits with 0 and even prints a value for gm: only its words say the run failed
    assert done.returncode == 0 and "@m1[gm] = 0" in done.stdout


def test_a_vector_ngspice_does_not_have():
    deck = "t\nV1 a 0 1\nR1 a 0 1k\n.control\nop\nprint @r1[nosuch]\nquit\n.endc\n.end\n"
    with pytest.raises(SimulatorError, match="no such parameter|not available"):
        run_ngspice(deck)


def test_a_timeout():
    deck = "t\nV1 a 0 sin(0 1 1k)\nR1 a 0 1k\n.control\ntran 1n 100m\nquit\n.endc\n.end\n"
    with pytest.raises(SimulatorError, match="did not finish within 0.2 s"):
        run_ngspice(deck, timeout=0.2)


def test_a_missing_library_file_in_a_deck():
    deck = 't\nV1 a 0 1\nR1 a 0 1k\n.lib "/nonexistent/models.lib" tt\n.control\nop\nquit\n.endc\n.end\n'
    with pytest.raises(SimulatorError, match="Could not find library file /nonexistent/models.lib"):
        run_ngspice(deck)


def test_a_model_level_whose_names_symbias_does_not_know():
    circuit = parse_netlist("t\nVd d 0 1\nM1 d d 0 0 NX W=1u L=1u\n.model NX nmos (level=73)\n")
    with pytest.raises(CircuitError, match="level 73: symbias reads ngspice's small-signal values of"):
        simulator_operating_point(circuit)


def test_a_parameter_ngspice_ignores_is_a_warning():
    circuit = parse_netlist(BSIM4.format(card="version=4.8 tox=4e-9"))
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        simulator_operating_point(circuit)
    found = [str(w.message) for w in caught if issubclass(w.category, SimulatorWarning)]
    assert found == ["<input>: ngspice ignored the model parameter tox of model nx"]
