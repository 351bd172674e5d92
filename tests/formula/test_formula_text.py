"""Exact text written from the terms: chunks, JSON streaming, array reading of flint terms.

References: sympy (``parse_expr`` of the exact string must equal sympy's own
expression of the result, built term by term from ``user_terms``) and the
``json`` module (the streamed record must parse and equal ``json.dumps`` of
the same record).  The array reading of python-flint terms is checked
against python-flint's own ``monoms()``/``coeffs()`` on random polynomials.
"""

from __future__ import annotations

import io
import json
import subprocess
import sys
import warnings
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest
import sympy

from symbias.analyses import SmallSignalOptions, current_gain, output_resistance
from symbias.formula.text import polynomial_chunks, terms_to_text
from symbias.linear.polys import make_ring
from symbias.netlist import parse_netlist, read_netlist
from symbias.render.json import dumps, formula_record, write_json

ROOT = Path(__file__).resolve().parents[2]
from support.stacks import stack_netlist  # the synthetic cascode stack the benchmarks time


def _results(backend: str = "flint"):
    wilson = read_netlist(ROOT / "examples" / "wilson_mirror.cir")
    rc = parse_netlist("rc\nI1 0 a 1\nR1 a 0 {RA/3}\nC1 a 0 CA\nR2 a b {(RX + RY)/2}\nC2 b 0 CB\n")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        stack = output_resistance(parse_netlist(stack_netlist(5)), "n5", backend=backend)
    return [
        output_resistance(wilson, "Vout", backend=backend),
        current_gain(wilson, "Vout", "Iref", SmallSignalOptions(match=True, beta=True), backend=backend),
        output_resistance(rc, "a", backend=backend),
        stack,
    ]


def _parse(text: str, names) -> sympy.Expr:
    return sympy.parse_expr(text, local_dict={n: sympy.Symbol(n) for n in names})


def test_importing_the_formula_package_loads_no_sympy():
    code = "import sys, symbias.formula, symbias.render.json; print('sympy' in sys.modules, 'flint' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, check=True)
    assert out.stdout.split() == ["False", "False"]


@pytest.mark.parametrize("backend", ["flint", "sympy"])
def test_exact_text_reads_back_as_sympys_own_expression(backend):
    for formula in _results(backend):
        names = {s.name for s in formula.symbols} | {"RX", "RY"}
        exact = _parse(formula.exact_string(), names)
        assert sympy.simplify(exact - formula.expr) == 0
        num, den = formula.user_terms()
        assert formula.exact_string() == f"({terms_to_text(num)})/({terms_to_text(den)})"


def test_chunked_text_is_the_same_text_block_by_block():
    formula = _results()[3]  # 164 over 68 terms
    form, (num, den) = formula._user_form, formula._columns
    whole = "".join(polynomial_chunks(form, num))
    for size in (1, 7, 50, 163, 164, 1000):
        assert "".join(polynomial_chunks(form, num, chunk=size)) == whole
    assert whole == terms_to_text(formula.user_terms()[0])
    assert "".join(polynomial_chunks(form, den, chunk=9)) == terms_to_text(formula.user_terms()[1])


def test_streamed_json_is_the_json_of_the_record():
    for formula in _results():
        record = formula_record(formula)
        streamed = formula_record(formula, streamed=True)
        out = io.StringIO()
        write_json(out, {"circuit": "x", "results": [streamed, streamed]})
        assert out.getvalue() == dumps({"circuit": "x", "results": [record, record]})
        parsed = json.loads(out.getvalue())["results"][0]
        assert parsed["exact"] == f"({parsed['numerator']})/({parsed['denominator']})" == formula.exact_string()
        assert list(parsed) == list(record)


def test_derive_json_streams_a_valid_record(tmp_path):
    netlist = tmp_path / "stack.cir"
    netlist.write_text(stack_netlist(6))
    out = subprocess.run([sys.executable, "-m", "symbias", "derive", str(netlist), "--rout", "n6", "--json"],
                         capture_output=True, text=True, cwd=ROOT, check=True)
    record = json.loads(out.stdout)
    assert record["terms"] == [560, 232]  # the design notes' 6-node chain
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        formula = output_resistance(parse_netlist(stack_netlist(6)), "n6")
        title = parse_netlist(stack_netlist(6)).title
    expected = {"circuit": title, "source": str(netlist), **formula_record(formula)}
    assert record == json.loads(dumps(expected))


def _random_polynomial(ring, rng, terms: int, degree: int, big: bool, rational: bool):
    size = len(ring.names)
    out = {}
    for _ in range(terms):
        exponents = tuple(int(e) for e in rng.integers(0, degree + 1, size))
        numerator = int(rng.integers(-5, 6)) or 1
        if big:
            numerator *= 2**70 + 1
        out[exponents] = Fraction(numerator, int(rng.integers(1, 9)) if rational else 1)
    return ring.from_terms(list(out.items()))


@pytest.mark.parametrize("backend", ["flint", "sympy"])
@pytest.mark.parametrize(("degree", "big", "rational"), [(1, False, False), (3, False, True), (2, True, False),
                                                         (5, False, False)])
def test_term_arrays_match_the_ring_terms(backend, degree, big, rational):
    rng = np.random.default_rng(degree + 10 * big + 100 * rational)
    ring = make_ring(tuple(f"g{i}" for i in range(40)), backend)  # 40 generators: two packing groups at degree 5
    for _ in range(3):
        poly = _random_polynomial(ring, rng, 300, degree, big, rational)
        columns = ring.columns(poly)
        assert columns.terms() == ring.terms(poly)
        assert ring.terms(ring.unpack(ring.pack(poly))) == ring.terms(poly)
    assert ring.columns(ring.zero).terms() == []
