"""More bad input at the command line, beyond the validation errors of ``test_core_errors.py``.

Parse faults, wrong model types, bad ports and quantity arguments, a missing
file, and the ``--debug`` switch.  Each case runs ``symbias.cli.main`` in an
empty working folder holding only the netlist and asserts the exit status
(2 bad input), exactly one stderr line ``file:line: cause`` (``file: cause``
when the fault has no line), no traceback, nothing on stdout and no file
created or changed.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from symbias.cli import main
from symbias.errors import SymbiasError

BAD = 2

# (id, netlist text, derive arguments, line or None, cause pattern)
CASES = [
    ("model-of-the-wrong-type", "wrong model type\nI1 0 in 1m\nQ1 in in 0 NM\n.model NM nmos\n",
     ["--rout", "in"], 3, r"Q1: model 'NM' is of type nmos, expected npn or pnp"),
    ("unknown-element-letter", "unknown letter\nI1 0 a 1m\nZ1 a 0 1k\n",
     ["--rout", "a"], 3, r"unknown element letter 'Z'"),
    ("unknown-function", "unknown function\nI1 0 a 1m\nR1 a 0 {system(2)}\n",
     ["--rout", "a"], 3, r"unknown function 'system'"),
    ("unclosed-expression", "unclosed\nI1 0 a 1m\nR1 a 0 {2*RE\n",
     ["--rout", "a"], 3, r"unclosed expression"),
    ("continuation-with-nothing-to-continue", "continuation first\n+ R1 a 0 1k\nI1 0 a 1m\n",
     ["--rout", "a"], 2, r"continuation"),
    ("subckt-without-ends", "open subcircuit\n.subckt cell a b\nR1 a b 1k\nI1 0 a 1m\n",
     ["--rout", "a"], 2, r"has no \.ends"),
    ("unknown-control-card", "unknown card\nI1 0 a 1m\nR1 a 0 1k\n.frobnicate 3\n",
     ["--rout", "a"], 4, r"unknown control card '\.frobnicate'"),
    ("unknown-port", "unknown port\nI1 0 a 1m\nR1 a 0 1k\n",
     ["--rout", "nowhere"], None, r"no element or node named 'nowhere'"),
    ("gain-without-a-pair", "gain needs OUT/IN\nI1 0 a 1m\nR1 a 0 1k\nVout a 0 0\n",
     ["--gain", "Vout"], None, r"--gain expects OUT/IN"),
    ("gain-output-not-a-voltage-source", "gain output must be a V source\nI1 0 a 1m\nR1 a 0 1k\n",
     ["--gain", "R1/I1"], 3, r"output R1 must be a voltage source"),
    ("gain-input-not-a-current-source", "gain input must be an I source\nV1 a 0 1\nR1 a b 1k\nVout b 0 0\n",
     ["--gain", "Vout/V1"], 2, r"input V1 must be a current source"),
]


def _snapshot(folder: Path) -> dict[str, tuple[int, int]]:
    return {str(p.relative_to(folder)): (p.stat().st_size, p.stat().st_mtime_ns) for p in folder.rglob("*")}


def _derive(folder: Path, monkeypatch, capsys, text: str, arguments: list[str], *extra: str):
    (folder / "deck.cir").write_text(text)
    monkeypatch.chdir(folder)
    before = _snapshot(folder)
    code = main([*extra, "derive", "deck.cir", *arguments])
    out, err = capsys.readouterr()
    assert _snapshot(folder) == before, "the command wrote or changed a file"
    return code, out, err


@pytest.mark.parametrize(("text", "arguments", "line", "cause"),
                         [pytest.param(*case[1:], id=case[0]) for case in CASES])
def test_bad_input_is_one_line_with_its_location(tmp_path, monkeypatch, capsys, text, arguments, line, cause):
    code, out, err = _derive(tmp_path, monkeypatch, capsys, text, arguments)
    assert code == BAD, err
    assert out == ""
    assert "Traceback" not in err
    lines = err.splitlines()
    assert len(lines) == 1, err
    where = "deck.cir" if line is None else f"deck.cir:{line}"
    assert re.fullmatch(rf"{re.escape(where)}: .*{cause}.*", lines[0]), lines[0]


def test_debug_raises_instead_of_printing_one_line(tmp_path, monkeypatch, capsys):
    text = CASES[0][1]
    with pytest.raises(SymbiasError):
        _derive(tmp_path, monkeypatch, capsys, text, ["--rout", "in"], "--debug")


def test_a_missing_file_is_one_line(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    code = main(["derive", "absent.cir", "--rout", "a"])
    out, err = capsys.readouterr()
    assert code == BAD and out == ""
    assert len(err.splitlines()) == 1 and err.startswith("absent.cir: "), err
    assert list(tmp_path.iterdir()) == []
