"""The ``bias`` and ``sweep`` commands: JSON interface, tables, plots and one-line errors."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from symbias.cli import main
from symbias.process import demo_process_path

DECKS = Path(__file__).parents[1] / "decks"
ROOT = Path(__file__).resolve().parents[2]


def _json(capsys, argv):
    assert main(argv) == 0
    return json.loads(capsys.readouterr().out)


def test_bias_json_interface(capsys):
    data = _json(capsys, ["bias", str(DECKS / "bjt_cascode_mirror.cir"), "--json"])
    assert set(data) >= {"node_voltages", "branch_currents", "devices", "temperature"}
    assert data["temperature"] == 27.0
    assert data["branch_currents"]["Vout"] < 0  # SPICE sign: the sink draws current out of the + terminal
    q4 = data["devices"]["Q4"]
    assert q4["region"] == "active" and set(q4["small_signal"]) == {"gm", "rpi", "ro", "beta"}
    assert set(q4["currents"]) == {"c", "b", "e"}
    assert data["node_voltages"]["0"] == 0.0


def test_bias_json_without_early_effect(tmp_path, capsys):
    deck = tmp_path / "d.cir"
    deck.write_text("d\nI1 0 b 100n\nQ1 c b 0 QN\nVc c 0 2\n.model QN npn\n")  # no VAF: no Early effect
    data = _json(capsys, ["bias", str(deck), "--json"])
    # only the reverse-biased collector junction limits ro; JSON would carry an infinite one as null
    ro = data["devices"]["Q1"]["small_signal"]["ro"]
    assert ro is None or ro > 1e30


def test_bias_with_process_temperature_and_symbols(tmp_path, capsys):
    deck = tmp_path / "p.cir"
    deck.write_text("p\nVdd vdd 0 5\nR1 vdd a RB layer=rpoly\nQ1 a a 0 QN\n.model QN npn\n")
    argv = ["bias", str(deck), "--process", str(demo_process_path()), "--set", "RB=43k", "--json"]
    cold = _json(capsys, argv + ["--temp", "-40"])
    hot = _json(capsys, argv + ["--temp", "125"])
    assert cold["temperature"] == -40.0 and hot["node_voltages"]["a"] < cold["node_voltages"]["a"]
    assert main(["bias", str(deck)]) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith(f"{deck}:3: R1:") and "RB" in err and "\n" not in err


def test_bias_table(capsys):
    assert main(["bias", str(DECKS / "mos_cascode_mirror.cir")]) == 0
    out = capsys.readouterr().out
    assert "Node voltages" in out and "saturation" in out and "sign-off needs full simulation" in out


@pytest.mark.parametrize(
    "netlist, words",
    [
        ("n\nV1 a 0 1\nR1 a b 1k\nC1 b c 1p\nM1 b c 0 0 N\nI1 0 c 1u\n.model N nmos\n", "no DC path"),
        ("r\nVb 0 b 10\nVc c 0 5\nQ1 c b 0 QN\n.model QN npn\n", "emitter-base junction reversed"),
    ],
)
def test_bad_circuits_fail_in_one_line(tmp_path, capsys, netlist, words):
    deck = tmp_path / "bad.cir"
    deck.write_text(netlist)
    assert main(["bias", str(deck)]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    err = captured.err.strip()
    assert err.startswith(f"{deck}:") and words in err and "\n" not in err


def test_sweep_compliance_json_and_plot(tmp_path, capsys):
    plot = tmp_path / "iout.png"
    data = _json(capsys, ["sweep", str(DECKS / "bjt_cascode_mirror.cir"), "--vary", "Vout", "--from", "0",
                          "--to", "5", "--points", "101", "--plot", str(plot), "--json"])
    assert data["kind"] == "compliance" and data["output"] == "Iout(Vout)"  # the output-current convention
    assert 0.8 < data["metrics"]["by_region_low"] < 0.9 and data["metrics"]["device_low"].startswith("Q4")
    assert len(data["values"]) == 101 and len(data["outputs"]["Iout(Vout)"]) == 101
    assert plot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_sweep_temperature_and_supply(capsys):
    temp = _json(capsys, ["sweep", str(DECKS / "bandgap_core_startup.cir"), "--vary", "temp", "--from", "-40",
                          "--to", "125", "--points", "34", "--json"])
    assert temp["kind"] == "temperature" and temp["output"] == "V(vo)"
    assert temp["metrics"]["box_tc_ppm"] > 0
    line = _json(capsys, ["sweep", str(DECKS / "widlar_source.cir"), "--vary", "Vcc", "--from", "4", "--to", "6",
                          "--points", "21", "--json"])
    assert line["kind"] == "line" and line["output"] == "Iout(Vout)"
    assert line["metrics"]["percent_per_volt"] > 0


def test_empty_sweep_range_writes_nothing(tmp_path, capsys):
    plot = tmp_path / "never.png"
    argv = ["sweep", str(DECKS / "bjt_simple_mirror.cir"), "--vary", "Vout", "--from", "1", "--to", "1",
            "--plot", str(plot)]
    assert main(argv) == 2
    err = capsys.readouterr().err.strip()
    assert err.endswith("empty sweep range: from 1 to 1") and "\n" not in err
    assert not plot.exists()


def test_sweep_unknown_source_and_output(capsys):
    deck = str(DECKS / "bjt_simple_mirror.cir")
    assert main(["sweep", deck, "--vary", "Vxx", "--from", "0", "--to", "1"]) == 2
    assert "no independent source 'Vxx'" in capsys.readouterr().err
    assert main(["sweep", deck, "--vary", "Vout", "--from", "0", "--to", "1", "--out", "V(nope)"]) == 2
    assert "no node 'nope'" in capsys.readouterr().err


def test_process_error_through_a_real_process_exit(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text("[process]\nname = 'x'\n")
    result = subprocess.run([sys.executable, "-m", "symbias", "bias", str(DECKS / "bjt_simple_mirror.cir"),
                             "--process", str(bad)], capture_output=True, text=True, cwd=ROOT)
    assert result.returncode == 2 and result.stdout == ""
    assert result.stderr.strip() == f"{bad}:1: [process] has no 'tnom' (nominal temperature, degC)"
