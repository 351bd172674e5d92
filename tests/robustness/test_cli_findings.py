"""Findings of the adversarial run at the command line, each kept as a regression test.

Tracebacks that became one-line errors: ``--plot`` into a missing folder, with a
wrong suffix, into a folder or without a suffix; stdout on a full device;
``--points 99999999999999999999``; a sweep range wider than floating point.
Wrong successes that became errors: ``--match NOPE``; a library identifier
ending in a line break; a source without a value.  Untidy errors made tidy: a
bad library default names its file and line; numpy's floating-point warnings
name the netlist and come once each.
"""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

import pytest

from support.cli_checks import one_error_line, run_cli

ROOT = Path(__file__).resolve().parents[2]
MIRROR = (ROOT / "examples" / "simple_mirror.cir").read_text()
SWEEP = ["sweep", "deck.cir", "--vary", "Vout", "--from", "0", "--to", "5", "--points", "5"]


@pytest.mark.parametrize(("target", "cause"), [("nodir/p.png", "does not exist"), ("p.txt", "must end in"),
                                               ("plots", "is a folder"), ("pfile", "must end in")])
def test_a_plot_that_cannot_be_written_as_asked_is_refused_before_any_work(tmp_path, monkeypatch, capsys, target,
                                                                          cause):
    (tmp_path / "plots").mkdir()
    status, out, err, changed = run_cli(tmp_path, monkeypatch, capsys, [*SWEEP, "--plot", target],
                                        {"deck.cir": MIRROR})
    assert status == 2 and out == "" and not changed
    error = one_error_line(err)
    assert error["where"] == "--plot" and cause in error["cause"]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["deck.cir", "plots"]


@pytest.mark.parametrize("argv", [["--points", "99999999999999999999"], ["--points", "1000000000"]])
def test_huge_point_counts_are_one_line(tmp_path, monkeypatch, capsys, argv):
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, [*SWEEP[:-2], *argv], {"deck.cir": MIRROR})
    assert status == 2 and "MAX_SWEEP_POINTS" in one_error_line(err)["cause"]


def test_a_sweep_range_beyond_floating_point_is_one_line(tmp_path, monkeypatch, capsys):
    argv = ["sweep", "deck.cir", "--vary", "Vout", "--from=-1e308", "--to=1e308", "--points", "5"]
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, argv, {"deck.cir": MIRROR})
    assert status == 2 and one_error_line(err)["where"] == "--to"


@pytest.mark.parametrize("command", [["derive", "examples/simple_mirror.cir"], ["list"]])
def test_stdout_on_a_full_device_is_one_line(command):
    with open("/dev/full", "w") as full:
        done = subprocess.run([sys.executable, "-m", "symbias", *command], cwd=ROOT, stdout=full,
                              stderr=subprocess.PIPE, text=True, timeout=120)
    assert done.returncode == 1
    assert done.stderr.strip() == "symbias: cannot write the output: No space left on device"


def test_match_naming_no_model_or_group_is_an_error(tmp_path, monkeypatch, capsys):
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, ["derive", "deck.cir", "--match", "NOPE"],
                                  {"deck.cir": MIRROR})
    assert status == 2 and "'nope'" in one_error_line(err)["cause"].lower()


def test_a_source_without_a_value_is_an_error(tmp_path, monkeypatch, capsys):
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, ["bias", "deck.cir"],
                                  {"deck.cir": "t\nV1 a 0\nR1 a 0 1k\n"})
    error = one_error_line(err)
    assert status == 2 and (error["where"], error["line"]) == ("deck.cir", "2") and "no value" in error["cause"]


def _library_file(replace: tuple[str, str]) -> str:
    text = (ROOT / "topologies" / "bjt-simple-mirror.toml").read_text().replace('id = "bjt-simple-mirror"',
                                                                             'id = "mine"')
    return text.replace(*replace)


@pytest.mark.parametrize(("replace", "line_of"), [(('id = "mine"', 'id = "mine\\n"'), 'id = '),
                                                  (('default = "100u"', 'default = "1e400"'), 'default = ')])
def test_a_bad_library_file_is_located_at_its_line(tmp_path, monkeypatch, capsys, replace, line_of):
    text = _library_file(replace)
    line = next(i for i, t in enumerate(text.splitlines(), 1) if t.startswith(line_of))
    (tmp_path / "lib").mkdir()
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, ["show", "lib/mine.toml", "--no-derive"],
                                  {"lib/mine.toml": text})
    error = one_error_line(err)
    assert status == 2 and error["where"] == "lib/mine.toml" and int(error["line"]) == line, err


def test_floating_point_warnings_name_the_netlist_once_each(tmp_path, monkeypatch, capsys):
    """A bias point near absolute zero overflows in numpy: each warning is one located line, none repeated."""
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, ["bias", "deck.cir", "--temp=-273.1"],
                                  {"deck.cir": MIRROR})
    warnings = [line for line in err.splitlines() if ": warning: " in line]
    assert warnings, err
    assert all(re.match(r"deck\.cir: warning: \S", line) for line in warnings), err
    assert len(warnings) == len(set(warnings))
    assert len([line for line in err.splitlines() if ": warning: " not in line]) <= 1


def test_a_zero_result_is_its_own_approximation(tmp_path, monkeypatch, capsys):
    """Adversarial-run finding: --approx on a transfer that is exactly zero ended in a numpy traceback."""
    netlist = "t\nVdd n1 0 12\nR2 n2 0 1k\nR4 n4 0 100k\nM1 n1 n4 n4 0 NM W=10u L=1u\nVout n2 0 2.5\n" \
              ".model NM nmos (VTO=0.5 KP=200u LAMBDA=0.05)\n"
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys,
                                  ["derive", "deck.cir", "--gm", "Vout/Vdd", "--approx", "--json"],
                                  {"deck.cir": netlist})
    assert status == 0, err
    import json

    record = json.loads(out)
    assert record["exact"].startswith("(0)/") and record["approx"] == "0"


def test_sensitivities_of_a_four_transistor_cascode_keep_readable_forms_only(tmp_path, monkeypatch, capsys):
    """Adversarial-run finding: sympy factored 60-term sensitivities for minutes; large ones now give values."""
    from symbias.analyses import output_resistance
    from symbias.netlist import read_netlist
    from symbias.sensitivity import SYMBOLIC_RESULT_TERMS, sensitivities, sensitivity

    shown = []
    for deck in ("bjt_cascode_mirror", "mos_cascode_mirror"):
        formula = output_resistance(read_netlist(ROOT / "tests/decks" / f"{deck}.cir"), "Vout")
        for row in sensitivities(formula):
            size = sum(sensitivity(formula, row.symbol).nterms)
            assert (row.expr is None) == (size > SYMBOLIC_RESULT_TERMS), (row.symbol, size)
            shown.append(row.expr is not None)
    assert any(shown) and not all(shown)


def test_a_library_folder_that_is_a_file_says_so(tmp_path, monkeypatch, capsys):
    monkeypatch.setenv("SYMBIAS_LIBRARY", "deck.cir")
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, ["list"], {"deck.cir": MIRROR})
    error = one_error_line(err)
    assert status == 2 and error["where"] == "deck.cir" and "not a folder" in error["cause"]
