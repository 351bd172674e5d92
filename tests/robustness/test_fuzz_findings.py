"""Regression tests for findings of the 10,000-case adversarial run (bench/results-fuzz.md).

Each was a traceback or a crash on input the tool must answer cleanly: an answer or one error
line naming the file, a non-zero exit, nothing written.
"""

from __future__ import annotations

from support.cli_checks import one_error_line, run_cli

MARKUP_NAMES = """[bold]title[/] [/x]
* invented product
VCC vcc 0 5
Rref[/y] vcc in 4.3k
Q1[/y] in in 0 QN
Q2[/y] out in e2 QN
R2[/y] e2 0 11.5k
Vout out 0 2.5
.model QN npn (IS=1e-16 BF=120 VAF=60)
.end
"""

ZERO_GAIN = """gate tied to the drive: no gain to n2
Vdd n1 0 5
R2 n2 0 1k
R3 n3 n2 4.7k
R4 n4 n2 {RX}
C0 0 n4 1p
M3 n3 n1 n2 0 PM W=10u L=1u
.model PM pmos (VTO=-0.5 KP=80u LAMBDA=0.05)
"""

CASCODE = """npn cascode current mirror
Iref 0 x 100u
Q3 x x y QN
Q1 y y 0 QN
Q2 z y 0 QN
Q4 out x z QN
Vout out 0 2.5
.model QN npn (IS=1e-16 BF=100 BR=1 VAF=50)
.end
"""


def test_element_names_that_look_like_markup_are_printed_as_written(tmp_path, monkeypatch, capsys):
    for argv in (["bias", "deck.cir"], ["bias", "deck.cir", "--all"], ["noise", "deck.cir"]):
        status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, argv, {"deck.cir": MARKUP_NAMES})
        assert status == 0, err
        assert "Q2[/y]" in out


def test_approximating_an_exactly_zero_result_is_one_error_line(tmp_path, monkeypatch, capsys):
    status, _, err, changed = run_cli(tmp_path, monkeypatch, capsys, ["derive", "deck.cir", "--vgain", "n2/Vdd",
                                                                      "--approx"], {"deck.cir": ZERO_GAIN})
    assert status != 0 and not changed
    assert "exactly 0" in one_error_line(err).group("cause")


def test_noise_at_the_full_level_stops_at_the_term_limit_before_expanding(tmp_path, monkeypatch, capsys):
    # was SIGABRT inside FLINT at about 1.3 GB: the noise transfers skipped the solve-size checks
    status, _, err, changed = run_cli(tmp_path, monkeypatch, capsys, ["noise", "deck.cir", "--level", "full"],
                                      {"deck.cir": CASCODE})
    assert status != 0 and not changed
    match = one_error_line(err)
    assert match.group("where").endswith("deck.cir") and "MAX_TERM_ESTIMATE" in match.group("cause")


LONG_TITLE = "\u202etitle with a right-to-left mark " + "x" * 1500 + """
* invented product
VCC vcc 0 5
Iref vcc in 20u
Q1 in in 0 QN
Q2 out in 0 QN
Vout out 0 2.5
.model QN npn (IS=1e-16 BF=120 VAF=60)
.end
"""


def test_a_very_long_title_line_prints_at_once(tmp_path, monkeypatch, capsys):
    # rich's automatic highlighter backtracked for minutes on such a line (a 20 s timeout in the run)
    import time

    start = time.perf_counter()
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, ["frequency", "deck.cir", "--points", "3"],
                                  {"deck.cir": LONG_TITLE})
    assert status == 0, err
    assert "x" * 50 in out
    assert time.perf_counter() - start < 15  # seconds, against minutes: not a speed target
