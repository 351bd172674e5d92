"""Domain objects pickle, in this process and through a process pool, over both polynomial backends.

Ranking and Monte Carlo hand work to a ``concurrent.futures`` executor (a
process pool or a distributed one), so everything they send must pickle.
python-flint polynomials do not pickle by themselves; formulas and solver
results are sent by their terms and rebuilt in the worker's ring.

The checks compare with the original object: the unpickled formula's exact
text and its values by both evaluation routes; the values themselves are
checked against the textbook cascode in ``test_bench_smoke.py`` and against an
independent solve in ``test_core_numeric.py``.
"""

from __future__ import annotations

import multiprocessing
import operator
import pickle
import sys
import warnings
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

import numpy as np
import pytest

from symbias.analyses import current_gain, output_resistance
from symbias.formula import Formula
from symbias.linear.mna import solve
from symbias.linear.polys import make_ring
from symbias.netlist import parse_netlist, read_netlist

ROOT = Path(__file__).resolve().parents[2]
from support.stacks import stack_netlist  # the synthetic cascode stack the benchmarks time

BACKENDS = ("flint", "sympy")


def _formulas(backend: str) -> list[Formula]:
    wilson = read_netlist(ROOT / "examples" / "wilson_mirror.cir")
    cascode = read_netlist(ROOT / "examples" / "dc_cascode_sink.cir")
    return [output_resistance(wilson, "Vout", backend=backend), current_gain(wilson, "Vout", "Iref", backend=backend),
            output_resistance(cascode, "Vout", backend=backend)]


def _values(formula: Formula) -> dict[str, np.ndarray]:
    rng = np.random.default_rng(5)
    names = [s.name for s in formula.problem.network.symbols]
    return {n: rng.uniform(1e-3, 4e-2, 4) if n.startswith("gm") else rng.uniform(1e4, 1e6, 4) for n in names}


def _same_formula(a: Formula, b: Formula) -> None:
    assert b.exact_string() == a.exact_string()
    assert (b.quantity, b.label, b.unit, b.assumptions) == (a.quantity, a.label, a.unit, a.assumptions)
    assert dict(b.meanings) == dict(a.meanings)
    assert b.ring.backend == a.ring.backend and b.ring.names == a.ring.names
    values = _values(a)
    for route in ("polynomial", "solve"):
        np.testing.assert_allclose(b.evaluate(values, route=route), a.evaluate(values, route=route), rtol=1e-12)


@pytest.mark.parametrize("backend", BACKENDS)
def test_formula_round_trips_through_pickle(backend):
    for formula in _formulas(backend):
        formula.evaluate(_values(formula))  # caches (compiled programs) must stay out of the pickle
        _same_formula(formula, pickle.loads(pickle.dumps(formula)))


@pytest.mark.parametrize("backend", BACKENDS)
def test_linear_objects_round_trip_through_pickle(backend):
    formula = _formulas(backend)[0]
    problem = formula.problem
    for item in (problem, problem.network, problem.network.primitives, formula.variables, formula.ring,
                 make_ring(("a", "b"), backend)):
        assert pickle.loads(pickle.dumps(item)) == item
    ring = pickle.loads(pickle.dumps(formula.ring))
    a = ring.gens[0]
    assert ring.terms(a * a + a) == formula.ring.terms(formula.ring.gens[0] ** 2 + formula.ring.gens[0])
    solution = solve(problem, backend)
    copy = pickle.loads(pickle.dumps(solution))
    assert copy.ring == solution.ring and copy.states == solution.states
    for mine, theirs in ((copy.numerator, solution.numerator), (copy.denominator, solution.denominator)):
        assert copy.ring.terms(mine) == solution.ring.terms(theirs)
    network = pickle.loads(pickle.dumps(problem.network))
    assert network.primitives == problem.network.primitives and dict(network.meanings) == dict(problem.network.meanings)


def test_large_flint_formula_round_trips():
    """A 2,000-term result: the flint terms are read as arrays (no per-exponent objects) and rebuilt."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the top node has one connection by design
        formula = output_resistance(parse_netlist(stack_netlist(7)), "n7")
    assert sum(formula.nterms) > 2_000
    _same_formula(formula, pickle.loads(pickle.dumps(formula)))


@pytest.mark.parametrize("backend", BACKENDS)
def test_formulas_travel_through_a_process_pool(backend):
    """Round trip through fresh worker processes (spawn: nothing is inherited, everything is pickled)."""
    formulas = _formulas(backend)
    context = multiprocessing.get_context("spawn")
    with ProcessPoolExecutor(max_workers=1, mp_context=context) as pool:
        texts = list(pool.map(Formula.exact_string, formulas))
        values = [_values(f) for f in formulas]
        numbers = list(pool.map(Formula.evaluate, formulas, values))
        solved = list(pool.map(Formula.evaluate, formulas, values, ["solve"] * len(formulas)))
        back = list(pool.map(operator.itemgetter(0), [(f,) for f in formulas]))
        solution = pool.submit(solve, formulas[0].problem, backend).result()
    for formula, text, number, by_solve, copy, value in zip(formulas, texts, numbers, solved, back, values):
        assert text == formula.exact_string()
        np.testing.assert_allclose(number, formula.evaluate(value), rtol=1e-12)
        np.testing.assert_allclose(by_solve, formula.evaluate(value, route="solve"), rtol=1e-12)
        _same_formula(formula, copy)
    here = solve(formulas[0].problem, backend)
    assert solution.ring.terms(solution.denominator) == here.ring.terms(here.denominator)
