"""Benchmark: approximation of results in s against the exact derivation, same run, full model level.

Cases: every topology of the shipped library at the ``full`` model level
(every BJT parasitic resistance and every device capacitance, the topology's own
matching), its output impedance at the output role.  For each case the exact
derivation (netlist to Formula, ``symbias.analyses.output_resistance``) is timed
(best of 7 after a warm-up, the two steps run alternately: other jobs share the machine), then :func:`symbias.approx.approximate_frequency`
with its defaults (hand-analysis ranges, capacitances on their own scale, 10 %
over 1 Hz-1 GHz, 96 random points; fewer for long results), best of 7.  The
sympy display of the short form is not part of the step (it is built on
first use, as a renderer asks for it).  Each case runs in its own process
with a memory limit and a timeout; a case whose exact derivation does not fit
is reported, not timed.

Printed: terms, the ratio approx/exact (target: at most 3), kept terms, the
worst error found and the dominant pole's error; the exit status is 0 when
every timed case meets the target.  Results are written only with --output.

Run: ``python3 bench/frequency_approx.py`` (about a minute; ``--quick``: seconds).
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
TARGET_RATIO = 3.0
QUICK = ("mos-simple-mirror", "mos-cascode-mirror", "bjt-simple-mirror")
REPEAT = 7


def _interleaved(first, second, repeat: int = REPEAT):
    """Best times of two functions run alternately (a burst of load from other jobs hits both alike)."""
    a, b = first(), None
    b = second(a)  # warm-up of both: first-call costs stay out of the figures
    best = [float("inf"), float("inf")]
    for _ in range(repeat):
        start = time.perf_counter()
        a = first()
        middle = time.perf_counter()
        b = second(a)
        best = [min(best[0], middle - start), min(best[1], time.perf_counter() - middle)]
    return best, a, b


def measure(identifier: str) -> dict:
    """One case, in this process: exact and approximation times and what the approximation kept."""
    from symbias.analyses import output_resistance
    from symbias.approx import approximate_frequency
    from symbias.devices.options import SmallSignalOptions
    from symbias.library import load_library

    topology = load_library()[identifier]
    circuit = topology.circuit()
    own = topology.small_signal_options()
    options = SmallSignalOptions.level("full", match=own.match, beta=own.beta)
    port = topology.roles["output"]
    (exact_time, approx_time), formula, result = _interleaved(lambda: output_resistance(circuit, port, options),
                                                              approximate_frequency)
    return {"case": identifier, "terms": list(formula.nterms), "symbols": len(formula.symbols), "exact": exact_time,
            "approx": approx_time, "ratio": approx_time / exact_time, "kept": [k for k, _ in result.kept],
            "error": result.error, "pole_error": result.pole_error, "points": result.admitted}


def _child(identifier: str, memory_gb: float) -> None:
    import resource

    limit = int(memory_gb * (1 << 30))
    resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    from symbias.errors import SymbiasError

    try:
        record = measure(identifier)
    except MemoryError:
        record = {"case": identifier, "skipped": f"exact derivation needs more than {memory_gb:g} GB"}
    except SymbiasError as err:  # a documented limit or analysis error: its cause, without file or advice
        record = {"case": identifier, "skipped": "no exact result: " + err.reason.split(";")[0]}
    print(json.dumps(record))


def _run(identifier: str, timeout: float, memory_gb: float) -> dict:
    try:
        done = subprocess.run([sys.executable, __file__, "--case", identifier, "--memory", str(memory_gb)],
                              capture_output=True, text=True, timeout=timeout, cwd=ROOT)
    except subprocess.TimeoutExpired:
        return {"case": identifier, "skipped": f"over {timeout:g} s"}
    lines = done.stdout.strip().splitlines()
    if done.returncode != 0 or not lines:
        tail = (done.stderr.strip().splitlines() or ["no output"])[-1]
        return {"case": identifier, "skipped": "failed: " + tail[-200:]}
    return json.loads(lines[-1])


def _row(r: dict) -> str:
    if "skipped" in r:
        return f"| {r['case']} | - | - | - | - | - | - | skipped: {r['skipped']} |"
    pole = "-" if r["pole_error"] is None else f"{100 * r['pole_error']:.3g} %"
    return (f"| {r['case']} | {r['terms'][0]} / {r['terms'][1]} | {1e3 * r['exact']:.1f} ms | "
            f"{r['ratio']:.2f} | {r['kept'][0]} / {r['kept'][1]} | {100 * r['error']:.3g} % | {pole} | "
            f"{'met' if r['ratio'] <= TARGET_RATIO else 'MISSED'} ({r['points']} points) |")


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Approximation of results in s against the exact derivation "
                                                 "(library cells, full model level, same run).")
    parser.add_argument("--quick", action="store_true", help="three small cells (seconds)")
    parser.add_argument("--output", metavar="PATH", help="write the results table here (nothing written without it)")
    parser.add_argument("--timeout", type=float, default=120.0, help="seconds per case (default 120)")
    parser.add_argument("--memory", type=float, default=3.0, help="GB of memory per case (default 3)")
    parser.add_argument("--case", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.case:
        _child(args.case, args.memory)
        return 0
    sys.path.insert(0, str(ROOT))
    from symbias.library import load_library

    cases = QUICK if args.quick else tuple(sorted(load_library()))
    load = ", ".join(f"{v:.1f}" for v in os.getloadavg()) if hasattr(os, "getloadavg") else "n/a"
    header = [f"Python {platform.python_version()}, {os.cpu_count()} CPUs, load average at start {load}",
              f"approximation time over exact derivation time, same process; target at most {TARGET_RATIO:g}x", "",
              "| case | terms (num / den) | exact | approx / exact | kept (num / den) | worst error | dominant pole "
              "error | target |", "|---|---|---|---|---|---|---|---|"]
    print("\n".join(header), flush=True)
    rows, records = [], []
    for identifier in cases:
        record = _run(identifier, args.timeout, args.memory)
        records.append(record)
        rows.append(_row(record))
        print(rows[-1], flush=True)
    timed = [r for r in records if "skipped" not in r]
    missed = [r["case"] for r in timed if r["ratio"] > TARGET_RATIO]
    worst = max(timed, key=lambda r: r["ratio"]) if timed else None
    summary = (f"\n{len(timed)} cases timed, {len(records) - len(timed)} skipped; largest ratio "
               f"{worst['ratio']:.2f} ({worst['case']}); {len(missed)} missed the {TARGET_RATIO:g}x target"
               + (f": {', '.join(missed)}" if missed else "")) if worst else "\nno case timed"
    print(summary)
    if args.output:
        Path(args.output).write_text("# Approximation of results in s (bench/frequency_approx.py)\n\n"
                                     + "\n".join(header + rows) + "\n" + summary + "\n", encoding="utf-8")
    return 1 if missed or not timed else 0


if __name__ == "__main__":
    sys.exit(main())
