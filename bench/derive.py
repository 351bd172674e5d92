"""Derivation benchmark: how fast symbias derives exact small-signal results.

Run from the repository root::

    python3 bench/derive.py              # full run (about 10-15 minutes), writes bench/results.md
    python3 bench/derive.py --quick      # seconds: small sizes, no lcapy, no symengine

Three parts, all measured in the same run so that every figure can be read as
a ratio against a reference timed on the same machine at the same moment:

(a) every shipped example (``examples/*.cir``): the output resistance at
    ``Vout`` and, where the netlist has a current source, the current gain
    ``Vout/<I source>``, derived with both polynomial backends;
(b) a synthetic stack of N transistor stages (N = 2..12 nodes, every device's
    symbols distinct): the output impedance at the top node and the
    transimpedance from the bottom node to the top node, whole process (netlist
    text to exact result) with symbias and with lcapy (the reference library)
    on the same network;
(c) the candidate solve methods of the design notes on the same stacks, all
    starting from the same polynomial MNA matrix: the memoised minor expansion
    in python-flint and in sympy's ring (the engine), sympy ``DomainMatrix``
    ``det`` and ``solve_den``, and, when symengine is installed, symengine
    LU and ``det`` followed by sympy ``cancel``.

Every case runs in its own Python process with a timeout, so a method that
explodes is reported as "> T s" and cannot stall the run.  Every result is
checked at random points against an independent numpy nodal solve of the
stack, written here from the hybrid-pi model alone (it imports nothing from
symbias); a disagreement makes the script exit with status 1.

The stack: transistor k (npn, hybrid-pi gm, rpi, ro) has its collector at node
k, its emitter at node k-1 (ground for k = 1) and its base at small-signal
ground -- a cascode stack, the structure of a high-output-resistance current
sink.  Its term counts (8 nodes: 6,528 over 2,704; 12 nodes: 887,040 over
367,424) are those of the chain in the design notes.

Examples
--------
>>> print(stack_netlist(2))  # doctest: +NORMALIZE_WHITESPACE
synthetic cascode stack, 2 stages, every device's symbols distinct
Iin 0 n1 1
Q1 n1 0 0 QN
Q2 n2 0 n1 QN
.model QN npn
>>> reference_values(2, [{"gm_Q1": 1.0, "rpi_Q1": 1.0, "ro_Q1": 1.0, "gm_Q2": 1.0, "rpi_Q2": 1.0, "ro_Q2": 1.0}])
{'rout': [2.0], 'transfer': [1.0]}
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import statistics
import subprocess
import sys
import time
from dataclasses import dataclass
from fractions import Fraction
from pathlib import Path
from typing import Any, Callable

import numpy as np

__all__ = ["stack_netlist", "lcapy_netlist", "reference_values", "random_points", "Case", "run_case"]

ROOT = Path(__file__).resolve().parents[1]
#: Relative error allowed between a method's result and the independent reference.
TOLERANCE = 1e-9
#: A measurement repeats until it has MIN_RUNS runs and has used its time budget, at most MAX_RUNS.
MIN_RUNS, MAX_RUNS, BUDGET_S, QUICK_BUDGET_S = 3, 25, 2.0, 0.02

# -- the synthetic stack -------------------------------------------------------------


def stack_netlist(n: int) -> str:
    """SPICE-subset netlist of an n-stage cascode stack (nodes n1..nN, input current into n1)."""
    lines = [f"synthetic cascode stack, {n} stages, every device's symbols distinct", "Iin 0 n1 1"]
    for k in range(1, n + 1):
        emitter = "0" if k == 1 else f"n{k - 1}"
        lines.append(f"Q{k} n{k} 0 {emitter} QN")
    lines.append(".model QN npn")
    return "\n".join(lines) + "\n"


def lcapy_netlist(n: int) -> str:
    """The same stack as lcapy components: resistors and voltage-controlled current sources.

    lcapy's ``G n+ n- nc+ nc- g`` drives its current out of ``n+`` into the
    circuit (the opposite of SPICE, checked by the random-point comparison), so
    the hybrid-pi current ``gm*v(b,e)``, which flows from collector to emitter
    inside the device, is written ``G e c b e``.  Symbol names carry no
    underscore because lcapy reads ``_`` as a subscript.
    """
    lines = []
    for k in range(1, n + 1):
        c, e = f"n{k}", ("0" if k == 1 else f"n{k - 1}")
        lines.append(f"Rpi{k} 0 {e} rpiQ{k}")
        lines.append(f"Ro{k} {c} {e} roQ{k}")
        lines.append(f"Gm{k} {e} {c} 0 {e} gmQ{k}")
    return "\n".join(lines)


def random_points(n: int, count: int, seed: int = 1) -> list[dict[str, float]]:
    """Random bias points in scaled units: conductances are whole multiples of one unit.

    With the unit 10 uS: gm 1-40 mA/V, rpi 2.5-100 kohm, ro 10 kohm-1 Mohm
    (common practice ranges) become gm = 100..4000, 1/rpi = 1..40 and
    1/ro = 1..100.  Only ratios matter to the checks, and integer conductances
    keep the exact (rational) evaluation of million-term results fast.
    """
    rng = np.random.default_rng(seed + 1000 * n)
    points = []
    for _ in range(count):
        point = {}
        for k in range(1, n + 1):
            point[f"gm_Q{k}"] = float(rng.integers(100, 4001))
            point[f"rpi_Q{k}"] = 1.0 / float(rng.integers(1, 41))
            point[f"ro_Q{k}"] = 1.0 / float(rng.integers(1, 101))
        points.append(point)
    return points


def _exact(value: float) -> Fraction:
    """The exact value behind a point's float: an integer or the reciprocal of one."""
    return Fraction(value).limit_denominator(10**6)


