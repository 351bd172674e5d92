"""Every column and metric carries its unit; one power syntax; sweep data out as CSV and as a table.

``bias`` on a circuit with a diode used to stop with ``KeyError: 'vgs'``;
its one device table mixed ohm and S in an ``rpi/gmb`` column and gave
``VBE/VGS`` without a unit.  Now each device kind has its own table, every
header its unit, the sweep metrics their units (text and JSON), and a sweep
writes its points as CSV (``--csv``) and prints them (``--table``).

References: SI units and the conventional symbols of the trade (gm in S,
rpi and ro in ohm, VCEsat and Vov in V, TC in ppm/degC: common practice);
the CSV is checked against the JSON of the same sweep, and the diode's
operating point against the Shockley equation ``ID = IS (exp(VD/(N VT)) -
1)`` (Sedra and Smith, ch. 4, from memory).
"""

from __future__ import annotations

import csv
import json
import math

import pytest

from symbias.cli import main

DIODE = "diode bias\nV1 a 0 5\nR1 a k 1k\nD1 k 0 DX\nQ1 c k 0 QN\nVc c 0 2\n.model DX d (IS=1e-14)\n" \
        ".model QN npn (IS=1e-16 BF=100 VAF=50)\n"


def _json(capsys, argv):
    assert main(argv) == 0
    return json.loads(capsys.readouterr().out)


def test_bias_with_a_diode_gives_one_table_per_device_kind_with_units(tmp_path, capsys):
    deck = tmp_path / "d.cir"
    deck.write_text(DIODE)
    assert main(["bias", str(deck)]) == 0
    text = capsys.readouterr().out
    assert "Diodes at 27 degC" in text and "Bipolar transistors at 27 degC" in text
    for header in ("ID [A]", "VD [V]", "rd [ohm]", "IC [A]", "VBE [V]", "VCE [V]", "gm [S]", "rpi [ohm]", "ro [ohm]",
                   "VCEsat [V]", "V [V]", "I [A]"):
        assert header in text, header
    assert "rpi/gmb" not in text and "VBE/VGS" not in text
    data = _json(capsys, ["bias", str(deck), "--json"])
    assert data["units"]["devices.small_signal"] == {"beta": "A/A", "gm": "S", "ro": "ohm", "rd": "ohm",
                                                     "rpi": "ohm"}
    diode = data["devices"]["D1"]
    vd, current = diode["voltages"]["vd"], diode["currents"]["a"]
    vt = 1.380649e-23 * 300.15 / 1.602176634e-19  # CODATA 2018
    assert current == pytest.approx(1e-14 * math.expm1(vd / vt) + 1e-12 * vd, rel=1e-6)  # Shockley, plus GMIN


def test_mos_table_has_its_own_columns(capsys):
    assert main(["bias", "examples/mos_cascode.cir"]) == 0
    text = capsys.readouterr().out
    assert "MOS transistors at 27 degC" in text
    for header in ("ID [A]", "VGS [V]", "VDS [V]", "gm [S]", "gmb [S]", "ro [ohm]", "Vov [V]"):
        assert header in text, header


@pytest.mark.parametrize("argv, units", [
    (["examples/dc_bandgap_core.cir", "--vary", "temp", "--from", "-40", "--to", "125", "--points", "34"],
     {"box_tc_ppm": "ppm/degC", "slope_ppm": "ppm/degC", "curvature": "V/degC^2", "curvature_ppm": "ppm/degC^2",
      "nominal_temperature": "degC", "zero_slope_temperature": "degC", "nominal_value": "V"}),
    (["examples/simple_mirror.cir", "--vary", "Vout", "--from", "0", "--to", "5", "--points", "51"],
     {"by_current_low": "V", "by_region_low": "V", "reference_current": "A", "fraction": "1"}),
    (["examples/simple_mirror.cir", "--vary", "VCC", "--from", "4", "--to", "6", "--points", "21"],
     {"percent_per_volt": "%/V", "normalized_db": "dB", "nominal_supply": "V", "nominal_value": "A"}),
])
def test_every_sweep_metric_has_its_unit(capsys, argv, units):
    data = _json(capsys, ["sweep", *argv, "--json"])
    assert set(data["metric_units"]) == set(data["metrics"])
    for key, unit in units.items():
        assert data["metric_units"][key] == unit, key
    assert main(["sweep", *argv]) == 0
    text = capsys.readouterr().out
    assert "unit" in text
    for key, unit in units.items():
        row = next(line for line in text.splitlines() if f"({key})" in line or f"│ {key} " in line)
        assert f" {unit} " in row, (key, row)


def test_one_power_syntax_in_human_output(capsys):
    for argv in (["derive", "examples/degenerated_mirror.cir", "--at-bias", "--set", "RE=1k", "--mirror-error",
                  "--approx"], ["show", "bjt-wilson-mirror"], ["derive", "examples/wilson_mirror.cir", "--match",
                                                                  "--beta", "--sensitivity", "--approx"]):
        assert main(argv) == 0
        text = capsys.readouterr().out
        assert "^" in text and "**" not in text, argv


def test_sweep_csv_holds_the_json_numbers(tmp_path, capsys):
    table = tmp_path / "points.csv"
    argv = ["sweep", "examples/dc_bandgap_core.cir", "--vary", "temp", "--from", "-40", "--to", "125", "--points", "12"]
    data = _json(capsys, [*argv, "--json", "--csv", str(table)])
    rows = list(csv.DictReader(table.open()))
    assert len(rows) == 12
    assert [float(r["temp [degC]"]) for r in rows] == data["values"]
    assert [float(r[f"{data['output']} [V]"]) for r in rows] == data["outputs"][data["output"]]
    for node, values in data["node_voltages"].items():
        if node != "0":
            assert [float(r[f"V({node}) [V]"]) for r in rows] == values
    for name, values in data["branch_currents"].items():
        assert [float(r[f"I({name}) [A]"]) for r in rows] == values
    for device, regions in data["regions"].items():
        assert [r[f"region({device})"] for r in rows] == regions


def test_sweep_table_prints_the_points_with_units(capsys):
    assert main(["sweep", "examples/simple_mirror.cir", "--vary", "Vout", "--from", "0", "--to", "5",
                 "--points", "6", "--table"]) == 0
    text = capsys.readouterr().out
    assert "Sweep points" in text and "Vout [V]" in text and "Iout(Vout) [A]" in text
    assert "2.10909e-05" in text  # the point at 5 V


def test_csv_destination_is_checked_before_any_work(tmp_path, capsys):
    assert main(["sweep", "examples/simple_mirror.cir", "--vary", "Vout", "--from", "0", "--to", "5",
                 "--csv", str(tmp_path / "points.txt")]) == 2
    err = capsys.readouterr().err.strip()
    assert err == f"--csv: {tmp_path / 'points.txt'}: the file name must end in .csv"
    assert not (tmp_path / "points.txt").exists()
