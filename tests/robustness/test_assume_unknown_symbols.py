"""``--assume`` statements are used or refused, never dropped without a word.

Finding of the trust review: ``--assume "foo >> bar"`` on a circuit without
those symbols was silently ignored (as was any assumption given without
``--approx``, ``--sensitivity`` or ``--mirror-error``).  Now each is a one-line
error at ``--assume`` naming the unknown symbol and the symbols there are;
a statement about a symbol only one of several derived results has is still
used for that result (the hand-analysis defaults are unchanged).
"""

from __future__ import annotations

import pytest

from symbias.approx import check_symbols
from symbias.errors import AssumptionError
from support.cli_checks import one_error_line, run_cli

MIRROR = ("t\nIref 0 in 100u\nQ1 in in 0 QN\nQ2 out in 0 QN\nRE e 0 RE\nVout out 0 2\nQ3 x in e QN\nVx x 0 1\n"
          ".model QN npn (BF=100 VAF=50)\n")


@pytest.mark.parametrize(("extra", "words"), [
    (["--approx", "--assume", "foo >> bar"], "speaks of bar, which no derived result has"),
    (["--sensitivity", "--assume", "ro_Q2 >> Rload"], "speaks of Rload"),
    (["--assume", "ro_Q2 >> 1"], "used by --approx, --sensitivity and --mirror-error"),
])
def test_an_unused_assumption_is_one_line_at_assume(tmp_path, monkeypatch, capsys, extra, words):
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, ["derive", "deck.cir", "--rout", "Vout", *extra],
                                  {"deck.cir": MIRROR})
    assert status == 2 and out == ""
    error = one_error_line(err)
    assert error["where"] == "--assume" and words in error["cause"], err


def test_a_statement_about_one_of_several_results_is_kept(tmp_path, monkeypatch, capsys):
    argv = ["derive", "deck.cir", "--rout", "Vout", "--rout", "Vx", "--approx", "--assume", "RE >> 1/gm_Q3",
            "--json"]
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, argv, {"deck.cir": MIRROR})
    assert status == 0, err
    assert "RE >> 1/gm_Q3" in out


def test_check_symbols_names_the_first_unknown_symbol():
    with pytest.raises(AssumptionError, match="speaks of foo"):
        check_symbols(["foo*gm >> 1"], ["gm", "ro"])
    assert len(check_symbols(["gm*ro >> 1", "beta in [50, 200]"], ["gm", "ro", "beta"])) == 2
