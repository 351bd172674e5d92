"""A VCCS that senses its own terminals is a conductance, not a cut set of current sources.

Finding of the trust review: ``G1 a b a b 1m`` was refused as "a cut set of
current sources", while ngspice (Debian's package, the reference of the DC
checks) solves the same deck: the element draws g*v(a,b) from a to b, i.e. it
is a conductance g (a negative one when the control pair is reversed).  The
small-signal result is checked against ngspice's operating point of the same
deck driven by a 1 mA source: Rout = v(a) / 1 mA.
"""

from __future__ import annotations

import pytest

from symbias.analyses import output_resistance
from symbias.circuit import validate
from symbias.simulator.ngspice import run_reference, simulator
from symbias.errors import CircuitError
from symbias.netlist import parse_netlist

DECKS = {
    "alone": "t\nI1 0 a 1m\nG1 a 0 a 0 1m\n",
    "reversed-beside-a-resistor": "t\nI1 0 a 1m\nR1 a 0 500\nG1 a 0 0 a 1m\n",
    "floating-pair": "t\nI1 0 a 1m\nG1 a b b a 2m\nR2 b 0 1k\n",
}


@pytest.mark.parametrize("text", DECKS.values(), ids=DECKS)
def test_it_passes_validation(text):
    assert validate(parse_netlist(text, check=False)) == ()


@pytest.mark.skipif(simulator() is None, reason="ngspice is not on PATH")
@pytest.mark.parametrize("text", DECKS.values(), ids=DECKS)
def test_its_output_resistance_matches_ngspice(text):
    volts = run_reference(text + ".control\n{control}\n.endc\n.end\n", "op", ["v(a)"])[0, 1]
    formula = output_resistance(parse_netlist(text), "a")
    assert float(formula.evaluate({})) == pytest.approx(volts / 1e-3, rel=1e-9)


def test_a_vccs_sensing_other_nodes_still_makes_a_cut_set():
    with pytest.raises(CircuitError, match="cut set of current sources"):
        parse_netlist("t\nV1 c 0 1\nR1 c 0 1k\nI1 0 a 1m\nG1 a 0 c 0 1m\n", "deck.cir")
