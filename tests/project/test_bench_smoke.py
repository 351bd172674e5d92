"""Smoke tests of the benchmarks in ``bench/``: they run and their correctness checks bite.

No timing is asserted here (timings live in the benchmarks, as ratios against a
reference measured in the same run).  The checks are about correctness only:

* the synthetic cascode stack reproduces the term counts recorded in the
  design notes (``docs``/design brief, "Method notes": 6,528 over 2,704 at 8
  nodes) and the two-stage case matches the textbook cascode output
  resistance ``ro2 + (ro1 || rpi2)(1 + gm2 ro2)`` (Gray, Hurst, Lewis and
  Meyer, Analysis and Design of Analog Integrated Circuits, 5th ed., ch. 3,
  cascode configuration -- from memory);
* the independent numpy reference of ``tests/support/stacks.py`` (which the
  benchmarks time) agrees with symbias;
* the benchmarks' agreement check flags a wrong value (their own examples, run
  as a program: the tests import nothing from ``bench/``);
* ``bench/derive.py --quick`` and ``bench/evaluate.py --quick`` run end to end
  in fresh processes, exit 0 and write their tables.
"""

from __future__ import annotations

import subprocess
import sys
import warnings
from pathlib import Path

import numpy as np
import pytest

from support.stacks import random_points, reference_values, stack_netlist
from symbias.analyses import output_resistance, transimpedance
from symbias.errors import CircuitWarning
from symbias.netlist import parse_netlist

ROOT = Path(__file__).resolve().parents[2]


def _stack(n: int):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CircuitWarning)
        return parse_netlist(stack_netlist(n))


@pytest.mark.parametrize(("n", "terms"), [(5, (164, 68)), (8, (6528, 2704))])
def test_stack_reproduces_the_design_note_term_counts(n, terms):
    assert output_resistance(_stack(n), f"n{n}").nterms == terms


def test_two_stage_stack_is_the_textbook_cascode():
    point = {"gm_Q1": 0.02, "rpi_Q1": 5e3, "ro_Q1": 1e5, "gm_Q2": 0.03, "rpi_Q2": 4e3, "ro_Q2": 2e5}
    parallel = 1 / (1 / point["ro_Q1"] + 1 / point["rpi_Q2"])
    textbook = point["ro_Q2"] + parallel * (1 + point["gm_Q2"] * point["ro_Q2"])
    assert reference_values(2, [point])["rout"][0] == pytest.approx(textbook, rel=1e-12)


@pytest.mark.parametrize("n", [2, 4])
def test_independent_reference_agrees_with_symbias(n):
    points = random_points(n, 3)
    expected = reference_values(n, points)
    circuit = _stack(n)
    rout = output_resistance(circuit, f"n{n}")
    transfer = transimpedance(circuit, f"n{n}", "Iin")
    for key, formula in (("rout", rout), ("transfer", transfer)):
        got = [float(formula.evaluate(p)) for p in points]
        np.testing.assert_allclose(got, expected[key], rtol=1e-10)


def test_agreement_check_and_ratios_of_the_benchmarks():
    """bench/common.py's own examples: a wrong value is flagged, a timed-out case gives a lower bound."""
    proc = subprocess.run([sys.executable, "-m", "doctest", "-v", "common.py"], capture_output=True, text=True,
                          cwd=ROOT / "bench", timeout=120)
    assert proc.returncode == 0, proc.stdout[-2000:] + proc.stderr[-2000:]
    assert "'wrong'" in proc.stdout and "'> 120x'" in proc.stdout


def _run(script: str, tmp_path: Path) -> str:
    output = tmp_path / "results.md"
    proc = subprocess.run([sys.executable, str(ROOT / "bench" / script), "--quick", "--output", str(output)],
                          capture_output=True, text=True, cwd=ROOT, timeout=600)
    assert proc.returncode == 0, proc.stdout[-2000:] + proc.stderr[-2000:]
    assert "Traceback" not in proc.stderr
    return output.read_text()


