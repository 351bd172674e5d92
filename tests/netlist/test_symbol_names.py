"""Symbol names are one-to-one with what they stand for: two quantities never merge into one symbol.

Finding of the adversarial run: ``Qa+`` and ``Qa-`` both became ``ro_Qa_`` and
the output resistance of a two-device circuit came out ``(1/2)*ro_Qa_`` with
exit status 0.  Every way two names can meet is an error naming both (common
practice: a symbolic result must not identify two different devices):

* two devices whose names become the same identifier, directly or after
  subcircuit flattening (``X1.Q1_Qb`` and ``X1_Q1.Qb``);
* a netlist symbol that reads as a device symbol (``ro_Q2``, or ``ro`` with
  matched devices);
* with ``--symbolic``, two element names that become the same symbol, an
  element named like a device symbol (a resistor ``ro_Q2``), a netlist symbol
  equal to an element's symbolic value, and a netlist symbol ``s`` (the
  Laplace variable) beside a capacitor.
"""

from __future__ import annotations

import pytest

from symbias.analyses import output_resistance
from symbias.devices.options import SmallSignalOptions
from symbias.errors import CircuitError
from symbias.netlist import parse_netlist
from support.cli_checks import one_error_line, run_cli

MODEL = ".model QN npn (BF=100 VAF=50)\n"

# (id, netlist, derive arguments, line of the error, words the message must hold)
CASES = [
    ("devices-Qa+-and-Qa-", "t\nIref 0 a 1m\nQa+ a a 0 QN\nQa- out a 0 QN\nVout out 0 1\n" + MODEL,
     ["--rout", "Vout"], 4, ("Qa+", "Qa-")),
    ("flattened-names", "t\nIref 0 a 1m\nX1 a out cell1\nX1_Q1 a out2 cell2\nVout out 0 1\nV2 out2 0 1\n"
     ".subckt cell1 a o\nQ1_Qb o a 0 QN\n.ends\n.subckt cell2 a o\nQb o a 0 QN\n.ends\n" + MODEL,
     ["--rout", "Vout"], 4, ("X1.Q1_Qb", "X1_Q1.Qb")),
    ("nested-flattened-names", "t\nIref 0 a 1m\nX1 a out outer\nX1_Xa a out2 inner\nVout out 0 1\nV2 out2 0 1\n"
     ".subckt inner a o\nQ1 o a 0 QN\n.ends\n.subckt outer a o\nXa a o inner\n.ends\n" + MODEL,
     ["--rout", "Vout"], 4, ("X1.Xa.Q1", "X1_Xa.Q1")),
    ("netlist-symbol-reads-as-device-symbol", "t\nIref 0 a 1m\nQ1 a a 0 QN\nQ2 out a 0 QN\nRx out 0 ro_Q2\n"
     "Vout out 0 1\n" + MODEL, ["--rout", "Vout"], 5, ("Rx", "ro_Q2")),
    ("netlist-symbol-reads-as-matched-symbol", "t\nIref 0 a 1m\nQ1 a a 0 QN\nQ2 out a 0 QN\nRx out 0 ro\n"
     "Vout out 0 1\n" + MODEL, ["--rout", "Vout", "--match"], 5, ("Rx", "ro")),
    ("symbolic-Ra+-and-Ra-", "t\nI1 0 a 1m\nRa+ a 0 1k\nRa- a 0 2k\n", ["--rout", "a", "--symbolic"], 4,
     ("Ra+", "Ra-")),
    ("symbolic-resistor-named-like-a-device-symbol", "t\nIref 0 a 1m\nQ1 a a 0 QN\nQ2 out a 0 QN\n"
     "ro_Q2 out 0 1k\nVout out 0 1\n" + MODEL, ["--rout", "Vout", "--symbolic"], 5, ("Q2", "ro_Q2")),
    ("netlist-symbol-equal-to-a-symbolic-value", "t\nI1 0 a 1m\nR1 a 0 1k\nR2 a 0 R1\n",
     ["--rout", "a", "--symbolic"], 4, ("R2", "R1", "--symbolic")),
    ("netlist-symbol-s-beside-a-capacitor", "t\nI1 0 a 1m\nR1 a 0 s\nC1 a 0 1p\n", ["--rout", "a"], 3,
     ("R1", "Laplace")),
]


@pytest.mark.parametrize(("text", "arguments", "line", "words"), [pytest.param(*c[1:], id=c[0]) for c in CASES])
def test_two_quantities_never_share_a_symbol(tmp_path, monkeypatch, capsys, text, arguments, line, words):
    status, out, err, changed = run_cli(tmp_path, monkeypatch, capsys, ["derive", "deck.cir", *arguments, "--json"],
                                        {"deck.cir": text})
    assert status == 2 and out == "" and not changed, err
    error = one_error_line(err)
    assert error["where"] == "deck.cir" and int(error["line"]) == line, err
    for word in words:
        assert word in error["cause"], (word, err)


def test_the_api_raises_the_same_error():
    circuit = parse_netlist(CASES[0][1], "deck.cir")
    with pytest.raises(CircuitError, match=r"Qa\+ and Qa- would share"):
        output_resistance(circuit, "Vout")


def test_matched_devices_still_share_their_symbols_on_purpose():
    circuit = parse_netlist("t\nIref 0 a 1m\nQ1 a a 0 QN\nQ2 out a 0 QN\nVout out 0 1\n" + MODEL)
    formula = output_resistance(circuit, "Vout", SmallSignalOptions(match=True))
    assert str(formula.expr) == "ro"


@pytest.mark.parametrize("names", [("Qa+", "Qa*"), ("Q.1", "Q_1"), ("Q1x", "q1x_")])
def test_distinct_device_names_give_distinct_symbols_or_an_error(names):
    """Injective or refused: never two devices behind one symbol (any pair of names)."""
    first, second = names
    text = f"t\nIref 0 a 1m\n{first} a a 0 QN\n{second} out a 0 QN\nVout out 0 1\n" + MODEL
    circuit = parse_netlist(text, "deck.cir")
    try:
        formula = output_resistance(circuit, "Vout", SmallSignalOptions(symbolic_passives=True))
    except CircuitError as err:
        assert first in err.reason and second in err.reason
        return
    owners = {s.name.split("_", 1)[1] for s in formula.symbols}
    assert len(owners) == 1 and str(formula.expr).startswith("ro_")
