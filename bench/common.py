"""What the derivation benchmarks share: timing, agreement checks and tables.

The synthetic cascode stack and its independent numpy reference live in
``tests/support/stacks.py`` (shared with the tests, which check them against
the textbook cascode and the recorded term counts).

Examples
--------
>>> ratio(Case(status="timeout", detail="> 60 s"), Case(times=(0.5,)))
'> 120x'
>>> check(Case(times=(0.1,), data={"values": {"rout": [2.0, 3.0000030], "transfer": [1.0]}}),
...       {"rout": [2.0, 3.0], "transfer": [1.0]}).status
'wrong'
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
sys.path.insert(0, str(ROOT / "tests"))

from support.stacks import random_points, reference_values, stack_netlist  # noqa: E402  (shared with the tests)

#: Relative error allowed between a method's result and the independent reference.
TOLERANCE = 1e-9

#: A measurement repeats until it has MIN_RUNS runs and has used its time budget, at most MAX_RUNS.
MIN_RUNS, MAX_RUNS, BUDGET_S, QUICK_BUDGET_S = 3, 25, 2.0, 0.02


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


def _exact(value: float) -> Fraction:
    """The exact value behind a point's float: an integer or the reciprocal of one."""
    return Fraction(value).limit_denominator(10**6)


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
