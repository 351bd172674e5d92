"""Process files: the demo process, and one-line errors for bad files."""

from __future__ import annotations

import pytest

from symbias.cli import main
from symbias.errors import ProcessError
from symbias.process import REQUIRED, demo_process_path, load_process, parse_process

GOOD = """# test process
[process]
name = "test"
tnom = 25

[devices.QN]
type = "npn"
IS = 1e-16
BF = 100
VAF = 50
NF = 1
XTI = 3
EG = 1.11
XTB = 0

[resistors.RP]
sheet = 50
TC1 = 1e-3
TC2 = 0
"""


def test_demo_process_is_complete_and_says_it_is_invented():
    text = demo_process_path().read_text()
    assert "INVENTED" in text
    process = load_process(demo_process_path())
    types = {d.type for d in process.devices.values()}
    assert types == set(REQUIRED)
    for device in process.devices.values():
        assert set(REQUIRED[device.type]) <= set(device.params)
    assert process.tnom == 27.0 and process.resistor("rpoly").sheet == 60.0


def test_good_file_and_lookup_by_type():
    process = parse_process(GOOD, "t.toml")
    assert process.tnom == 25.0
    assert process.device("other", "npn").name == "QN"
    assert process.device("other", "pnp") is None


@pytest.mark.parametrize(
    "edit, line, words",
    [
        (("VAF = 50\n", ""), 6, "missing parameter VAF"),
        (("BF = 100", "BF = -100"), 9, "must not be negative"),
        (("TC1 = 1e-3\n", ""), 16, "missing parameter TC1"),
        (('type = "npn"', 'type = "npx"'), 7, "type must be one of"),
        (("tnom = 25", "tnom = 2 5"), 4, "not valid TOML"),
        (("sheet = 50", "sheet = -5"), 17, "must not be negative"),
    ],
)
def test_bad_process_files_give_located_errors(edit, line, words):
    with pytest.raises(ProcessError) as info:
        parse_process(GOOD.replace(*edit), "bad.toml")
    assert str(info.value).startswith(f"bad.toml:{line}: ")
    assert words in str(info.value)


def test_cli_reports_a_bad_process_file_in_one_line(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text(GOOD.replace("BF = 100", "BF = -100"))
    deck = tmp_path / "m.cir"
    deck.write_text("t\nI1 0 a 1m\nQ1 a a 0 QN\n.model QN npn\n")
    assert main(["bias", str(deck), "--process", str(bad)]) == 2
    err = capsys.readouterr().err.strip()
    assert err == f"{bad}:9: parameter BF must not be negative, got -100"
    assert "\n" not in err and "Traceback" not in err
