"""Malformed and random netlists end in a result or a clean one-line error, never a traceback or a hang.

A slice of the generator of ``bench/fuzz_netlists.py`` (whose full run feeds
10,000 netlists) runs here, plus the hostile inputs the fuzz run found, each
as a fixed regression case.
"""

from __future__ import annotations

import re
import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "bench"))

import fuzz_netlists  # noqa: E402

#: Cases of the slice run in the suite (the bench runs 10,000).
SLICE = 1500


def test_a_slice_of_the_fuzz_run_ends_cleanly():
    results = fuzz_netlists.fuzz(SLICE, seed=7, limit=20.0)
    findings = [r for r in results if r.problem]
    assert not findings, fuzz_netlists.summary(findings)
    statuses = {r.status for r in results}
    assert {0, 2} <= statuses  # the slice reaches both results and errors


#: Hostile values the fuzz run found (each used to end in a traceback, a hang or a silent
#: misreading): a value that is no finite real number in range is bad input, exit status 2.
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
def test_hostile_values_are_bad_input(tmp_path, value):
    text = f"t\nI1 0 a 1\nR1 a 0 {value}\nR2 a 0 1k\n"
    outcome = fuzz_netlists.run_case(0, text, ["--rout", "a", "--json"], tmp_path, limit=20.0)
    assert outcome.problem is None, outcome.problem
    assert outcome.status == 2 and re.match(r"\S*fuzz\.cir:3: \S", outcome.message), outcome.message


@pytest.mark.parametrize("text", list(FOREIGN_NAMES.values()), ids=list(FOREIGN_NAMES))
def test_foreign_names_end_cleanly(tmp_path, text):
    for arguments in (["--rout", "a", "--json"], ["--rout", "a", "--symbolic"], ["--rout", "a", "--latex"]):
        outcome = fuzz_netlists.run_case(0, text, arguments, tmp_path, limit=20.0)
        assert outcome.problem is None, (outcome.problem, arguments)
