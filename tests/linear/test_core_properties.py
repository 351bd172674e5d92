"""Property tests over random connected R / G / VCCS networks (Hypothesis).

Invariants checked on every generated network:

* the exact result equals a plain numpy (float64) nodal solve of the same
  network, built by :mod:`reference_solver` (relative error < 1e-9);
* the flint and sympy polynomial backends give identical polynomials;
* a passive network (resistors and conductances only) is reciprocal: the
  transimpedance from a current injected at node a to the voltage at b equals
  the one from b to a (common practice: reciprocity theorem of linear passive
  networks, any circuit-theory text);
* the nodal matrix the engine stamps for a passive network is symmetric
  (common practice: the nodal admittance matrix of a reciprocal network is
  symmetric).
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest
import sympy
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from support.reference_solver import reference_value  # noqa: E402

from symbias.analyses import output_resistance, transimpedance  # noqa: E402
from symbias.linear.mna import stamp, unknowns  # noqa: E402
from symbias.netlist import parse_netlist  # noqa: E402
from symbias.linear.network import expand  # noqa: E402

pytestmark = pytest.mark.filterwarnings("ignore::symbias.circuit.CircuitWarning")  # dangling leaves are fine here
SETTINGS = settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
TOLERANCE = 1e-9


@st.composite
def networks(draw, passive: bool):
    """Netlist text of a connected network: a spanning tree to ground plus extra parts.

    Resistors carry a symbol ``Rk``, conductances are written ``{1/Gk}`` (a
    non-polynomial value the engine must encode), VCCS elements ``Gxk`` carry
    a transconductance ``gxk``.  Two probe current sources (zero valued) sit at
    the first and last node so transfer quantities can be asked for.
    """
    size = draw(st.integers(min_value=2, max_value=5))
    nodes = [f"n{i}" for i in range(1, size + 1)]
    lines = ["random network"]
    count = 0

    def two_terminal(a: str, b: str) -> None:
        nonlocal count
        count += 1
        if draw(st.booleans()):
            lines.append(f"R{count} {a} {b} R{count}")
        else:
            lines.append(f"R{count} {a} {b} {{1/G{count}}}")

    for i, node in enumerate(nodes):
        parent = draw(st.sampled_from(["0"] + nodes[:i]))
        two_terminal(node, parent)
    everything = ["0"] + nodes
    for _ in range(draw(st.integers(min_value=0, max_value=3))):
        a, b = draw(st.lists(st.sampled_from(everything), min_size=2, max_size=2, unique=True))
        two_terminal(a, b)
    if not passive:
        for k in range(1, draw(st.integers(min_value=1, max_value=3)) + 1):
            a, b, c, d = (draw(st.sampled_from(everything)) for _ in range(4))
            if a == b:
                b = "0" if a != "0" else nodes[0]
            lines.append(f"Gx{k} {a} {b} {c} {d} gx{k}")
    lines += [f"Ia 0 {nodes[0]} 0", f"Ib 0 {nodes[-1]} 0"]
    return "\n".join(lines) + "\n", nodes


def values_for(symbols, seed: int) -> dict[str, np.ndarray]:
    """Random values: resistances 100 ohm - 100 kohm, conductances and gx 10 uS - 10 mS."""
    rng = np.random.default_rng(seed)
    out = {}
    for name in sorted(symbols):
        low, high = (2.0, 5.0) if name.startswith("R") else (-5.0, -2.0)
        out[name] = 10 ** rng.uniform(low, high, 3)
    return out


def terms(formula):
    ring = formula.ring
    return ring.names, tuple(frozenset(ring.terms(p)) for p in (formula.numerator, formula.denominator))


@SETTINGS
@given(data=networks(passive=False), seed=st.integers(0, 2**32 - 1))
def test_exact_result_equals_numpy_solve_and_backends_agree(data, seed) -> None:
    text, nodes = data
    circuit = parse_netlist(text)
    quantity = [("output_resistance", (nodes[-1],)), ("transimpedance", (nodes[0], "Ib"))]
    for name, args in quantity:
        function = output_resistance if name == "output_resistance" else transimpedance
        flint = function(circuit, *args, backend="flint")
        alternative = function(circuit, *args, backend="sympy")
        assert terms(flint) == terms(alternative), text
        symbols = {s.name for s in expand(circuit).symbols}
        values = values_for(symbols, seed)
        numpy_solve = reference_value(circuit, name, args, values, precision="float64")
        if flint.nterms[0] == 0:  # an exact zero: float64 leaves rounding noise far below an ohm
            assert np.max(np.abs(numpy_solve)) < 1e-6, text
            continue
        got = flint.evaluate(values, route="polynomial")
        assert np.max(np.abs(got - numpy_solve) / np.abs(numpy_solve)) < TOLERANCE, text


@SETTINGS
@given(data=networks(passive=True))
def test_passive_networks_are_reciprocal(data) -> None:
    text, nodes = data
    circuit = parse_netlist(text)
    forward = transimpedance(circuit, nodes[-1], "Ia")  # inject at the first node, look at the last
    backward = transimpedance(circuit, nodes[0], "Ib")  # inject at the last node, look at the first
    assert terms(forward)[1] == terms(backward)[1]
    assert sympy.simplify(forward.expr - backward.expr) == 0, text


@SETTINGS
@given(data=networks(passive=True))
def test_nodal_matrix_of_a_passive_network_is_symmetric(data) -> None:
    text, _ = data
    network = expand(parse_netlist(text))
    entries = stamp(network)
    size = len(unknowns(network))

    def entry(r: int, c: int) -> sympy.Expr:
        return sympy.Add(*(value.to_sympy() * sign for value, sign in entries.get((r, c), [])))

    assert entries, text
    for r in range(size):
        for c in range(r + 1, size):
            assert sympy.simplify(entry(r, c) - entry(c, r)) == 0, (text, r, c)
