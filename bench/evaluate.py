"""Evaluation benchmark: points per second of ``Formula.evaluate``.

Run from the repository root::

    python3 bench/evaluate.py            # 200,000 points per cell, about a minute
    python3 bench/evaluate.py --quick    # 2,000 points, seconds

For a few cells (the shipped Wilson mirror, a four-transistor Wilson mirror and
the synthetic cascode stacks of ``bench/derive.py``), every device's symbols
distinct, it times over the same random bias points:

* ``Formula.evaluate(route="polynomial")``: straight from the exact numerator
  and denominator polynomials;
* ``Formula.evaluate(route="solve")``: the engine's batched numeric solve of
  the network (assembly included);
* the reference: one batched ``numpy.linalg.solve`` of the same numeric nodal
  matrices, assembled beforehand by this script (only the LAPACK call is
  timed, so it is the floor of any solve-based route).

Figures are printed as points per second and as ratios against the reference
measured in the same run, and appended to ``bench/results.md`` unless
``--output`` says otherwise.  Both routes must agree with the reference to a
relative error below 1e-9 or the script exits with status 1.

Examples
--------
>>> [label for label, _ in cell_netlists()][-2:]
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

IMPROVED_WILSON = """Wren WR-3 bias cell: four-transistor Wilson mirror (invented product), devices unmatched
Iref 0 in 1
Q4 in in a QN
Q1 a x 0 QN
Q2 x x 0 QN
Q3 out in x QN
Vout out 0 0
.model QN npn
"""


def cell_netlists() -> list[tuple[str, str]]:
    """(label, netlist text) of the cells measured; the output port is always ``Vout`` or the top node."""
    wilson = (ROOT / "examples" / "wilson_mirror.cir").read_text()
    return [
        ("Wilson mirror (examples/wilson_mirror.cir)", wilson),
        ("four-transistor Wilson mirror", IMPROVED_WILSON),
        ("stack, 5 nodes", stack_netlist(5)),
        ("stack, 6 nodes", stack_netlist(6)),
    ]


def bias_points(symbols, count: int, seed: int = 3) -> dict[str, np.ndarray]:
    """Random small-signal values: gm 1-40 mA/V, rpi 2.5-100 kohm, ro 10 k-1 Mohm (common practice ranges)."""
    rng = np.random.default_rng(seed)
    ranges = {"gm": (1e-3, 4e-2), "rpi": (2.5e3, 1e5), "ro": (1e4, 1e6)}
    return {s: rng.uniform(*ranges[s.split("_")[0]], count) for s in symbols}


def assembled_system(problem, values: dict[str, np.ndarray]):
    """Numeric MNA matrices (count x n x n), right-hand sides and the observation vector.

    Assembled here from the stamped entries, so the reference times only the
    batched solve itself.
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


def measure_cell(text: str, count: int, budget: float) -> dict:
    """Time both evaluation routes and the reference solve for one cell's output resistance."""
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
    start = time.perf_counter()
    formula.evaluate({k: v[:1] for k, v in values.items()}, route="polynomial")  # builds the program once
    build = time.perf_counter() - start
    t_poly, poly = _median_time(lambda: formula.evaluate(values, route="polynomial"), budget)
    t_solve, solved = _median_time(lambda: formula.evaluate(values, route="solve"), budget)
    matrix, rhs, observe = assembled_system(formula.problem, values)
    t_ref, x = _median_time(lambda: np.linalg.solve(matrix, rhs), budget)
    reference = x[..., 0] @ observe
    errors = [float(np.max(np.abs(np.asarray(r) / reference - 1))) for r in (poly, solved)]
    return {
        "terms": formula.nterms,
        "build_s": build,
        "poly": count / t_poly,
        "solve": count / t_solve,
        "reference": count / t_ref,
        "errors": errors,
    }


def _rate(value: float) -> str:
    return f"{value:.3g}"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--quick", action="store_true", help="2,000 points per cell, short timing budget")
    parser.add_argument("--points", type=int, help="points per cell (default 200,000; quick 2,000)")
    parser.add_argument("--output", type=Path, default=ROOT / "bench" / "results.md",
                        help="markdown file the section is appended to ('-' for none)")
    args = parser.parse_args(argv)
    count = args.points or (2_000 if args.quick else 200_000)
    budget = 0.05 if args.quick else 1.0
    rows, problems, library = [], [], None
    for label, text in cell_netlists():
        result = measure_cell(text, count, budget)
        rows.append(
            f"| {label} | {result['terms'][0]} / {result['terms'][1]} | {result['build_s'] * 1e3:.1f} ms | "
            f"{_rate(result['poly'])} | {_rate(result['solve'])} | {_rate(result['reference'])} | "
            f"{result['poly'] / result['reference']:.1f}x | {result['solve'] / result['reference']:.2f}x |"
        )
        if label.startswith("Wilson"):
            library = result
        for route, error in zip(("polynomial", "solve"), result["errors"]):
            if not error < TOLERANCE:
                problems.append(f"{label}: {route} route differs from the reference solve by {error:.1e}")
    lines = [
        "## Formula.evaluate throughput (bench/evaluate.py)",
        "",
        f"Output resistance of each cell at {count:,} random bias points, every device's symbols distinct.",
        "Points per second; ratios against one batched `numpy.linalg.solve` of the same pre-assembled",
        "numeric matrices, measured in the same run. 'program' is the one-off cost of building the",
        "evaluation program of the formula (cached on the formula).",
        "",
        "| cell | terms (num / den) | program | polynomial route | solve route | numpy.linalg.solve | "
        "polynomial / numpy | solve route / numpy |",
        "|---|---|---|---|---|---|---|---|",
        *rows,
        "",
    ]
    if library is not None:
        verdict = "met" if library["poly"] >= TARGET_POINTS_PER_S else "MISSED"
        lines.append(f"- target: at least {TARGET_POINTS_PER_S:.0e} points/s for a library-size cell (Wilson mirror, "
                     f"polynomial route): {_rate(library['poly'])} points/s: {verdict}")
    lines += [f"- PROBLEM: {p}" for p in problems]
    lines.append("")
    text = "\n".join(lines)
    print(text, flush=True)
    if str(args.output) != "-":
        with open(args.output, "a", encoding="utf-8") as handle:
            handle.write("\n" + text)
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main())