def reference_values(n: int, points: list[dict[str, float]]) -> dict[str, list[float]]:
    """Independent numpy nodal solve of the stack: output impedance and transimpedance.

    Written from the hybrid-pi model only (KCL, currents leaving a node
    positive): rpi from emitter to ground (the base), ro collector-emitter, a
    current gm*(v_b - v_e) leaving the collector and entering the emitter.
    """
    out: dict[str, list[float]] = {"rout": [], "transfer": []}
    for p in points:
        y = np.zeros((n, n))

        def add(row: int | None, col: int | None, value: float) -> None:
            if row is not None and col is not None:
                y[row, col] += value

        for k in range(1, n + 1):
            c, e = k - 1, (None if k == 1 else k - 2)
            gpi, go, gm = 1 / p[f"rpi_Q{k}"], 1 / p[f"ro_Q{k}"], p[f"gm_Q{k}"]
            add(e, e, gpi)
            for a, b, sign in ((c, c, 1), (e, e, 1), (c, e, -1), (e, c, -1)):
                add(a, b, sign * go)
            add(c, e, -gm)  # gm*(0 - v_e) leaves the collector
            add(e, e, gm)  # ... and enters the emitter
        z = np.linalg.inv(y)
        out["rout"].append(float(z[n - 1, n - 1]))
        out["transfer"].append(float(z[n - 1, 0]))
    return out


# -- workers: each runs in its own process -----------------------------------------


def _peak_mb() -> float:
    import resource

    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def _measure(work: Callable[[], Any], budget: float = BUDGET_S) -> tuple[list[float], Any]:
    """Run ``work`` repeatedly within ``budget`` seconds; return the wall times and the last result."""
    times: list[float] = []
    result = None
    runs = MIN_RUNS if budget >= BUDGET_S else 1
    while len(times) < MAX_RUNS and (len(times) < runs or sum(times) < budget):
        start = time.perf_counter()
        result = work()
        times.append(time.perf_counter() - start)
        if times[0] > budget:  # a slow case: one run is the measurement
            break
    return times, result


