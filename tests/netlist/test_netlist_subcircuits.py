"""Subcircuits flatten to the same circuit as the hand-written flat netlist.

Reference: the flat netlist written out by hand (common practice: a SPICE
subcircuit is textual substitution with local node and element names).
"""

import sympy

from symbias.analyses import current_gain, output_resistance
from symbias.netlist import parse_netlist

NESTED = """Petrel PT-3 bias cell: mirror built from a subcircuit
.subckt leg top bottom params: RE=1k
Q1 top top e QN
R1 e bottom {RE}
.ends
.subckt pair in out
Xa in 0 leg RE=RA
Q2 out in e2 QN
R2 e2 0 RB
.ends
Iref 0 in 1m
X1 in out pair
Vout out 0 2
.model QN npn
"""

FLAT = """Petrel PT-3 bias cell: flat
Iref 0 in 1m
Q1 in in e QN
R1 e 0 RA
Q2 out in e2 QN
R2 e2 0 RB
Vout out 0 2
.model QN npn
"""


def test_flattened_names_and_nodes():
    circuit = parse_netlist(NESTED)
    names = [e.name for e in circuit.elements]
    assert names == ["Iref", "X1.Xa.Q1", "X1.Xa.R1", "X1.Q2", "X1.R2", "Vout"]
    assert circuit.element("X1.Xa.R1").nodes == ("x1.xa.e", "0")
    assert str(circuit.element("X1.Xa.R1").value) == "RA"


def test_nested_subcircuit_gives_the_flat_results():
    nested, flat = parse_netlist(NESTED), parse_netlist(FLAT)
    rename = {sympy.Symbol(f"{p}_X1_Xa_Q1"): sympy.Symbol(f"{p}_Q1") for p in ("gm", "rpi", "ro")}
    rename.update({sympy.Symbol(f"{p}_X1_Q2"): sympy.Symbol(f"{p}_Q2") for p in ("gm", "rpi", "ro")})
    for quantity in (lambda c: output_resistance(c, "Vout"), lambda c: current_gain(c, "Vout", "Iref")):
        got = quantity(nested).expr.xreplace(rename)
        assert sympy.cancel(got - quantity(flat).expr) == 0


def test_flattened_device_symbols_read_back_as_plain_names():
    formula = output_resistance(parse_netlist(NESTED), "Vout")
    names = [s.name for s in formula.symbols]
    assert "ro_X1_Q2" in names and all(name.isidentifier() for name in names)
    exact = sympy.parse_expr(formula.exact_string(), local_dict={n: sympy.Symbol(n) for n in names})
    assert sympy.cancel(exact - formula.expr) == 0