def test_derive_quick_runs_and_checks(tmp_path):
    text = _run("derive.py", tmp_path)
    assert "## (a) Shipped examples" in text
    assert "| 4 | 48 / 20 |" in text  # the 4-node stack, checked against the independent solve
    for method in ("minor-flint", "minor-sympy", "domainmatrix-det", "domainmatrix-solve_den"):
        assert method in text
    assert "WRONG" not in text and "## Problems" not in text


def test_evaluate_quick_runs_and_checks(tmp_path):
    text = _run("evaluate.py", tmp_path)
    assert "Formula.evaluate throughput" in text
    assert "PROBLEM" not in text
    assert "Wilson mirror (examples/wilson_mirror.cir) | 14 / 10 |" in text


# -- the polynomial evaluation route that bench/evaluate.py measures --------------------------


def _exact(formula, point: dict) -> complex:
    """Value of the formula's sympy expression at one point, substituted exactly."""
    import sympy

    subs = {sympy.Symbol(k): sympy.nsimplify(v, rational=True) if not isinstance(v, complex) else v
            for k, v in point.items()}
    return complex(formula.expr.xreplace(subs).evalf(30))


def test_polynomial_route_broadcasts_like_numpy():
    circuit = parse_netlist((ROOT / "examples" / "wilson_mirror.cir").read_text())
    formula = output_resistance(circuit, "Vout")
    base = {s.name: 1e-2 if s.name.startswith("gm") else 5e4 for s in formula.symbols}
    values = dict(base, ro_Q3=np.array([1e4, 2e5, 3e6]), gm_Q1=np.array([[1e-3], [3e-2]]))
    got = formula.evaluate(values, route="polynomial")
    assert got.shape == (2, 3)
    for i in range(2):
        for j in range(3):
            point = dict(base, ro_Q3=float(values["ro_Q3"][j]), gm_Q1=float(values["gm_Q1"][i, 0]))
            assert got[i, j] == pytest.approx(_exact(formula, point).real, rel=1e-12)
    scalar = formula.evaluate(base, route="polynomial")
    assert np.ndim(scalar) == 0 and float(scalar) == pytest.approx(_exact(formula, base).real, rel=1e-12)
    integers = formula.evaluate({k: int(v) if v > 1 else v for k, v in base.items()}, route="polynomial")
    assert float(integers) == pytest.approx(float(scalar), rel=1e-12)
    empty = formula.evaluate(dict(base, ro_Q3=np.array([])), route="polynomial")
    assert empty.shape == (0,)


def test_polynomial_route_takes_complex_frequency():
    circuit = parse_netlist("rc\nI1 0 a 1\nR1 a 0 RA\nC1 a 0 CA\nR2 a b RB\nC2 b 0 CB\n")
    formula = output_resistance(circuit, "a")
    s = 2j * np.pi * np.array([1e3, 1e6])
    got = formula.evaluate({"RA": 1e3, "CA": 1e-9, "RB": 2e3, "CB": 4e-9, "s": s}, route="polynomial")
    for k, value in enumerate(s):
        want = _exact(formula, {"RA": 1000, "CA": 1e-9, "RB": 2000, "CB": 4e-9, "s": complex(value)})
        assert got[k] == pytest.approx(want, rel=1e-12)


def test_polynomial_route_spans_several_blocks():
    circuit = _stack(4)
    formula = output_resistance(circuit, "n4")
    count = 40_000  # more than one evaluation block
    rng = np.random.default_rng(11)
    points = [{k: float(v) for k, v in p.items()} for p in random_points(4, 1)]
    values = {k: np.full(count, v) * rng.uniform(0.5, 2.0, count) for k, v in points[0].items()}
    got = formula.evaluate(values, route="polynomial")
    picks = [0, 16_383, 16_384, count - 1]
    expected = reference_values(4, [{k: float(v[i]) for k, v in values.items()} for i in picks])["rout"]
    np.testing.assert_allclose(got[picks], expected, rtol=1e-10)