def worker_symbias(task: dict) -> dict:
    """Whole process with symbias: netlist text -> Formula, Rout and transimpedance."""
    import warnings

    from symbias.analyses import output_resistance, transimpedance
    from symbias.errors import CircuitWarning
    from symbias.linear.mna import LinearProblem, solve
    from symbias.netlist import parse_netlist
    from symbias.linear.network import expand

    warnings.simplefilter("ignore", CircuitWarning)  # the top node has one connection by design
    n, backend = task["nodes"], task["backend"]
    text, top = stack_netlist(n), f"n{n}"

    def whole():
        circuit = parse_netlist(text)
        return output_resistance(circuit, top, backend=backend), transimpedance(circuit, top, "Iin", backend=backend)

    whole()  # warm-up: the figures exclude one-off costs of a first call
    times, (rout, transfer) = _measure(whole, task["budget"])
    drive = ((f"v:{top}", 1),)
    problem = LinearProblem(expand(parse_netlist(text)), rhs=drive, observe=drive)
    solve_times, _ = _measure(lambda: solve(problem, backend), task["budget"])
    values: dict[str, list[float]] = {"rout": [], "transfer": []}
    for point in task["points"]:
        for key, formula in (("rout", rout), ("transfer", transfer)):
            values[key].append(_formula_value(formula, point))
    return {
        "times": times,
        "solve_times": solve_times,
        "terms": [list(rout.nterms), list(transfer.nterms)],
        "values": values,
        "peak_mb": _peak_mb(),
    }


def _formula_value(formula, point: dict[str, float]) -> float:
    """Exact value of a Formula's ratio at a point (rational arithmetic in its own ring).

    The exact route, rather than ``Formula.evaluate``, keeps the check cheap for
    results of a million terms and free of rounding.
    """
    names = list(formula.ring.names)
    values = {}
    for name, variable in zip(names, formula.variables):
        number = _exact(point[variable.symbol])  # the stack has symbol generators only
        values[name] = number if variable.power == 1 else 1 / number
    return float(_ring_value(formula.numerator, names, values) / _ring_value(formula.denominator, names, values))


def worker_lcapy(task: dict) -> dict:
    """Whole process with lcapy: netlist text -> impedance and transimpedance expressions."""
    import sympy
    from lcapy import Circuit

    n = task["nodes"]
    text = lcapy_netlist(n)
    # warm-up on a two-resistor network: lcapy imports parts of itself lazily on first use,
    # and symbias's figures also exclude the first call
    Circuit("R1 1 0 Ra\nR2 1 0 Rb").impedance(1, 0).sympy

    def whole():
        circuit = Circuit(text)
        return circuit.impedance(f"n{n}", 0).sympy, circuit.transimpedance("n1", 0, f"n{n}", 0).sympy

    times, (rout, transfer) = _measure(whole, task["budget"])
    fractions = [sympy.fraction(sympy.together(e)) for e in (rout, transfer)]
    values: dict[str, list[float]] = {"rout": [], "transfer": []}
    for point in task["points"]:
        exact = {k.replace("_", ""): _exact(v) for k, v in point.items()}
        for key, (num, den) in zip(("rout", "transfer"), fractions):
            values[key].append(float(_sympy_value(num, [], exact) / _sympy_value(den, [], exact)))
    terms = [len(sympy.Add.make_args(sympy.expand(e))) for e in fractions[0]]
    return {"times": times, "values": values, "terms": [terms], "peak_mb": _peak_mb()}


def _matrix_task(n: int) -> dict:
    """The stack's polynomial MNA matrix as symbias builds it, in a JSON-able form."""
    import warnings

    from symbias.errors import CircuitWarning
    from symbias.linear.mna import build_system, unknowns
    from symbias.netlist import parse_netlist
    from symbias.linear.network import expand

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CircuitWarning)
        network = expand(parse_netlist(stack_netlist(n)))
    ring, variables, entries = build_system(network, "sympy")
    labels = unknowns(network)
    return {
        "size": len(labels),
        "names": [f"x{i}" for i in range(len(variables))],
        "meaning": [[v.symbol, v.power] for v in variables],
        "entries": [[r, c, [[list(e), str(q)] for e, q in ring.terms(p)]] for (r, c), p in entries.items()],
        "input": labels.index("v:n1"),
        "output": labels.index(f"v:n{n}"),
    }


