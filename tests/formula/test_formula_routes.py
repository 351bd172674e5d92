"""The numeric-solve route: compiled once, no refinement step, checked on an ill-conditioned cascode.

Reference: ``reference_solver`` (an independent nodal solve in 40-digit
arithmetic, see ``test_core_numeric.py``).  The regulated cascode (Gray,
Hurst, Lewis and Meyer, Analysis and Design of Analog Integrated Circuits,
5th ed., ch. 4, active cascode: Rout ~ A gm ro^2, from memory) with ro of
1-100 Mohm reaches an output resistance of about 1e12 ohm and a nodal matrix
with a condition number of about 1e13.
There a step of iterative refinement in double precision does not reduce the
error of the solve (both are limited by the conditioning), which is why the
route solves once per point.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

from support.reference_solver import nodal_entries, reference_branches, reference_value  # noqa: E402

from symbias.analyses import output_resistance  # noqa: E402
from symbias.errors import UsageError  # noqa: E402
from symbias.linear.numeric import compile_problem, solve_problem, solve_system  # noqa: E402
from symbias.netlist import parse_netlist, read_netlist  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]


def _cascode_values(count: int) -> dict[str, np.ndarray]:
    rng = np.random.default_rng(11)
    log = lambda low, high: np.exp(rng.uniform(np.log(low), np.log(high), count))  # noqa: E731
    return {"gm_M1": log(1e-3, 1e-2), "gm_M2": log(1e-3, 1e-2), "gmb_M2": log(1e-4, 1e-3),
            "ro_M1": log(1e6, 1e8), "ro_M2": log(1e6, 1e8), "A": log(1, 10)}


def _float64_solves(circuit, values, count: int) -> tuple[np.ndarray, np.ndarray]:
    """Plain and once-refined double-precision solves of the reference's own nodal matrix."""
    branches = [b for b in reference_branches(circuit) if b.name != "Vout"]
    plain, refined = [], []
    for i in range(count):
        entries, labels = nodal_entries(branches, {k: float(v[i]) for k, v in values.items()})
        matrix = np.zeros((len(labels), len(labels)))
        for (r, c), value in entries.items():
            matrix[r, c] = float(value)
        rhs = np.zeros(len(labels))
        rhs[labels.index("v:out")] = 1.0
        x = np.linalg.solve(matrix, rhs)
        plain.append(x[labels.index("v:out")])
        x = x + np.linalg.solve(matrix, rhs - matrix @ x)
        refined.append(x[labels.index("v:out")])
    return np.array(plain), np.array(refined)


def test_ill_conditioned_cascode_needs_no_refinement_step():
    circuit = read_netlist(ROOT / "tests" / "decks" / "core" / "regulated_cascode.cir")
    formula = output_resistance(circuit, "Vout")
    count = 40
    values = _cascode_values(count)
    reference = reference_value(circuit, "output_resistance", ("Vout",), values).real
    assert np.median(reference) > 1e11  # a high-gain cascode indeed
    route = formula.evaluate(values, route="solve")
    plain, refined = _float64_solves(circuit, values, count)
    error = lambda got: np.abs(got / reference - 1)  # noqa: E731
    assert np.max(error(plain)) > 1e-12  # the conditioning does cost digits in double precision
    # refinement buys nothing here: its error is of the same size as the plain solve's
    assert np.median(error(refined)) > 0.1 * np.median(error(plain))
    # and the engine's single solve is as good as either
    assert np.max(error(route)) < 10 * max(np.max(error(plain)), np.max(error(refined)))
    assert np.max(error(route)) < 1e-7


def test_compiled_system_agrees_with_the_exact_polynomials_including_complex_frequency():
    circuit = parse_netlist("rc\nI1 0 a 1\nR1 a 0 RA\nC1 a 0 CA\nR2 a b {RB/2}\nC2 b 0 CB\nL1 b 0 LB\n")
    formula = output_resistance(circuit, "a")
    s = 2j * np.pi * np.array([1e2, 1e4, 1e6])
    values = {"RA": 1e3, "CA": 1e-9, "RB": np.array([[2e3], [5e3]]), "CB": 4e-9, "LB": 1e-3, "s": s}
    exact = formula.evaluate(values, route="polynomial")
    solved = formula.evaluate(values, route="solve")
    assert solved.shape == exact.shape == (2, 3)
    np.testing.assert_allclose(solved, exact, rtol=1e-10)
    system = compile_problem(formula.problem)
    np.testing.assert_allclose(solve_system(system, values), solve_problem(formula.problem, values), rtol=0)
    many = {k: np.broadcast_to(v, (5000,) + np.shape(v)[1:]) if k == "RA" else v for k, v in values.items()}
    many["RA"] = np.linspace(1e2, 1e4, 5000)  # more points than one block of the route
    got = solve_system(system, {**values, "RA": many["RA"][:, None, None], "RB": 3e3})
    want = formula.evaluate({**values, "RA": many["RA"][:, None, None], "RB": 3e3}, route="polynomial")
    np.testing.assert_allclose(got, want, rtol=1e-10)


def test_an_unknown_route_is_a_usage_error():
    formula = output_resistance(parse_netlist("t\nI1 0 a 1\nR1 a 0 RA\n"), "a")
    with pytest.raises(UsageError, match="unknown route"):
        formula.evaluate({"RA": 1.0}, route="fast")
