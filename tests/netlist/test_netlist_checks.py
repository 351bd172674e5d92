"""Netlists that used to be read wrongly with exit status 0 are now one-line errors at their line.

Findings of the adversarial run (each a "wrong success": invalid input taken
as valid and a result printed): ``.param a={a+1}`` gave Rout ``a+1``;
``.param 1abc=3`` was accepted; a subcircuit defined twice, ``.match`` on
resistors and ``m=0`` on a device passed ``derive`` (``bias`` refused m=0).
Also checked: a parameter used before it is defined, a parameter or a
matched group defined twice, a device in two matched groups, an instance
parameter its subcircuit does not declare, digits outside ASCII (a number is
ASCII digits only), a stray ``.endl``, and ``inf`` or ``nan`` as a value
(they read as names and became symbols).
"""

from __future__ import annotations

import pytest

from symbias.errors import CircuitError, NetlistError, SymbiasError
from symbias.netlist import parse_netlist
from support.cli_checks import one_error_line, run_cli

BASE = "t\nI1 0 x 1m\n"
BJT = ".model QN npn (BF=100 VAF=50)\n"

# (id, netlist, error class, line, words of the cause)
CASES = [
    ("param-refers-to-itself", "t\n.param a={a+1}\nI1 0 x 1m\nR1 x 0 a\n", NetlistError, 2, ".param a refers to itself"),
    ("param-cycle", "t\n.param a={b} b={a}\nI1 0 x 1m\nR1 x 0 a\n", NetlistError, 2, "refers to itself"),
    ("param-used-before-defined", "t\n.param a={2*b}\n.param b=3\nI1 0 x 1m\nR1 x 0 a\n", NetlistError, 2,
     "uses b, defined after it"),
    ("param-name-starting-with-a-digit", "t\n.param 1abc=3\nI1 0 x 1m\nR1 x 0 1abc\n", NetlistError, 2,
     "is not a name"),
    ("param-defined-twice", "t\n.param a=1\n.param a=2\nI1 0 x 1m\nR1 x 0 a\n", NetlistError, 3,
     "defined twice (first on line 2)"),
    ("subckt-defined-twice", BASE + "R1 x 0 1k\n.subckt c a b\nR1 a b 1\n.ends\n.subckt c a b\nR1 a b 2\n.ends\n"
     "X1 x 0 c\n", NetlistError, 7, "defined twice (first on line 4)"),
    ("instance-parameter-not-declared", BASE + ".subckt c a b R=1k\nR1 a b {R}\n.ends\nX1 x 0 c RR=5\n",
     NetlistError, 6, "has no parameter 'rr'"),
    ("match-on-resistors", BASE + "R1 x 0 1k\nR2 x 0 2k\n.match G R1 R2\n", CircuitError, 5,
     "only transistors and diodes are matched"),
    ("device-in-two-groups", BASE + "Q1 x x 0 QN\nQ2 y x 0 QN\nV1 y 0 1\n.match A Q1 Q2\n.match B Q2\n" + BJT,
     CircuitError, 7, "Q2 is already in group A"),
    ("group-declared-twice", BASE + "Q1 x x 0 QN\n.match A Q1\n.match A Q1\n" + BJT, NetlistError, 5,
     "declared twice"),
    ("device-multiplier-zero", BASE + "Q1 x x 0 QN m=0\n" + BJT, NetlistError, 3, "m must be positive, got 0"),
    ("device-area-negative", BASE + "Q1 x x 0 QN -2\n" + BJT, NetlistError, 3, "area must be positive"),
    ("mos-length-zero", BASE + "M1 x x 0 0 NM W=10u L=0\n.model NM nmos\n", NetlistError, 3, "l must be positive"),
    ("arabic-indic-digits", BASE + "R1 x 0 \u0661\u0662\n", NetlistError, 3, "expected a number"),
    ("stray-endl", BASE + "R1 x 0 1k\n.endl\n", NetlistError, 4, "unknown control card '.endl'"),
    ("value-inf", BASE + "R1 x 0 inf\n", NetlistError, 3, "'inf' is not a value"),
    ("value-nan-in-an-expression", BASE + "R1 x 0 {1/NaN}\n", NetlistError, 3, "'NaN' is not a value"),
]


@pytest.mark.parametrize(("text", "error", "line", "words"), [pytest.param(*c[1:], id=c[0]) for c in CASES])
def test_the_api_refuses_it_at_its_line(text, error, line, words):
    with pytest.raises(SymbiasError) as caught:
        parse_netlist(text, "deck.cir")
    assert isinstance(caught.value, error), caught.value
    assert (caught.value.path, caught.value.line) == ("deck.cir", line), str(caught.value)
    assert words in caught.value.reason


@pytest.mark.parametrize("command", [["derive", "--rout", "x"], ["bias"]])
@pytest.mark.parametrize(("text", "line"), [pytest.param(c[1], c[3], id=c[0]) for c in CASES])
def test_no_command_gives_a_result_for_it(tmp_path, monkeypatch, capsys, command, text, line):
    argv = [command[0], "deck.cir", *command[1:]]
    status, out, err, changed = run_cli(tmp_path, monkeypatch, capsys, argv, {"deck.cir": text})
    assert status == 2 and out == "" and not changed, err
    error = one_error_line(err)
    assert (error["where"], int(error["line"])) == ("deck.cir", line), err


def test_a_symbolic_multiplier_is_still_accepted():
    circuit = parse_netlist(BASE + "Q1 x x 0 QN m={M}\n" + BJT)
    assert str(circuit.element("Q1").params["m"]) == "M"