def _generator_values(matrix: dict, point: dict[str, float]) -> dict[str, Fraction]:
    out = {}
    for name, (symbol, power) in zip(matrix["names"], matrix["meaning"]):
        value = _exact(point[symbol])
        out[name] = value if power == 1 else 1 / value
    return out


def _sympy_matrix(matrix: dict):
    import sympy

    gens = sympy.symbols(matrix["names"])
    m = sympy.zeros(matrix["size"], matrix["size"])
    for r, c, terms in matrix["entries"]:
        m[r, c] = sympy.Add(*[sympy.Rational(q) * sympy.Mul(*[g**e for g, e in zip(gens, exps)]) for exps, q in terms])
    return gens, m


def worker_method(task: dict) -> dict:
    """One candidate solve method, from the polynomial MNA matrix to Rout and transfer ratios."""
    import sympy

    matrix = task["matrix"]
    method = task["method"]
    size, i_in, i_out = matrix["size"], matrix["input"], matrix["output"]
    sign = (-1) ** (i_in + i_out)

    def keep(drop: int) -> list[int]:
        return [i for i in range(size) if i != drop]

    # Every method yields (numerator, denominator) of Rout = (A^-1)[out,out] and of
    # the transfer (A^-1)[out,in] = C[in,out]/det, as ring polynomials or sympy expressions.
    if method in ("minor-flint", "minor-sympy"):
        from symbias.linear.mna import CofactorSolver
        from symbias.linear.polys import make_ring

        ring = make_ring(tuple(matrix["names"]), method.split("-")[1])
        entries = {(r, c): ring.from_terms([(tuple(e), Fraction(q)) for e, q in terms])
                   for r, c, terms in matrix["entries"]}

        def work():
            solver = CofactorSolver(ring, size, entries)
            det = solver.det()
            return (solver.cofactor(i_out, i_out), det), (solver.cofactor(i_in, i_out), det)

        times, results = _measure(work, task["budget"])
        terms = [ring.nterms(results[0][0]), ring.nterms(results[0][1])]
        evaluate = _ring_value
    else:
        gens, m = _sympy_matrix(matrix)
        if method.startswith("domainmatrix"):
            from sympy.polys.matrices import DomainMatrix

            domain = sympy.ZZ[tuple(gens)]
            dm = DomainMatrix.from_Matrix(m).convert_to(domain)
            if method == "domainmatrix-det":

                def work():
                    det = dm.det()
                    c_out = dm.extract(keep(i_out), keep(i_out)).det()
                    c_tr = dm.extract(keep(i_in), keep(i_out)).det() * sign
                    return (c_out, det), (c_tr, det)

            else:
                units = sympy.Matrix(size, 2, lambda r, c: 1 if r == (i_out, i_in)[c] else 0)
                b = DomainMatrix.from_Matrix(units).convert_to(domain)

                def work():
                    xnum, xden = dm.solve_den(b)
                    return (xnum[i_out, 0].element, xden), (xnum[i_out, 1].element, xden)

            times, raw = _measure(work, task["budget"])
            results = tuple((domain.to_sympy(a), domain.to_sympy(b)) for a, b in raw)
        elif method.startswith("symengine"):
            import symengine

            se_m = symengine.Matrix(m.tolist())
            if method == "symengine-lu":
                units = symengine.Matrix([[int(r == i_out), int(r == i_in)] for r in range(size)])

                def work():
                    x = se_m.LUsolve(units)
                    return tuple(sympy.fraction(sympy.cancel(sympy.together(sympy.sympify(x[i_out, k]))))
                                 for k in (0, 1))

            else:

                def minor_det(rows: list[int], cols: list[int]):
                    return symengine.Matrix([[se_m[r, c] for c in cols] for r in rows]).det()

                def work():
                    det = sympy.sympify(se_m.det())
                    c_out = sympy.sympify(minor_det(keep(i_out), keep(i_out)))
                    c_tr = sympy.sympify(minor_det(keep(i_in), keep(i_out))) * sign
                    return sympy.fraction(sympy.cancel(c_out / det)), sympy.fraction(sympy.cancel(c_tr / det))

            times, results = _measure(work, task["budget"])
        else:
            raise ValueError(f"unknown method {method!r}")
        terms = [len(sympy.Add.make_args(sympy.expand(e))) for e in results[0]]
        evaluate = _sympy_value
    values: dict[str, list[float]] = {"rout": [], "transfer": []}
    for point in task["points"]:
        exact = _generator_values(matrix, point)
        for key, (num, den) in zip(("rout", "transfer"), results):
            values[key].append(float(evaluate(num, matrix["names"], exact) / evaluate(den, matrix["names"], exact)))
    return {"times": times, "values": values, "terms": [terms], "peak_mb": _peak_mb()}


