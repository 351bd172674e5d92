"""Temperatures are checked once, wherever they enter: above absolute zero, finite, at most 1000 degC.

Findings of the adversarial run: ``--temp -300``, ``-273.15`` and ``1e308`` and a
process file with ``tnom = -300`` ended in tracebacks in ``bias``, ``sweep`` and
``derive --at-bias``; ``deck --temp nan`` wrote ``temp=nan`` into the deck.
Absolute zero is -273.15 degC (CODATA 2018: 0 degC = 273.15 K by definition of
the Celsius scale).  Each bad value is now a one-line error that names where
it came from and says the accepted range.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from symbias.errors import NetlistError, ProcessError, UsageError
from symbias.limits import ABSOLUTE_ZERO, MAX_TEMPERATURE, temperature_problem
from symbias.netlist import parse_netlist
from symbias.pipeline import SweepRequest, design_inputs, load_target
from symbias.process import demo_process_path, parse_process
from support.cli_checks import one_error_line, run_cli

ROOT = Path(__file__).resolve().parents[2]
BAD = ["-300", "-273.15", "1e308", "nan", "inf", "-inf"]
MIRROR = "examples/simple_mirror.cir"


@pytest.mark.parametrize("value", BAD)
def test_design_inputs_refuse_a_temperature_out_of_range(value):
    with pytest.raises(UsageError) as caught:
        design_inputs(load_target(MIRROR), temperature=float(value))
    assert caught.value.path == "--temp"
    assert "-273.15" in caught.value.reason and "1000" in caught.value.reason


@pytest.mark.parametrize("value", [ABSOLUTE_ZERO + 0.01, -40.0, 27.0, MAX_TEMPERATURE])
def test_the_edges_of_the_range_are_accepted(value):
    assert temperature_problem(value) is None
    assert design_inputs(load_target(MIRROR), temperature=value).temperature == value


@pytest.mark.parametrize("value", BAD)
@pytest.mark.parametrize("command", [["bias"], ["derive", "--at-bias"], ["deck"],
                                     ["sweep", "--vary", "Vout", "--from", "0", "--to", "5"]])
def test_every_command_gives_one_line_for_a_bad_temperature(tmp_path, monkeypatch, capsys, command, value):
    netlist = (ROOT / MIRROR).read_text()
    argv = [command[0], "deck.cir", *command[1:], f"--temp={value}"]
    status, out, err, changed = run_cli(tmp_path, monkeypatch, capsys, argv, {"deck.cir": netlist})
    assert status == 2 and out == "" and not changed, err
    assert "temperature" in err and "-273.15" in err and "Traceback" not in err
    assert len(err.splitlines()) == 1


@pytest.mark.parametrize("value", BAD[:3])
def test_a_temperature_sweep_out_of_range_names_its_end(value):
    with pytest.raises(UsageError) as caught:
        SweepRequest("temp", float(value), 50.0)
    assert caught.value.path == "--from"
    with pytest.raises(UsageError) as caught:
        SweepRequest("temp", -40.0, 1500.0)
    assert caught.value.path == "--to"


def test_process_tnom_out_of_range_is_located():
    text = demo_process_path().read_text().replace("tnom = 27", "tnom = -300")
    line = next(i for i, t in enumerate(text.splitlines(), 1) if t.startswith("tnom"))
    with pytest.raises(ProcessError) as caught:
        parse_process(text, "fab.toml")
    assert (caught.value.path, caught.value.line) == ("fab.toml", line)
    assert "-273.15" in caught.value.reason


def test_process_values_must_be_finite():
    text = demo_process_path().read_text().replace("BF = 120", "BF = inf")
    with pytest.raises(ProcessError, match="not a finite number"):
        parse_process(text, "fab.toml")


def test_a_model_card_tnom_out_of_range_is_located():
    with pytest.raises(NetlistError) as caught:
        parse_netlist("t\nI1 0 a 1m\nQ1 a a 0 QN\n.model QN npn (TNOM=-300)\n", "deck.cir")
    assert caught.value.line == 4 and "TNOM" in caught.value.reason


def test_the_cli_reports_a_bad_process_file_at_its_line(tmp_path, monkeypatch, capsys):
    text = demo_process_path().read_text().replace("tnom = 27", "tnom = -300")
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, ["bias", "deck.cir", "-p", "fab.toml"],
                                  {"deck.cir": (ROOT / MIRROR).read_text(), "fab.toml": text})
    assert status == 2 and out == ""
    error = one_error_line(err)
    assert error["where"] == "fab.toml" and error["line"], err
