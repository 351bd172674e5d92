"""Derivation benchmark: how fast symbias derives exact small-signal results, and writes them.

Run from the repository root::

    python3 bench/derive.py --output bench/results.md   # full run (about 15-20 minutes)
    python3 bench/derive.py --quick                     # seconds: small sizes, no lcapy, no symengine

The results file is written only when ``--output`` names one.  Four parts,
all measured in the same run so that every figure can be read as a ratio
against a reference timed on the same machine at the same moment:

(a) every shipped example (``examples/*.cir``): the output resistance at
    ``Vout`` and, where the netlist has a current source, the current gain
    ``Vout/<I source>``, derived with both polynomial backends;
(b) a synthetic stack of N transistor stages (N = 2..12 nodes, every device's
    symbols distinct, see ``bench/common.py``): the output impedance at the
    top node and the transimpedance from the bottom node to the top node,
    netlist text to exact result, with symbias and with lcapy (the reference
    library) given its fastest input form (admittances and VCCS).  Each is
    timed warm inside its process (imports done, after a warm-up) and as a
    whole process (interpreter start, imports and one derivation);
(c) the candidate solve methods of the design notes on the same stacks
    (``bench/methods.py``), all from the same polynomial MNA matrix;
(d) the end-to-end cost of ``symbias derive --json`` on the 12-node stack
    (6 in quick mode): its time against the derivation and its peak memory
    against the size of the JSON it writes.

Every case runs in its own Python process with a timeout, so a method that
explodes is reported as "> T s" and cannot stall the run.  Every result is
checked at random points against an independent numpy nodal solve of the
stack (it imports nothing from symbias); a disagreement makes the script exit
with status 1.

Examples
--------
>>> [line.split()[0] for line in lcapy_netlist(1).splitlines()]
['Ypi1', 'Yo1', 'Gm1']
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from common import (BUDGET_S, QUICK_BUDGET_S, TOLERANCE, Case, _exact, _seconds, check, fmt_time,  # noqa: F401
                    lcapy_netlist, lcapy_values, measure, peak_mb, random_points, ratio, reference_values, ring_value,
                    run_case, stack_netlist, sympy_value, table)
from methods import matrix_task, worker_method

__all__ = ["stack_netlist", "lcapy_netlist", "reference_values", "random_points", "Case", "run_case", "check",
           "ratio"]

ROOT = Path(__file__).resolve().parents[1]


# -- workers: each runs in its own process -----------------------------------------


def _symbias_derivation(n: int, backend: str):
    """A function deriving both stack quantities from netlist text (imports done here)."""
    import warnings

    from symbias.analyses import output_resistance, transimpedance
    from symbias.errors import CircuitWarning
    from symbias.netlist import parse_netlist

    warnings.simplefilter("ignore", CircuitWarning)  # the top node has one connection by design
    text, top = stack_netlist(n), f"n{n}"

    def whole():
        circuit = parse_netlist(text)
        return output_resistance(circuit, top, backend=backend), transimpedance(circuit, top, "Iin", backend=backend)

    return whole


def _lcapy_derivation(n: int):
    """A function deriving both stack quantities with lcapy (imports done here)."""
    from lcapy import Circuit

    text = lcapy_netlist(n)

    def whole():
        circuit = Circuit(text)
        return circuit.impedance(f"n{n}", 0).sympy, circuit.transimpedance("n1", 0, f"n{n}", 0).sympy

    return whole


def worker_once(task: dict) -> dict:
    """A whole process: imports and one derivation, nothing else (the driver times the process)."""
    start = time.perf_counter()
    work = _lcapy_derivation(task["nodes"]) if task["tool"] == "lcapy" else \
        _symbias_derivation(task["nodes"], task.get("backend", "flint"))
    work()
    return {"times": [time.perf_counter() - start], "peak_mb": peak_mb()}


def worker_symbias(task: dict) -> dict:
    """symbias warm: netlist text -> Formula, Rout and transimpedance, timed after imports and a warm-up."""
    from symbias.linear.mna import LinearProblem, solve
    from symbias.linear.network import expand
    from symbias.netlist import parse_netlist

    n, backend = task["nodes"], task["backend"]
    whole = _symbias_derivation(n, backend)
    whole()  # warm-up: the figures exclude one-off costs of a first call
    times, (rout, transfer) = measure(whole, task["budget"])
    drive = ((f"v:n{n}", 1),)
    problem = LinearProblem(expand(parse_netlist(stack_netlist(n))), rhs=drive, observe=drive)
    solve_times, _ = measure(lambda: solve(problem, backend), task["budget"])
    values: dict[str, list[float]] = {"rout": [], "transfer": []}
    for point in task["points"]:
        for key, formula in (("rout", rout), ("transfer", transfer)):
            values[key].append(_formula_value(formula, point))
    return {
        "times": times,
        "solve_times": solve_times,
        "terms": [list(rout.nterms), list(transfer.nterms)],
        "values": values,
        "peak_mb": peak_mb(),
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
    return float(ring_value(formula.numerator, names, values) / ring_value(formula.denominator, names, values))


def worker_lcapy(task: dict) -> dict:
    """lcapy warm: netlist text -> impedance and transimpedance expressions, after imports and a warm-up."""
    import sympy
    from lcapy import Circuit

    # warm-up on a two-admittance network: lcapy imports parts of itself lazily on first use,
    # and symbias's figures also exclude the first call
    Circuit("Y1 1 0 Ya\nY2 1 0 Yb").impedance(1, 0).sympy
    times, (rout, transfer) = measure(_lcapy_derivation(task["nodes"]), task["budget"])
    fractions = [sympy.fraction(sympy.together(e)) for e in (rout, transfer)]
    values: dict[str, list[float]] = {"rout": [], "transfer": []}
    for point in task["points"]:
        exact = lcapy_values(point)
        for key, (num, den) in zip(("rout", "transfer"), fractions):
            values[key].append(float(sympy_value(num, [], exact) / sympy_value(den, [], exact)))
    terms = [len(sympy.Add.make_args(sympy.expand(e))) for e in fractions[0]]
    return {"times": times, "values": values, "terms": [terms], "peak_mb": peak_mb()}


def worker_derivation_only(task: dict) -> dict:
    """The output resistance alone, warm, and the peak memory of the process: the reference of part (d)."""
    import warnings

    import symbias.cli  # noqa: F401  (the same imports as the command line, so processes compare)
    from symbias.analyses import output_resistance
    from symbias.netlist import read_netlist

    warnings.simplefilter("ignore")
    path, port = task["path"], task["port"]
    output_resistance(read_netlist(path), port)
    times, formula = measure(lambda: output_resistance(read_netlist(path), port), task["budget"])
    return {"times": times, "terms": list(formula.nterms), "peak_mb": peak_mb()}


WORKERS = {"symbias": worker_symbias, "lcapy": worker_lcapy, "method": worker_method, "once": worker_once,
           "derivation": worker_derivation_only}


def _worker_main() -> None:
    task = json.loads(sys.stdin.read())
    result = WORKERS[task["worker"]](task)
    sys.stdout.write(json.dumps(result))


# -- the driver ----------------------------------------------------------------------


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
                times, formula = measure(lambda: derive(backend), budget)
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
    parser.add_argument("--output", type=Path, default=None, help="write the results to this markdown file")
    parser.add_argument("--points", type=int, default=3, help="random points per correctness check")
    parser.add_argument("--worker", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.worker:
        _worker_main()
        return 0
    use_lcapy = not (args.quick or args.no_lcapy)
    have_symengine = _importable("symengine")
    out: list[str] = []

    def emit(text: str = "") -> None:
        print(text, flush=True)
        out.append(text)

    emit("# symbias derivation benchmark")
    emit()
    emit(_machine_line(use_lcapy, have_symengine))
    emit()
    emit("Warm times are medians of repeated runs inside one process (imports done, one warm-up call);")
    emit("process times are whole processes (interpreter start, imports, one derivation). Every ratio")
    emit("compares two figures measured in this run. Correctness: every stack result is checked at random")
    emit(f"points against an independent numpy nodal solve (relative error < {TOLERANCE:g}).")
    emit()
    emit("## (a) Shipped examples: netlist file to Formula")
    emit()
    budget = QUICK_BUDGET_S if args.quick else BUDGET_S
    text, problems = bench_examples(("flint", "sympy"), budget)
    emit(text)
    emit()
    targets = _stack_part(args, budget, use_lcapy, emit, problems)
    _methods_part(args, budget, have_symengine, emit, problems)
    output_lines = _output_part(args, budget, emit, problems)
    emit("## Targets")
    emit()
    emit(_targets(targets, use_lcapy, args.timeout))
    for line in output_lines:
        emit(line)
    emit()
    if problems:
        emit("## Problems")
        emit()
        for p in problems:
            emit(f"- {p}")
        emit()
    if args.output is not None:
        args.output.write_text("\n".join(out) + "\n")
        print(f"written {args.output}", flush=True)
    return 1 if problems else 0


def _process_case(task: dict, timeout: float, runs: int) -> Case:
    """Median wall time of ``runs`` whole processes of one task (start-up included)."""
    walls = []
    for _ in range(runs):
        case = run_case(task, timeout)
        if case.status != "ok":
            return case
        walls.append(case.process_s)
    return Case(times=tuple(walls), data=case.data, process_s=statistics.median(walls))


def _stack_part(args, budget: float, use_lcapy: bool, emit, problems: list[str]) -> list:
    """Part (b): the synthetic stack, symbias against lcapy, warm and as whole processes."""
    emit("## (b) Synthetic cascode stack: symbias vs lcapy (netlist text to exact result)")
    emit()
    emit("Quantities: output impedance at the top node and transimpedance bottom -> top; lcapy gets its fastest")
    emit("input form (admittances and VCCS). `solve` is the engine's `symbias.linear.mna.solve` of the")
    emit("output-impedance problem (stamping, encoding, memoised cofactor expansion).")
    emit()
    sizes = args.nodes or ([4] if args.quick else list(range(2, 13)))
    rows, targets = [], []
    lcapy_dead = sympy_dead = False
    for n in sizes:
        points = random_points(n, args.points)
        expected = reference_values(n, points)
        task = {"worker": "symbias", "nodes": n, "points": points, "budget": budget}
        flint = check(run_case({**task, "backend": "flint"}, args.timeout), expected)
        symp = Case(status="skipped") if sympy_dead else check(run_case({**task, "backend": "sympy"}, args.timeout),
                                                               expected)
        sympy_dead = sympy_dead or symp.status == "timeout"
        lc = Case(status="skipped")
        if use_lcapy and not lcapy_dead:
            lc = check(run_case({"worker": "lcapy", "nodes": n, "points": points, "budget": budget}, args.timeout),
                       expected)
            lcapy_dead = lc.status == "timeout"
        runs = 1 if args.quick else 3
        flint_process = _process_case({"worker": "once", "tool": "symbias", "nodes": n}, args.timeout, runs)
        lc_process = Case(status="skipped")
        if lc.status == "ok":
            lc_process = _process_case({"worker": "once", "tool": "lcapy", "nodes": n}, args.timeout,
                                       runs if lc.median < 5 else 1)
        for name, case in (("symbias flint", flint), ("symbias sympy", symp), ("lcapy", lc)):
            if case.status in ("wrong", "error"):
                problems.append(f"stack {n}, {name}: {case.status} {case.detail}")
        solve_s = statistics.median(flint.data["solve_times"]) if flint.status == "ok" else None
        terms = "%d / %d" % tuple(flint.data["terms"][0]) if flint.status == "ok" else "-"
        rows.append([str(n), terms, _seconds(solve_s), fmt_time(flint), fmt_time(lc),
                     ratio(lc, flint) if use_lcapy else "-", _process_time(flint_process),
                     _process_time(lc_process), _process_ratio(lc_process, flint_process, lc),
                     fmt_time(symp), ratio(symp, flint), f"{flint.data['peak_mb']:.0f}" if flint.status == "ok" else "-"])
        targets.append((n, flint, lc, solve_s, flint_process, lc_process))
        print(f"  stack {n}: " + ", ".join(rows[-1][2:9]), file=sys.stderr, flush=True)
    emit(table(["nodes", "Rout terms (num / den)", "solve (flint)", "symbias warm", "lcapy warm",
                "lcapy / symbias warm", "symbias process", "lcapy process", "lcapy / symbias process",
                "symbias sympy warm", "sympy / flint", "peak MB (flint)"], rows))
    emit()
    emit("'not run' after a timeout: a smaller size already exceeded the limit. Process times are medians of")
    emit("three processes (one for the slow lcapy sizes); a process ratio after a warm timeout is a lower bound.")
    emit()
    return targets


def _process_time(case: Case) -> str:
    return _seconds(case.process_s) if case.status == "ok" else fmt_time(case)


def _process_ratio(slow: Case, fast: Case, slow_warm: Case) -> str:
    if fast.status != "ok" or slow.status != "ok":
        return "-"
    return f"{slow.process_s / fast.process_s:,.1f}x"


def _methods_part(args, budget: float, have_symengine: bool, emit, problems: list[str]) -> None:
    """Part (c): the candidate solve methods of the design notes, from the same polynomial matrix."""
    emit("## (c) Candidate solve methods on the same stacks (polynomial MNA matrix to both results)")
    emit()
    methods = ["minor-flint", "minor-sympy", "domainmatrix-det", "domainmatrix-solve_den"]
    if have_symengine and not args.quick:
        methods += ["symengine-lu", "symengine-det"]
    rows = []
    dead: set[str] = set()
    for n in args.nodes or ([4] if args.quick else list(range(2, 13))):
        matrix = matrix_task(n)
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


def _output_part(args, budget: float, emit, problems: list[str]) -> list[str]:
    """Part (d): ``symbias derive --json`` end to end against the derivation alone; returns target lines."""
    n = 6 if args.quick else 12
    emit(f"## (d) `symbias derive --json` on the {n}-node stack, end to end")
    emit()
    with tempfile.TemporaryDirectory() as folder:
        netlist = Path(folder) / f"stack{n}.cir"
        netlist.write_text(stack_netlist(n))
        task = {"worker": "derivation", "path": str(netlist), "port": f"n{n}", "budget": budget}
        warm = run_case(task, args.timeout * 5)
        once = run_case({**task, "budget": 0.0}, args.timeout * 5)
        output = Path(folder) / "result.json"
        wall, peak_kb, status = _run_measured([sys.executable, "-m", "symbias", "derive", str(netlist), "--rout",
                                               f"n{n}", "--json"], output, args.timeout * 10)
        size = output.stat().st_size if output.exists() else 0
        terms_ok = _json_terms(output) == (warm.data or {}).get("terms")
    if warm.status != "ok" or once.status != "ok" or status != 0 or not terms_ok:
        problems.append(f"derive --json on the {n}-node stack: failed (status {status}, terms match {terms_ok})")
        return []
    derivation = warm.median
    rows = [["derivation, warm (netlist file to Formula)", _seconds(derivation), f"{warm.data['peak_mb']:.0f}"],
            ["derivation, whole process", _seconds(once.process_s), f"{once.data['peak_mb']:.0f}"],
            ["`derive --json`, whole process", _seconds(wall), f"{peak_kb / 1024:.0f}"]]
    emit(table(["run", "time", "peak MB"], rows))
    emit()
    time_ratio = wall / derivation
    output_ratio = (wall - once.process_s) / derivation
    memory_ratio = peak_kb * 1024 / size
    emit(f"JSON written: {size / 1e6:,.1f} MB. `derive --json` / warm derivation: {time_ratio:,.1f}x; the output")
    emit("path alone (whole `derive --json` process minus the whole derivation process) / warm derivation:")
    emit(f"{output_ratio:,.1f}x. Peak memory of the `derive --json` process / JSON size: {memory_ratio:.2f}.")
    emit()
    return [f"- `derive --json` on the {n}-node stack: output path {output_ratio:,.1f}x the derivation "
            f"(target <= 5x): {'met' if output_ratio <= 5 else 'MISSED'}; peak memory {memory_ratio:.2f}x the "
            f"output (target <= 2x): {'met' if memory_ratio <= 2 else 'MISSED'}"]


def _run_measured(command: list[str], output: Path, timeout: float) -> tuple[float, int, int]:
    """Wall time, peak RSS (KB) and exit status of one child process writing its stdout to ``output``."""
    start = time.perf_counter()
    with open(output, "wb") as sink:
        child = subprocess.Popen(command, stdout=sink, stderr=subprocess.DEVNULL, cwd=ROOT)
        deadline = start + timeout
        while True:
            pid, status, usage = os.wait4(child.pid, os.WNOHANG)
            if pid:
                break
            if time.perf_counter() > deadline:
                child.kill()
                pid, status, usage = os.wait4(child.pid, 0)
                break
            time.sleep(0.01)
    wall = time.perf_counter() - start
    child.returncode = os.waitstatus_to_exitcode(status)
    return wall, usage.ru_maxrss, child.returncode


def _json_terms(path: Path) -> list[int] | None:
    """The ``terms`` field of a (possibly very large) JSON record, read from its tail."""
    if not path.exists() or path.stat().st_size == 0:
        return None
    with open(path, "rb") as handle:
        handle.seek(max(0, path.stat().st_size - 4096))
        tail = handle.read().decode("utf-8", errors="replace")
    marker = tail.rfind('"terms": [')
    if marker < 0:
        return None
    return json.loads(tail[marker + len('"terms": '):tail.index("]", marker) + 1])


def _targets(targets, use_lcapy: bool, timeout: float) -> str:
    lines = []
    by_n = {n: rest for n, *rest in targets}
    for n, limit, text in ((8, 0.010, "10 ms"), (12, 1.0, "1 s")):
        if n in by_n and by_n[n][2] is not None:
            s = by_n[n][2]
            lines.append(f"- {n}-node output impedance, solve time {_seconds(s)} "
                         f"(target < {text}): {'met' if s < limit else 'MISSED'}")
    if use_lcapy:
        finished = [(n, f, lc, fp, lp) for n, (f, lc, _, fp, lp) in by_n.items() if lc.status == "ok" and f.median]
        if finished:
            warm = min(lc.median / f.median for _, f, lc, _, _ in finished)
            lines.append(f"- at least 20x faster than lcapy where lcapy finishes (sizes "
                         f"{', '.join(str(n) for n, *_ in finished)}), warm: smallest ratio {warm:,.0f}x: "
                         f"{'met' if warm >= 20 else 'MISSED'}")
            whole = [lp.process_s / fp.process_s for _, _, _, fp, lp in finished
                     if lp.status == "ok" and fp.status == "ok"]
            if whole:
                lines.append(f"- the same as whole processes (start-up included): smallest ratio "
                             f"{min(whole):,.1f}x, largest {max(whole):,.1f}x")
        slow = [(n, f) for n, (f, lc, *_) in by_n.items() if lc.status in ("timeout", "skipped")]
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