def _sympy_value(expr, names: list[str], values: dict[str, Fraction]) -> Fraction:
    """Exact value of a sympy expression at rational values."""
    import sympy

    expr = sympy.sympify(expr)
    # match by name: lcapy's symbols carry assumptions, so Symbol(name) is not the same object
    subs = {s: sympy.Rational(values[s.name].numerator, values[s.name].denominator) for s in expr.free_symbols}
    value = sympy.Rational(expr.xreplace(subs))
    return Fraction(int(value.p), int(value.q))


def _ring_value(poly, names: list[str], values: dict[str, Fraction]) -> Fraction:
    """Exact value of a ring polynomial (flint or sympy backend) at rational values."""
    if poly is None:  # the solver's zero
        return Fraction(0)
    import flint

    if hasattr(poly, "ring"):  # sympy PolyElement: evaluated in flint, as pure Python takes minutes at 1e5 terms
        gens = tuple(str(g) for g in poly.ring.symbols)
        ctx = flint.fmpq_mpoly_ctx.get(gens, "lex")
        poly = ctx.from_dict({tuple(e): flint.fmpq(int(c.numerator), int(c.denominator)) for e, c in poly.terms()})
        names = list(names) + [g for g in gens if g not in names]  # the ring's placeholder generator, if any
        values = {**{g: Fraction(0) for g in gens}, **values}
    args = [values[name] for name in names]
    value = poly(*[flint.fmpq(a.numerator, a.denominator) for a in args])
    return Fraction(int(value.p), int(value.q))


WORKERS = {"symbias": worker_symbias, "lcapy": worker_lcapy, "method": worker_method}


def _worker_main() -> None:
    task = json.loads(sys.stdin.read())
    result = WORKERS[task["worker"]](task)
    sys.stdout.write(json.dumps(result))


# -- the driver ----------------------------------------------------------------------


@dataclass(frozen=True)
class Case:
    """Outcome of one case: times in seconds or why there are none."""

    times: tuple[float, ...] = ()
    data: Any = None
    status: str = "ok"  # ok | timeout | error | skipped | wrong
    detail: str = ""
    process_s: float = 0.0

    @property
    def median(self) -> float | None:
        return statistics.median(self.times) if self.times and self.status == "ok" else None


def run_case(task: dict, timeout: float) -> Case:
    """Run one worker task in a fresh Python process with a timeout."""
    start = time.perf_counter()
    try:
        proc = subprocess.run(
            [sys.executable, str(Path(__file__).resolve()), "--worker"],
            input=json.dumps(task), capture_output=True, text=True, timeout=timeout, cwd=ROOT,
        )
    except subprocess.TimeoutExpired:
        return Case(status="timeout", detail=f"> {timeout:g} s")
    wall = time.perf_counter() - start
    if proc.returncode != 0:
        last = (proc.stderr.strip().splitlines() or ["no output"])[-1]
        return Case(status="error", detail=last[:200], process_s=wall)
    data = json.loads(proc.stdout)
    return Case(times=tuple(data["times"]), data=data, process_s=wall)


def check(case: Case, expected: dict[str, list[float]]) -> Case:
    """Mark a case wrong unless its values match the reference to :data:`TOLERANCE`."""
    if case.status != "ok":
        return case
    for key, want in expected.items():
        got = np.array(case.data["values"][key])
        error = float(np.max(np.abs(got - np.array(want)) / np.abs(np.array(want))))
        if not error < TOLERANCE:
            return Case(case.times, case.data, "wrong", f"{key}: relative error {error:.1e}", case.process_s)
    return case


