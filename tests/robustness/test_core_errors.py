"""Bad input: one test per validation error, through the Python API and the command line.

Each case is a small invented netlist with one fault.  Through the API it must
raise the right :class:`~symbias.errors.SymbiasError` subclass carrying the
file and the line of the fault; through ``symbias.cli.main`` (in process, in an
empty working folder) it must return exit status 2 (bad input) or 1 (analysis
failed), print exactly one line ``file:line: cause`` on stderr with no
traceback, print nothing on stdout and leave the folder unchanged.  One
subprocess run per exit status checks the same at the level of the real
process.  (``tests/robustness/test_cli_bad_input.py`` runs a wider set of cases as
subprocesses.)
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
import warnings
from pathlib import Path

import pytest

from symbias.analyses import output_resistance
from symbias.errors import CircuitWarning
from symbias.cli import main
from symbias.errors import AnalysisError, CircuitError, NetlistError, SymbiasError
from symbias.netlist import parse_netlist

# (id, netlist, derive arguments, error class, exit status, line or None, cause)
CASES = [
    ("no-ground", "Kite bias: no ground\nI1 a b 1m\nR1 a b 1k\n",
     ["--rout", "R1"], CircuitError, 2, 2, r"no ground node"),
    ("part-not-connected-to-ground", "Kite bias: an island\nI1 0 a 1m\nR1 a 0 1k\nR2 x y 1k\nR3 y x 2k\n",
     ["--rout", "a"], CircuitError, 2, 4, r"node\(s\) x, y have no connection to ground"),
    ("voltage-source-loop", "Kite bias: two sources in parallel\nV1 a 0 1\nR1 a 0 1k\nV2 a 0 2\n",
     ["--rout", "R1"], CircuitError, 2, 4, r"V2 closes a loop of voltage sources"),
    ("inductor-in-the-source-loop", "Kite bias: a choke across a source\nV1 a 0 1\nR1 a 0 1k\nL1 a 0 1u\n",
     ["--rout", "R1"], CircuitError, 2, 4, r"L1 closes a loop"),
    ("current-source-cut-set", "Kite bias: node fed by current sources only\nI1 0 a 1m\nI2 a 0 2m\n"
     "R1 b 0 1k\nV1 b 0 1\n", ["--rout", "R1"], CircuitError, 2, 2, r"cut set of current sources"),
    ("duplicate-element-name", "Kite bias: R1 twice\nI1 0 a 1m\nR1 a 0 1k\nr1 a 0 2k\n",
     ["--rout", "a"], CircuitError, 2, 4, r"duplicate element name 'r1' \(first on line 3\)"),
    ("undefined-model", "Kite bias: no such model\nI1 0 in 1m\nQ1 in in 0 QX\nVout in 0 1\n.model QN npn\n",
     ["--rout", "in"], NetlistError, 2, 3, r"Q1: undefined model 'QX'"),
    ("wrong-terminal-count-r", "Kite bias: a resistor with one node\nI1 0 a 1m\nR1 a 0\n",
     ["--rout", "a"], NetlistError, 2, 3, r"R1: expected 'R1 node1 node2 value'"),
    ("wrong-terminal-count-q", "Kite bias: a two-terminal BJT\nI1 0 a 1m\nR1 a 0 1k\nQ1 a 0 QN\n.model QN npn\n",
     ["--rout", "a"], NetlistError, 2, 4, r"Q1: expected"),
    ("wrong-terminal-count-m", "Kite bias: a three-terminal MOS\nI1 0 a 1m\nR1 a 0 1k\nM1 a a 0 NM\n"
     ".model NM nmos\n", ["--rout", "a"], NetlistError, 2, 4, r"M1: expected"),
    ("controlling-source-missing", "Kite bias: F without its sense source\nI1 0 a 1m\nR1 a 0 1k\n"
     "F1 b 0 Vx 2\nR2 b 0 1k\n", ["--rout", "a"], CircuitError, 2, 4,
     r"F1: controlling voltage source 'Vx' does not exist"),
    ("malformed-number", "Kite bias: two decimal points\nI1 0 a 1m\nR1 a 0 1.2.3k\n",
     ["--rout", "a"], NetlistError, 2, 3, r"expected a number, a name or \{expression\}"),
    ("truncated-expression", "Kite bias: an expression cut short\nI1 0 a 1m\n* a comment line\nR1 a 0 {2**}\n",
     ["--rout", "a"], NetlistError, 2, 4, r"ends too early"),
    ("division-by-zero", "Kite bias: divide by zero\nI1 0 a 1m\nR1 a 0 {RE/(1-1)}\n",
     ["--rout", "a"], NetlistError, 2, 3, r"division by zero"),
    ("continued-expression", "Kite bias: fault on a continued line\nI1 0 a 1m\nR1 a 0\n+ {RE+*2}\n",
     ["--rout", "a"], NetlistError, 2, 3, r"unexpected"),
    ("code-injection", "Kite bias: code in a value\nI1 0 a 1m\n"
     "R1 a 0 {__import__('os').system('touch pwned')}\n", ["--rout", "a"], NetlistError, 2, 3,
     r"unexpected character"),
    ("attribute-access", "Kite bias: attribute access\nI1 0 a 1m\nR1 a 0 {RE.__class__}\n",
     ["--rout", "a"], NetlistError, 2, 3, r"unexpected character '\.'|expression"),
    ("floating-at-small-signal", "Kite bias: gate node floats once sources are zeroed\nVdd d 0 1\n"
     "M1 d g 0 0 NM\nR1 g x 1k\nI1 0 x 1u\n.model NM nmos\n", ["--rout", "d"], AnalysisError, 1, 3,
     r"the network is singular"),
]

IDS = [case[0] for case in CASES]


def _snapshot(folder: Path) -> dict[str, tuple[int, int]]:
    return {str(p.relative_to(folder)): (p.stat().st_size, p.stat().st_mtime_ns) for p in folder.rglob("*")}


@pytest.mark.parametrize(("text", "arguments", "error", "status", "line", "cause"),
                         [pytest.param(*case[1:], id=case[0]) for case in CASES])
def test_api_raises_the_right_error_with_its_line(text, arguments, error, status, line, cause) -> None:
    with pytest.raises(SymbiasError) as caught:
        circuit = parse_netlist(text, "deck.cir")
        output_resistance(circuit, arguments[1])
    assert isinstance(caught.value, error), type(caught.value)
    assert caught.value.path == "deck.cir"
    assert caught.value.line == line
    assert re.search(cause, caught.value.reason), caught.value.reason
    assert "\n" not in str(caught.value)


@pytest.mark.parametrize(("text", "arguments", "error", "status", "line", "cause"),
                         [pytest.param(*case[1:], id=case[0]) for case in CASES])
def test_cli_gives_one_line_and_the_exit_status(tmp_path, monkeypatch, capsys, text, arguments, error, status,
                                                line, cause) -> None:
    (tmp_path / "deck.cir").write_text(text)
    monkeypatch.chdir(tmp_path)
    before = _snapshot(tmp_path)
    code = main(["derive", "deck.cir", *arguments, "--json"])
    out, err = capsys.readouterr()
    assert code == status, err
    assert out == ""
    assert "Traceback" not in err
    lines = err.splitlines()
    assert len(lines) == 1, err
    where = "deck.cir" if line is None else f"deck.cir:{line}"
    assert lines[0].startswith(f"{where}: "), lines[0]
    assert re.search(cause, lines[0]), lines[0]
    assert _snapshot(tmp_path) == before, "a file was written or changed"


def test_single_connection_node_warns_and_still_derives(tmp_path, monkeypatch, capsys) -> None:
    text = "Kite bias: a dangling stub\nI1 0 a 1m\nR1 a 0 1k\nR2 a stub 1k\n"
    with pytest.warns(CircuitWarning, match=r"deck.cir:4: node 'stub' has a single connection \(R2\)"):
        circuit = parse_netlist(text, "deck.cir")
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # the analysis itself must not warn again
        assert output_resistance(circuit, "a").evaluate({}) == 1000
    (tmp_path / "deck.cir").write_text(text)
    monkeypatch.chdir(tmp_path)
    before = _snapshot(tmp_path)
    assert main(["derive", "deck.cir", "--rout", "a", "--json"]) == 0
    out, err = capsys.readouterr()
    assert err.splitlines() == ["deck.cir:4: warning: node 'stub' has a single connection (R2)"]
    assert '"quantity": "output_resistance"' in out
    assert _snapshot(tmp_path) == before


def test_injected_code_never_runs(tmp_path, monkeypatch) -> None:
    monkeypatch.chdir(tmp_path)
    for text in (
        "t\nI1 0 a 1m\nR1 a 0 {__import__('os').system('touch pwned')}\n",
        "t\n.param x={__import__('os').system('touch pwned')}\nI1 0 a 1m\nR1 a 0 x\n",
        "t\nI1 0 a 1m\nR1 a 0 {exec('open(\"pwned\",\"w\")')}\n",
        "t\nI1 0 a 1m\nR1 a 0 {lambda: 0}\n",
    ):
        with pytest.raises(NetlistError):
            parse_netlist(text, "deck.cir")
    assert not (tmp_path / "pwned").exists()


@pytest.mark.parametrize("case", ["code-injection", "floating-at-small-signal"])
def test_real_process_exit_status_and_no_traceback(tmp_path, case) -> None:
    _, text, arguments, _, status, line, cause = CASES[IDS.index(case)]
    (tmp_path / "deck.cir").write_text(text)
    before = _snapshot(tmp_path)
    done = subprocess.run(
        [sys.executable, "-m", "symbias", "derive", "deck.cir", *arguments],
        cwd=tmp_path, capture_output=True, text=True, timeout=120,
        env={**os.environ, "PYTHONDONTWRITEBYTECODE": "1"},
    )
    assert done.returncode == status
    assert done.stdout == "" and "Traceback" not in done.stderr
    assert len(done.stderr.splitlines()) == 1 and re.search(cause, done.stderr)
    assert _snapshot(tmp_path) == before
    assert not (tmp_path / "pwned").exists()
