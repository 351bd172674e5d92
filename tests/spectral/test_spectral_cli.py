"""``symbias frequency`` and ``symbias noise``: JSON interface, tables, Markdown, plots, one-line errors.

Outside reference for the numbers in the JSON: ``2 q IC`` with CODATA 2018's
elementary charge (the output noise of a BJT with a fixed base), and a
first-order ``1/(2 pi R C)`` corner (common practice).  The rest checks the
interface: fields, units, exit status 2 and one line for bad input, nothing
written on failure.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from symbias.cli import main

DECKS = Path(__file__).parents[1] / "decks" / "noise"
Q_ELECTRON = 1.602176634e-19  # CODATA 2018


def _json(capsys, argv):
    assert main(argv) == 0
    return json.loads(capsys.readouterr().out)


def test_noise_json_interface(capsys):
    data = _json(capsys, ["noise", str(DECKS / "bjt_mirror.cir"), "--parasitics", "rb", "--from", "10",
                          "--to", "1meg", "--points", "5", "--at", "1k", "--json"])
    assert data["output"] == "i(Vout)" and data["unit"] == "A^2/Hz" and data["band"] == [10.0, 1e6]
    assert len(data["frequencies"]) == len(data["total"]) == 26 and data["at"] == 1e3
    assert sum(row["share"] for row in data["sources"]) == pytest.approx(1.0)
    assert [row["element"] for row in data["by_device"]][:1] == ["Q2"]
    assert data["integrated_rms"] == pytest.approx(math.sqrt(data["integrated"]))
    # the corner (about 1.2 Hz) lies below a band starting at 10 Hz: extrapolated as 1/f from there
    assert 1 < data["flicker_corner"] < 10 and data["flicker_corner_note"].startswith("below the band")
    terms = data["closed_form"]["terms"]
    assert {t["source"] for t in terms} >= {"Q2 collector shot", "Q1 rb thermal", "Q2 flicker"}
    assert "kT" in data["closed_form"]["white_total"]


def test_noise_of_a_fixed_base_bjt_is_2qic(tmp_path, capsys):
    deck = tmp_path / "q.cir"
    deck.write_text("npn\nVB b 0 0.7\nQ1 c b 0 QN\nVout c 0 2\n.model QN npn (IS=1e-16 BF=100)\n")
    data = _json(capsys, ["noise", str(deck), "--json", "--no-closed-form", "--to", "1k"])
    bias = _json(capsys, ["bias", str(deck), "--json"])
    assert data["density_at"] == pytest.approx(2 * Q_ELECTRON * abs(bias["devices"]["Q1"]["currents"]["c"]),
                                               rel=1e-12)
    assert "closed_form" not in data


def test_noise_table_markdown_and_plot(tmp_path, capsys):
    assert main(["noise", str(DECKS / "mos_cascode.cir"), "--match", "--approx", "--to", "1meg"]) == 0
    text = capsys.readouterr().out
    assert "noise sources at 1kHz" in text and "1/f corner" in text and "closed forms" in text
    assert main(["noise", str(DECKS / "mos_cascode.cir"), "--format", "markdown", "--to", "1meg"]) == 0
    assert capsys.readouterr().out.startswith("### Output noise i(Vout)")
    plot = tmp_path / "noise.png"
    assert main(["noise", str(DECKS / "mos_cascode.cir"), "--to", "1meg", "--plot", str(plot),
                 "--no-closed-form"]) == 0
    assert plot.stat().st_size > 1000


def test_frequency_json_interface(tmp_path, capsys):
    deck = tmp_path / "rc.cir"
    deck.write_text("rc\nI1 0 a 1m\nR1 a 0 2k\nC1 a 0 1n\nVout b 0 0\nR2 a b 1g\n")
    data = _json(capsys, ["frequency", str(deck), "--rout", "a", "--from", "1k", "--to", "100meg", "--json"])
    corner = 1 / (2 * math.pi * (2e3 * 1e9 / (2e3 + 1e9)) * 1e-9)  # R1 || R2 with C1, common practice
    assert data["corner_hz"] == pytest.approx(corner, rel=1e-9)
    assert data["poles"][0]["hz"] == pytest.approx(corner, rel=1e-9) and data["zeros"] == []
    assert len(data["frequencies"]) == len(data["magnitude"]) == len(data["phase_deg"]) == 101
    assert data["phase_deg"][-1] == pytest.approx(-90, abs=0.1)
    assert "s" in data["symbols"] and data["exact"].startswith("(")


def test_frequency_approximation_table_markdown_and_plot(tmp_path, capsys):
    argv = ["frequency", str(DECKS / "mos_cascode.cir"), "--from", "1k", "--to", "1g"]
    data = _json(capsys, argv + ["--approx", "--json"])
    assert data["approx_error"] <= data["approx_tolerance"] and data["approx_band"] == [1e3, 1e9]
    assert data["dominant_pole"].startswith("-") and data["dominant_pole_error"] < 1
    assert main(argv + ["--approx"]) == 0
    text = capsys.readouterr().out
    assert "dominant pole" in text and "falls 3 dB at" in text
    assert main(argv + ["--format", "markdown"]) == 0
    assert capsys.readouterr().out.startswith("### Rout at Vout versus frequency")
    plot = tmp_path / "zout.svg"
    assert main(argv + ["--plot", str(plot)]) == 0
    assert plot.read_text().startswith("<?xml")


@pytest.mark.parametrize("argv,words", [
    (["noise", "{deck}", "--from", "0"], "--from"),
    (["noise", "{deck}", "--from", "1meg", "--to", "1k"], "--to"),
    (["noise", "{deck}", "--output", "Iref"], "must be a voltage source"),
    (["noise", "{deck}", "--output", "nowhere"], "no element or node"),
    (["frequency", "{deck}", "--points", "0"], "--points"),
    (["frequency", "{deck}", "--approx", "--spread", "1.5"], "spread"),
    (["frequency", "{deck}", "--plot", "{tmp}/missing/zout.png"], "--plot"),
    (["frequency", "{deck}", "--plot", "{tmp}/zout.txt"], "--plot"),
])
def test_bad_input_is_one_line_with_status_2(tmp_path, capsys, argv, words):
    argv = [a.format(deck=DECKS / "bjt_mirror.cir", tmp=tmp_path) for a in argv]
    try:
        status = main(argv)
    except SystemExit as done:  # argparse's own usage errors
        status = done.code
    assert status == 2
    err = capsys.readouterr().err.strip()
    assert words in err and len(err.splitlines()) == 1
    assert not list(tmp_path.iterdir())  # nothing written


def test_help_lists_the_new_commands(capsys):
    with pytest.raises(SystemExit):
        main(["--help"])
    out = capsys.readouterr().out
    assert "frequency" in out and "noise" in out