def fmt_time(case: Case) -> str:
    if case.status == "ok":
        return _seconds(case.median)
    return {"timeout": case.detail, "skipped": "not run", "wrong": "WRONG", "error": "error"}[case.status]


def _seconds(value: float | None) -> str:
    if value is None:
        return "-"
    if value < 1e-3:
        return f"{value * 1e6:.0f} us"
    if value < 1:
        return f"{value * 1e3:.1f} ms"
    return f"{value:.2f} s"


def ratio(slow: Case, fast: Case) -> str:
    """``slow / fast`` as text; a timed-out slow case gives a lower bound."""
    if fast.median is None:
        return "-"
    if slow.status == "timeout":
        return f"> {float(slow.detail.split()[1]) / fast.median:,.0f}x"
    if slow.median is None:
        return "-"
    return f"{slow.median / fast.median:,.1f}x"


def table(header: list[str], rows: list[list[str]]) -> str:
    lines = ["| " + " | ".join(header) + " |", "|" + "|".join("---" for _ in header) + "|"]
    lines += ["| " + " | ".join(row) + " |" for row in rows]
    return "\n".join(lines)


def bench_examples(backends: tuple[str, ...], budget: float) -> tuple[str, list[str]]:
    """Part (a): derive each example's quantities in this process (after one warm-up)."""
    import warnings

    from symbias.analyses import current_gain, output_resistance
    from symbias.errors import CircuitWarning
    from symbias.netlist import read_netlist

    warnings.simplefilter("ignore", CircuitWarning)
    rows, problems = [], []
    rng = np.random.default_rng(7)
    for path in sorted((ROOT / "examples").glob("*.cir")):
        circuit = read_netlist(path)
        jobs = []
        if circuit.has_element("Vout"):
            jobs.append(("Rout at Vout", lambda b, p=path: output_resistance(read_netlist(p), "Vout", backend=b)))
            for source in circuit.elements_of("I"):
                jobs.append((f"Vout/{source.name}",
                             lambda b, p=path, s=source.name: current_gain(read_netlist(p), "Vout", s, backend=b)))
        for label, derive in jobs:
            medians, results = [], []
            for backend in backends:
                derive(backend)
                times, formula = _measure(lambda: derive(backend), budget)
                medians.append(statistics.median(times))
                results.append(formula)
            point = {s.name: float(rng.uniform(1e-3, 4e-2) if s.name.startswith("gm") else rng.uniform(1e4, 1e6))
                     for s in results[0].symbols}
            values = [float(f.evaluate(point, route="polynomial")) for f in results]
            if results[0].problem is not None:
                full = {s.name: point.get(s.name, 1e5) for s in results[0].problem.network.symbols}
                values.append(float(results[0].evaluate(full, route="solve")))
            spread = max(abs(v / values[0] - 1) for v in values) if values[0] else max(abs(v) for v in values)
            if not spread < TOLERANCE:
                problems.append(f"{path.name} {label}: backends/routes disagree by {spread:.1e}")
            row = [path.name, label, "%d / %d" % results[0].nterms] + [_seconds(m) for m in medians]
            if len(medians) == 2:
                row.append(f"{medians[1] / medians[0]:.1f}x")
            rows.append(row)
    header = ["example", "quantity", "terms (num / den)"] + [f"{b}" for b in backends]
    if len(backends) == 2:
        header.append("sympy / flint")
    return table(header, rows), problems


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--quick", action="store_true", help="small sizes, no lcapy, no symengine (seconds)")
    parser.add_argument("--nodes", type=int, nargs="*", help="stack sizes (default 2..12; quick: 4)")
    parser.add_argument("--timeout", type=float, default=60.0, help="seconds per case (default 60)")
    parser.add_argument("--no-lcapy", action="store_true", help="skip the lcapy comparison")
    parser.add_argument("--output", type=Path, default=ROOT / "bench" / "results.md", help="results file")
    parser.add_argument("--points", type=int, default=3, help="random points per correctness check")
    parser.add_argument("--worker", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.worker:
        _worker_main()
        return 0
    sizes = args.nodes or ([4] if args.quick else list(range(2, 13)))
    use_lcapy = not (args.quick or args.no_lcapy)
    have_symengine = _importable("symengine")
    methods = ["minor-flint", "minor-sympy", "domainmatrix-det", "domainmatrix-solve_den"]
    if have_symengine and not args.quick:
        methods += ["symengine-lu", "symengine-det"]
    out: list[str] = []

    def emit(text: str = "") -> None:
        print(text, flush=True)
        out.append(text)

    emit("# symbias derivation benchmark")
    emit()
    emit(_machine_line(use_lcapy, have_symengine))
    emit()
    emit("Times are medians of repeated runs inside one process (imports excluded); every ratio compares two")
    emit("figures measured in this run. Correctness: every stack result is checked at random points against")
    emit(f"an independent numpy nodal solve (relative error < {TOLERANCE:g}).")
    emit()
    emit("## (a) Shipped examples: netlist file to Formula")
    emit()
    budget = QUICK_BUDGET_S if args.quick else BUDGET_S
    text, problems = bench_examples(("flint", "sympy"), budget)
    emit(text)
    emit()

    emit("## (b) Synthetic cascode stack: symbias vs lcapy, whole process (netlist text to exact result)")
    emit()
    emit("Quantities: output impedance at the top node and transimpedance bottom -> top. `solve` is the engine's")
    emit("`symbias.linear.mna.solve` of the output-impedance problem (stamping, encoding, memoised cofactor expansion).")
    emit()
    rows, targets = [], []
    lcapy_dead = sympy_dead = False
    for n in sizes:
        points = random_points(n, args.points)
        expected = reference_values(n, points)
        flint = check(run_case({"worker": "symbias", "nodes": n, "backend": "flint", "points": points, "budget": budget},
                               args.timeout), expected)
        symp = Case(status="skipped") if sympy_dead else check(
            run_case({"worker": "symbias", "nodes": n, "backend": "sympy", "points": points, "budget": budget}, args.timeout), expected)
        sympy_dead = sympy_dead or symp.status == "timeout"
        lc = Case(status="skipped")
        if use_lcapy and not lcapy_dead:
            lc = check(run_case({"worker": "lcapy", "nodes": n, "points": points, "budget": budget}, args.timeout), expected)
            lcapy_dead = lc.status == "timeout"
        for name, case in (("symbias flint", flint), ("symbias sympy", symp), ("lcapy", lc)):
            if case.status in ("wrong", "error"):
                problems.append(f"stack {n}, {name}: {case.status} {case.detail}")
        solve_s = statistics.median(flint.data["solve_times"]) if flint.status == "ok" else None
        terms = "%d / %d" % tuple(flint.data["terms"][0]) if flint.status == "ok" else "-"
        rows.append([str(n), terms, _seconds(solve_s), fmt_time(flint), fmt_time(symp), fmt_time(lc),
                     ratio(lc, flint) if use_lcapy else "-", ratio(symp, flint),
                     f"{flint.data['peak_mb']:.0f}" if flint.status == "ok" else "-"])
        targets.append((n, flint, lc, solve_s))
        print(f"  stack {n}: " + ", ".join(rows[-1][2:6]), file=sys.stderr, flush=True)
    emit(table(["nodes", "Rout terms (num / den)", "solve (flint)", "symbias flint", "symbias sympy", "lcapy",
                "lcapy / symbias", "sympy / flint", "peak MB (flint process)"], rows))
    emit()
    emit("'not run' after a timeout: a smaller size already exceeded the limit.")
    emit()

    emit("## (c) Candidate solve methods on the same stacks (polynomial MNA matrix to both results)")
    emit()
    rows = []
    dead: set[str] = set()
    for n in sizes:
        matrix = _matrix_task(n)
        points = random_points(n, args.points)
        expected = reference_values(n, points)
        cases = {}
        for method in methods:
            if method in dead:
                cases[method] = Case(status="skipped")
                continue
            task = {"worker": "method", "method": method, "matrix": matrix, "points": points, "budget": budget}
            cases[method] = check(run_case(task, args.timeout), expected)
            if cases[method].status == "timeout":
                dead.add(method)
            if cases[method].status in ("wrong", "error"):
                problems.append(f"stack {n}, {method}: {cases[method].status} {cases[method].detail}")
        ours = cases["minor-flint"]
        print(f"  methods {n}: " + ", ".join(fmt_time(c) for c in cases.values()), file=sys.stderr, flush=True)
        rows.append([str(n)] + [f"{fmt_time(cases[m])} ({ratio(cases[m], ours)})" if m != "minor-flint"
                                else fmt_time(cases[m]) for m in methods])
    emit(table(["nodes"] + methods, rows))
    emit()
    emit("In brackets: time relative to the memoised minor expansion in python-flint (the engine's default).")
    if not have_symengine:
        emit("symengine is not installed: its two methods were not measured (`pip install symengine`).")
    emit()

    emit("## Targets (issue: derivation benchmark)")
    emit()
    emit(_targets(targets, use_lcapy, args.timeout))
    emit()
    if problems:
        emit("## Problems")
        emit()
        for p in problems:
            emit(f"- {p}")
        emit()
    args.output.write_text("\n".join(out) + "\n")
    print(f"written {args.output}", flush=True)
    return 1 if problems else 0


def _targets(targets, use_lcapy: bool, timeout: float) -> str:
    lines = []
    by_n = {n: (flint, lc, solve_s) for n, flint, lc, solve_s in targets}
    if 8 in by_n and by_n[8][2] is not None:
        s = by_n[8][2]
        lines.append(f"- 8-node output impedance, solve time {_seconds(s)} "
                     f"(target < 10 ms): {'met' if s < 0.010 else 'MISSED'}")
    if 12 in by_n and by_n[12][2] is not None:
        s = by_n[12][2]
        lines.append(f"- 12-node output impedance, solve time {_seconds(s)} "
                     f"(target < 1 s): {'met' if s < 1.0 else 'MISSED'}")
    if use_lcapy:
        finished = [(n, f, lc) for n, (f, lc, _) in by_n.items() if lc.status == "ok" and f.median]
        if finished:
            worst = min(lc.median / f.median for _, f, lc in finished)
            lines.append(f"- at least 20x faster than lcapy where lcapy finishes (sizes "
                         f"{', '.join(str(n) for n, _, _ in finished)}): smallest ratio {worst:,.0f}x: "
                         f"{'met' if worst >= 20 else 'MISSED'}")
        slow = [(n, f) for n, (f, lc, _) in by_n.items() if lc.status in ("timeout", "skipped")]
        if slow:
            ok = all(f.median is not None and f.median < timeout for _, f in slow)
            lines.append(f"- where lcapy does not finish within {timeout:g} s (sizes "
                         f"{', '.join(str(n) for n, _ in slow)}), symbias finishes: {'met' if ok else 'MISSED'}")
    return "\n".join(lines) if lines else "- not evaluated in this mode"


def _importable(name: str) -> bool:
    import importlib.util

    return importlib.util.find_spec(name) is not None


def _machine_line(use_lcapy: bool, have_symengine: bool) -> str:
    import flint
    import sympy

    parts = [f"Python {platform.python_version()}", f"{os.cpu_count()} CPUs", f"sympy {sympy.__version__}",
             f"python-flint {flint.__version__}"]
    if use_lcapy:
        import importlib.metadata as md

        parts.append(f"lcapy {md.version('lcapy')}")
    if have_symengine:
        import importlib.metadata as md

        parts.append(f"symengine {md.version('symengine')}")
    load = ", ".join(f"{x:.1f}" for x in os.getloadavg())
    return ("Machine: " + ", ".join(parts) + f"; run {time.strftime('%Y-%m-%d %H:%M')}; "
            f"load average at start {load} (other jobs share the machine: absolute times vary, ratios less).")


if __name__ == "__main__":
    sys.exit(main())
