"""What the derivation benchmarks share: the synthetic cascode stack, its independent reference, timing.

The stack: transistor k (npn, hybrid-pi gm, rpi, ro) has its collector at
node k, its emitter at node k-1 (ground for k = 1) and its base at
small-signal ground -- a cascode stack, the structure of a
high-output-resistance current sink.  Its term counts (8 nodes: 6,528 over
2,704; 12 nodes: 887,040 over 367,424) are those of the chain in the design
notes.  :func:`reference_values` solves it with numpy from the hybrid-pi
model alone (it imports nothing from symbias).

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

import json
import statistics
import subprocess
import sys
import time
from dataclasses import dataclass
from fractions import Fraction
from pathlib import Path
from typing import Any, Callable

import numpy as np

__all__ = ["stack_netlist", "lcapy_netlist", "lcapy_values", "reference_values", "random_points", "measure",
           "peak_mb", "sympy_value", "ring_value", "Case", "run_case", "check", "fmt_time", "ratio", "table",
           "TOLERANCE"]

ROOT = Path(__file__).resolve().parents[1]
#: Relative error allowed between a method's result and the independent reference.
TOLERANCE = 1e-9

#: A measurement repeats until it has MIN_RUNS runs and has used its time budget, at most MAX_RUNS.
MIN_RUNS, MAX_RUNS, BUDGET_S, QUICK_BUDGET_S = 3, 25, 2.0, 0.02


def stack_netlist(n: int) -> str:
    """SPICE-subset netlist of an n-stage cascode stack (nodes n1..nN, input current into n1)."""
    lines = [f"synthetic cascode stack, {n} stages, every device's symbols distinct", "Iin 0 n1 1"]
    for k in range(1, n + 1):
        emitter = "0" if k == 1 else f"n{k - 1}"
        lines.append(f"Q{k} n{k} 0 {emitter} QN")
    lines.append(".model QN npn")
    return "\n".join(lines) + "\n"


def lcapy_netlist(n: int) -> str:
    """The same stack as lcapy components, in lcapy's fastest form: admittances and VCCS.

    Conductances ``Y`` (``gpi = 1/rpi``, ``go = 1/ro``) rather than resistors:
    lcapy's result for resistors has nested reciprocals to clear, and took
    4-50x longer on these stacks.  lcapy's ``G n+ n- nc+ nc- g`` drives its
    current out of ``n+`` into the circuit (the opposite of SPICE, checked by
    the random-point comparison), so the hybrid-pi current ``gm*v(b,e)``, which
    flows from collector to emitter inside the device, is written ``G e c b e``.
    Symbol names carry no underscore because lcapy reads ``_`` as a subscript.
    """
    lines = []
    for k in range(1, n + 1):
        c, e = f"n{k}", ("0" if k == 1 else f"n{k - 1}")
        lines.append(f"Ypi{k} 0 {e} gpiQ{k}")
        lines.append(f"Yo{k} {c} {e} goQ{k}")
        lines.append(f"Gm{k} {e} {c} 0 {e} gmQ{k}")
    return "\n".join(lines)


def lcapy_values(point: dict[str, float]) -> dict[str, Fraction]:
    """Exact values of the lcapy netlist's symbols at a bias point (conductances for rpi and ro)."""
    out = {}
    for name, value in point.items():
        parameter, device = name.split("_")
        exact = _exact(value)
        if parameter == "gm":
            out[f"gm{device}"] = exact
        else:
            out[f"{'gpi' if parameter == 'rpi' else 'go'}{device}"] = 1 / exact
    return out


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


def peak_mb() -> float:
    """Peak resident memory of this process, in MB."""
    import resource

    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def measure(work: Callable[[], Any], budget: float = BUDGET_S) -> tuple[list[float], Any]:
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


def sympy_value(expr, names: list[str], values: dict[str, Fraction]) -> Fraction:
    """Exact value of a sympy expression at rational values."""
    import sympy

    expr = sympy.sympify(expr)
    # match by name: lcapy's symbols carry assumptions, so Symbol(name) is not the same object
    subs = {s: sympy.Rational(values[s.name].numerator, values[s.name].denominator) for s in expr.free_symbols}
    value = sympy.Rational(expr.xreplace(subs))
    return Fraction(int(value.p), int(value.q))


def ring_value(poly, names: list[str], values: dict[str, Fraction]) -> Fraction:
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


# -- cases run in their own process, and their tables ------------------------------


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
            [sys.executable, str(Path(__file__).resolve().with_name("derive.py")), "--worker"],
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
