"""Ports held by a source and open ports: the right number, said plainly, and the run goes on.

References: common practice (a node held by an ideal voltage source has zero
small-signal resistance, so the resistance a designer asks for at such a node
is the one seen with the source removed; a port with no small-signal path
across it has an infinite resistance); the simple mirror's output resistance
ro2 and, with ro omitted, an infinite one (Gray, Hurst, Lewis and Meyer,
Analysis and Design of Analog Integrated Circuits, 5th ed., ch. 4).
"""

import json

import sympy

from symbias.analyses import output_resistance
from symbias.cli import main
from symbias.devices.options import SmallSignalOptions
from symbias.errors import InfiniteResultError
from symbias.netlist import parse_netlist
from symbias.pipeline import DeriveRequest, Quantity, derive, target_from_text

MIRROR = """held-port mirror
VCC vcc 0 5
Iref vcc in 20u
Q1 in in 0 QN
Q2 out in 0 QN
Vout out 0 2.5
.model QN npn
"""


def test_a_node_held_by_a_source_is_seen_with_the_source_removed():
    formula = output_resistance(parse_netlist(MIRROR), "out")
    assert formula.expr == sympy.Symbol("ro_Q2")
    assert "Vout removed" in formula.label
    assert any("Vout removed" in note for note in formula.assumptions)


def test_a_chain_of_sources_holding_the_port_is_named_and_gives_zero():
    text = MIRROR.replace("Vout out 0 2.5", "Vout out x 1\nVx x 0 1.5")
    formula = output_resistance(parse_netlist(text), "out")
    assert formula.expr == 0
    assert any("Vout" in note and "Vx" in note for note in formula.assumptions)


def test_an_open_port_is_infinite_and_the_other_quantities_still_come():
    target = target_from_text(MIRROR, "mirror.cir")
    request = DeriveRequest((Quantity("output_resistance", ("Vout",)), Quantity("current_gain", ("Vout", "Iref"))),
                            options=SmallSignalOptions(ro=False))
    rout, gain = derive(target, request).results
    assert rout.formula is None and rout.infinite and "out" in rout.infinite
    assert gain.formula is not None and gain.formula.nterms[0] >= 1


def test_api_raises_infinite_result_error_for_an_open_port():
    try:
        output_resistance(parse_netlist(MIRROR), "Vout", SmallSignalOptions(ro=False))
    except InfiniteResultError as err:
        assert "infinite" in err.reason
    else:
        raise AssertionError("expected InfiniteResultError")


def test_cli_reports_infinite_and_exits_zero(tmp_path, capsys):
    deck = tmp_path / "mirror.cir"
    deck.write_text(MIRROR)
    assert main(["derive", str(deck), "--no-ro", "--json"]) == 0
    record = json.loads(capsys.readouterr().out)
    rout, gain = record["results"]
    assert rout["infinite"] is True and rout["exact"] == "oo"
    assert sympy.parse_expr(rout["exact"]) == sympy.oo
    assert gain["quantity"] == "current_gain"
