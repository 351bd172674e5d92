"""Evaluation benchmark: points per second of ``Formula.evaluate``.

Run from the repository root::

    python3 bench/evaluate.py --output bench/results.md   # 200,000 points per cell, a few minutes
    python3 bench/evaluate.py --quick                     # 2,000 points, small cells, seconds

For a few cells (the shipped Wilson mirror, a four-transistor Wilson mirror and
the synthetic cascode stacks of ``bench/derive.py`` up to 12 nodes), every
device's symbols distinct, it times over the same random bias points:

* ``Formula.evaluate(route="polynomial")``: straight from the exact numerator
  and denominator polynomials (cells up to 10,000 terms);
* ``Formula.evaluate(route="solve")``: the engine's batched numeric solve of
  the network (what ``route="auto"`` takes above 3,000 terms);
* the reference: a plain numpy assemble-and-solve of the same network, written
  here (the stamps of every element summed into batched matrices, then one
  ``numpy.linalg.solve``), timed whole;
* the floor: the ``numpy.linalg.solve`` call alone on the matrices the
  reference assembled.

Figures are printed as points per second and as ratios against the reference
measured in the same run; the section is appended to the file named by
``--output`` (nothing is written without it).  Both routes must agree with
the reference to a relative error below 1e-9 or the script exits with
status 1.

Examples
--------
>>> [label for label, _ in cell_netlists(quick=True)][-2:]
['stack, 5 nodes', 'stack, 6 nodes']
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
import warnings
from pathlib import Path

import numpy as np

__all__ = ["cell_netlists", "bias_points", "assembled_system", "measure_cell"]

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "bench"))

from derive import stack_netlist  # noqa: E402  (the same synthetic stack as the derivation benchmark)

#: Points per second the polynomial route must reach for a library-size cell (issue target).
TARGET_POINTS_PER_S = 1e6
TOLERANCE = 1e-9
#: Largest result (terms) whose polynomial route is timed: its program grows with the terms.
POLYNOMIAL_TERMS = 10_000

IMPROVED_WILSON = """Wren WR-3 bias cell: four-transistor Wilson mirror (invented product), devices unmatched
Iref 0 in 1
Q4 in in a QN
Q1 a x 0 QN
Q2 x x 0 QN
Q3 out in x QN
Vout out 0 0
.model QN npn
"""


def cell_netlists(quick: bool = False) -> list[tuple[str, str]]:
    """(label, netlist text) of the cells measured; the output port is always ``Vout`` or the top node."""
    wilson = (ROOT / "examples" / "wilson_mirror.cir").read_text()
    cells = [
        ("Wilson mirror (examples/wilson_mirror.cir)", wilson),
        ("four-transistor Wilson mirror", IMPROVED_WILSON),
        ("stack, 5 nodes", stack_netlist(5)),
        ("stack, 6 nodes", stack_netlist(6)),
    ]
    if not quick:
        cells += [("stack, 8 nodes", stack_netlist(8)), ("stack, 12 nodes", stack_netlist(12))]
    return cells


def bias_points(symbols, count: int, seed: int = 3) -> dict[str, np.ndarray]:
    """Random small-signal values: gm 1-40 mA/V, rpi 2.5-100 kohm, ro 10 k-1 Mohm (common practice ranges)."""
    rng = np.random.default_rng(seed)
    ranges = {"gm": (1e-3, 4e-2), "rpi": (2.5e3, 1e5), "ro": (1e4, 1e6)}
    return {s: rng.uniform(*ranges[s.split("_")[0]], count) for s in symbols}


def assembled_system(problem, values: dict[str, np.ndarray]):
    """Numeric MNA matrices (count x n x n), right-hand sides and the observation vector.

    The plain way: stamp the network, evaluate every element value, add each
    contribution into the batched matrices.
    """
    from symbias.linear.mna import stamp, unknowns
    from symbias.linear.numeric import evaluate_expression

    labels = unknowns(problem.network)
    index = {label: i for i, label in enumerate(labels)}
    count = len(next(iter(values.values())))
    matrix = np.zeros((count, len(labels), len(labels)))
    for (r, c), contributions in stamp(problem.network).items():
        for value, sign in contributions:
            matrix[:, r, c] += sign * np.broadcast_to(evaluate_expression(value, values), (count,))
    rhs = np.zeros((count, len(labels), 1))
    for label, coefficient in problem.rhs:
        rhs[:, index[label], 0] += coefficient
    observe = np.zeros(len(labels))
    for label, coefficient in problem.observe:
        observe[index[label]] += coefficient
    return matrix, rhs, observe


def _median_time(work, budget: float) -> tuple[float, object]:
    times, result = [], None
    while len(times) < 3 or (sum(times) < budget and len(times) < 30):
        start = time.perf_counter()
        result = work()
        times.append(time.perf_counter() - start)
    return statistics.median(times), result


def plain_solve(problem, values: dict[str, np.ndarray]) -> np.ndarray:
    """The reference: a plain numpy assemble-and-solve of the network, ``c^T A^-1 b`` per point."""
    matrix, rhs, observe = assembled_system(problem, values)
    return np.linalg.solve(matrix, rhs)[..., 0] @ observe


def measure_cell(text: str, count: int, budget: float) -> dict:
    """Time both evaluation routes, the plain assemble-and-solve and the bare LAPACK call for one cell."""
    from symbias.analyses import output_resistance
    from symbias.errors import CircuitWarning
    from symbias.netlist import parse_netlist

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CircuitWarning)
        circuit = parse_netlist(text)
    port = "Vout" if circuit.has_element("Vout") else max((n for n in circuit.nodes if n.startswith("n")),
                                                          key=lambda n: int(n[1:]))
    formula = output_resistance(circuit, port)
    network_symbols = [s.name for s in formula.problem.network.symbols]
    values = bias_points(network_symbols, count)
    t_ref, reference = _median_time(lambda: plain_solve(formula.problem, values), budget)
    matrix, rhs, _ = assembled_system(formula.problem, values)
    t_floor, _ = _median_time(lambda: np.linalg.solve(matrix, rhs), budget)
    formula.evaluate({k: v[:1] for k, v in values.items()}, route="solve")  # compiles the system once
    t_solve, solved = _median_time(lambda: formula.evaluate(values, route="solve"), budget)
    result = {"terms": formula.nterms, "solve": count / t_solve, "reference": count / t_ref,
              "floor": count / t_floor, "errors": {"solve": _error(solved, reference)}}
    if sum(formula.nterms) <= POLYNOMIAL_TERMS:
        start = time.perf_counter()
        formula.evaluate({k: v[:1] for k, v in values.items()}, route="polynomial")  # builds the program once
        result["build_s"] = time.perf_counter() - start
        t_poly, poly = _median_time(lambda: formula.evaluate(values, route="polynomial"), budget)
        result["poly"] = count / t_poly
        result["errors"]["polynomial"] = _error(poly, reference)
    return result


def _error(got, reference) -> float:
    return float(np.max(np.abs(np.asarray(got) / reference - 1)))


def _rate(value: float) -> str:
    return f"{value:.3g}"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--quick", action="store_true", help="2,000 points, small cells, short timing budget")
    parser.add_argument("--points", type=int, help="points per cell (default 200,000; quick 2,000)")
    parser.add_argument("--output", type=Path, default=None, help="markdown file the section is appended to")
    args = parser.parse_args(argv)
    count = args.points or (2_000 if args.quick else 200_000)
    budget = 0.05 if args.quick else 1.0
    rows, problems, library, solve_ratios = [], [], None, []
    for label, text in cell_netlists(quick=args.quick):
        result = measure_cell(text, count, budget)
        solve_ratios.append(result["solve"] / result["reference"])
        poly = result.get("poly")
        rows.append(
            f"| {label} | {result['terms'][0]} / {result['terms'][1]} | "
            + (f"{result['build_s'] * 1e3:.1f} ms | {_rate(poly)} | " if poly else "- | - | ")
            + f"{_rate(result['solve'])} | {_rate(result['reference'])} | {_rate(result['floor'])} | "
            + (f"{poly / result['reference']:.1f}x | " if poly else "- | ")
            + f"{result['solve'] / result['reference']:.2f}x | {result['solve'] / result['floor']:.2f}x |"
        )
        if label.startswith("Wilson"):
            library = result
        for route, error in result["errors"].items():
            if not error < TOLERANCE:
                problems.append(f"{label}: {route} route differs from the reference solve by {error:.1e}")
    lines = [
        "## Formula.evaluate throughput (bench/evaluate.py)",
        "",
        f"Output resistance of each cell at {count:,} random bias points, every device's symbols distinct.",
        "Points per second; ratios against the reference, a plain numpy assemble-and-solve of the same network",
        "(stamps summed into batched matrices, one `numpy.linalg.solve`), timed whole in the same run; 'LAPACK",
        "only' is that solve call alone on the assembled matrices. 'program' is the one-off cost of building",
        "the polynomial route's program (cached on the formula); the polynomial route is not timed beyond",
        f"{POLYNOMIAL_TERMS:,} terms.",
        "",
        "| cell | terms (num / den) | program | polynomial route | solve route | plain assemble + solve | "
        "LAPACK only | polynomial / plain | solve route / plain | solve route / LAPACK only |",
        "|---|---|---|---|---|---|---|---|---|---|",
        *rows,
        "",
    ]
    if library is not None:
        verdict = "met" if library["poly"] >= TARGET_POINTS_PER_S else "MISSED"
        lines.append(f"- target: at least {TARGET_POINTS_PER_S:.0e} points/s for a library-size cell (Wilson mirror, "
                     f"polynomial route): {_rate(library['poly'])} points/s: {verdict}")
    slowest = min(solve_ratios)
    lines.append(f"- target: the solve route at least as fast as the plain assemble-and-solve: smallest ratio "
                 f"{slowest:.2f}x: {'met' if slowest >= 1.0 else 'MISSED'}")
    lines += [f"- PROBLEM: {p}" for p in problems]
    lines.append("")
    text = "\n".join(lines)
    print(text, flush=True)
    if args.output is not None:
        with open(args.output, "a", encoding="utf-8") as handle:
            handle.write("\n" + text)
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main())
