"""The adversarial run: a 1,500-case slice of the 10,000-case generator ends with no finding, and the judge bites.

The generator and the judge live in ``tests/support`` (shared with
``bench/fuzz_netlists.py``, which runs 10,000 cases and writes
``bench/results-fuzz.md``).  Here: the slice, run in a fresh interpreter so
that each case's memory is measured from a process holding symbias only;
checks that the judge classifies a crash, a hang, a traceback, an untidy
error, a wrong success and file damage as findings; and fixed regression
cases for hostile values and names the earlier runs found.
"""

from __future__ import annotations

import os
import re
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from support.harness import BAD_KINDS, Case, run_case

ROOT = Path(__file__).resolve().parents[2]
#: Cases of the slice run in the suite (the bench runs 10,000).
SLICE = 1500


def test_a_slice_of_the_adversarial_run_ends_without_a_finding(tmp_path):
    report = tmp_path / "report.md"
    done = subprocess.run([sys.executable, "-m", "support.adversarial", "--cases", str(SLICE), "--seed", "7",
                           "--report", str(report)], cwd=ROOT / "tests", capture_output=True, text=True,
                          timeout=1200, env={**os.environ, "COLUMNS": "100"})
    text = report.read_text()
    assert done.returncode == 0, text[:6000]
    counts = dict(re.findall(r"^\| (\w[\w ]*) \| (\d+) \|$", text, flags=re.M))
    assert int(counts["success"]) > 100 and int(counts["error"]) > 500, counts
    assert all(int(counts[kind]) == 0 for kind in BAD_KINDS), counts


# -- the judge bites -----------------------------------------------------------------------------
def _crash(argv):
    os.kill(os.getpid(), signal.SIGSEGV)


def _hang(argv):
    time.sleep(30)


def _raise(argv):
    raise RuntimeError("escaped")


def _two_lines(argv):
    print("deck.cir:3: first", file=sys.stderr)
    print("and a second line", file=sys.stderr)
    return 2


def _succeed(argv):
    print("a result")
    return 0


def _leave_a_temporary(argv):
    Path(".deck.cir.x.part").write_text("half")
    return 2


def _change_the_netlist(argv):
    Path("deck.cir").write_text("changed")
    print("deck.cir: error", file=sys.stderr)
    return 2


def _no_place(argv):
    print("something went wrong", file=sys.stderr)
    return 2


@pytest.mark.parametrize(("entry", "invalid", "kind"), [
    (_crash, "", "crash"), (_hang, "", "hang"), (_raise, "", "traceback"), (_two_lines, "", "untidy error"),
    (_no_place, "", "untidy error"), (_succeed, "made invalid on purpose", "wrong success"),
    (_leave_a_temporary, "", "file damage"), (_change_the_netlist, "", "file damage"), (_succeed, "", "success"),
])
def test_the_judge_classifies_each_kind_of_finding(entry, invalid, kind):
    case = Case(0, "judge", ("derive", "deck.cir"), {"deck.cir": "t\nR1 a 0 1k\n"}, invalid=invalid)
    outcome = run_case(case, limit=2.0, entry=entry)
    assert outcome.kind == kind, (outcome.kind, outcome.detail)


def test_the_judge_measures_the_memory_of_the_case_alone():
    def allocate(argv):
        block = bytearray(300 * 2**20)
        print(len(block))
        return 0

    outcome = run_case(Case(0, "judge", ("x",)), entry=allocate)
    assert outcome.kind == "success" and outcome.peak_kib > 300 * 1024


# -- regression cases the earlier runs found -----------------------------------------------------
#: Hostile values: a value that is no finite real number in range is bad input, exit status 2.
HOSTILE_VALUES = {
    "5000-digit number": "9" * 5000,
    "number beyond any float": "1e999999",
    "tower of powers": "{2**2**2**2**2**2}",
    "power of a huge number": "{10**10**10}",
    "square root of a negative number": "{sqrt(-1)}",
    "logarithm of zero": "{log(0)}",
    "logarithm of a negative number": "{log(-1)}",
    "exponential beyond any float": "{exp(1e6)}",
}

#: Names outside ASCII (pasted decks): a result or a clean error, never a traceback.
FOREIGN_NAMES = {
    "non-ascii device name": "t\nI1 0 a 1m\nQ\u00b5 a a 0 QN\nR1 a 0 1k\n.model QN npn\n",
    "non-ascii passive name made symbolic": "t\nI1 0 a 1m\nR\u03a9 a 0 1k\nR2 a 0 RB\n",
    "a line of parentheses only": "t\nI1 0 a 1m\nR1 a 0 1k\n( )\n",
}


@pytest.mark.parametrize("value", list(HOSTILE_VALUES.values()), ids=list(HOSTILE_VALUES))
def test_hostile_values_are_bad_input(value):
    case = Case(0, "regression", ("derive", "deck.cir", "--rout", "a", "--json"),
                {"deck.cir": f"t\nI1 0 a 1\nR1 a 0 {value}\nR2 a 0 1k\n"}, invalid="hostile value")
    outcome = run_case(case)
    assert outcome.kind == "error" and outcome.status == 2, (outcome.kind, outcome.detail)
    assert re.match(r"deck\.cir:3: \S", outcome.message), outcome.message


@pytest.mark.parametrize("text", list(FOREIGN_NAMES.values()), ids=list(FOREIGN_NAMES))
def test_foreign_names_end_cleanly(text):
    for arguments in (["--rout", "a", "--json"], ["--rout", "a", "--symbolic"], ["--rout", "a", "--latex"]):
        outcome = run_case(Case(0, "regression", ("derive", "deck.cir", *arguments), {"deck.cir": text}))
        assert outcome.kind in ("success", "error"), (outcome.kind, outcome.detail, arguments)
