"""Benchmark of ``symbias rank``: the whole library against the demo spec, time by stage.

Measures, in one run on this machine:

* the serial ranking of every candidate of ``examples/sensor_bias_spec.toml`` with 10,000 Monte
  Carlo samples per candidate (``--samples``), its wall time and the time of each stage
  (sizing, operating points, formulas, Monte Carlo, sweeps), summed over candidates;
* per candidate with a Monte Carlo run, the Monte Carlo stage against the time of 100 scalar
  operating points of the same candidate, solved one at a time from the same sized point in the
  same run; target: the whole batched Monte Carlo costs at most what 100 scalar points cost;
* the same ranking on 2 local worker processes, and its speed-up over the serial run (the two
  must give the same verdict).

Usage::

    python bench/rank.py            # print the tables
    python bench/rank.py --write    # and write bench/results-rank.md
    python bench/rank.py --samples 2000 --only mos-simple-mirror bjt-simple-mirror   # quicker
"""

from __future__ import annotations

import argparse
import os
import platform
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SPEC = ROOT / "examples" / "sensor_bias_spec.toml"
SCALAR_POINTS = 100


def scalar_cost(spec, only: tuple[str, ...]) -> dict[str, float]:
    """Seconds of 100 scalar operating points of each sized candidate, from its sized point."""
    import numpy as np

    from symbias.dc.operating_point import operating_point
    from symbias.design.candidates import candidates, spec_process
    from symbias.design.sizing import SIZING_TEMPERATURE, size

    process = spec_process(spec)
    out = {}
    for candidate in candidates(spec, only=only, process=process):
        if candidate.excluded:
            continue
        with np.errstate(all="ignore"):
            sizing = size(candidate, spec, process)
            if sizing.failure is not None:
                continue
            values = dict(sizing.values)
            began = time.perf_counter()
            for _ in range(SCALAR_POINTS):
                operating_point(candidate.circuit, process, SIZING_TEMPERATURE, values, start=sizing.point)
        out[candidate.id] = time.perf_counter() - began
    return out


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=10_000)
    parser.add_argument("--only", nargs="+", default=[])
    parser.add_argument("--write", action="store_true", help="write bench/results-rank.md")
    args = parser.parse_args(argv)

    from symbias.design.spec import load_spec
    from symbias.design.rank import rank_candidates

    load = os.getloadavg()
    spec = load_spec(SPEC)
    serial = rank_candidates(spec, only=tuple(args.only), samples=args.samples, seed=1)
    pooled = rank_candidates(spec, only=tuple(args.only), samples=args.samples, seed=1, workers=2)
    scalar = scalar_cost(spec, tuple(args.only))
    load_after = os.getloadavg()

    lines = [f"# Ranking benchmark (bench/rank.py)", "",
             f"Python {platform.python_version()}, {os.cpu_count()} CPUs, load average at start "
             f"{load[0]:.1f}, {load[1]:.1f}, {load[2]:.1f}; at the end {load_after[0]:.1f}, {load_after[1]:.1f}, "
             f"{load_after[2]:.1f} (the machine is shared: figures are indicative)", "",
             f"`{SPEC.relative_to(ROOT)}` against {len(serial.candidates)} candidates, {args.samples} Monte Carlo "
             f"samples each, seed 1. Verdict: {serial.verdict}.", "",
             "## Whole run", "", "| engine | wall time | speed-up |", "|---|---|---|",
             f"| serial | {serial.wall:.1f} s | 1.00 |",
             f"| 2 local processes | {pooled.wall:.1f} s | {serial.wall / pooled.wall:.2f} |", "",
             "## Time by stage (serial, summed over candidates)", "", "| stage | seconds | share |", "|---|---|---|"]
    total = sum(serial.seconds.values())
    for stage, seconds in serial.seconds.items():
        lines.append(f"| {stage} | {seconds:.2f} | {seconds / total:.0%} |")
    lines += ["", f"## Monte Carlo stage against {SCALAR_POINTS} scalar operating points (same candidate, same run)",
              "", f"target: the Monte Carlo stage of {args.samples} samples costs at most {SCALAR_POINTS} scalar points",
              "", f"| candidate | Monte Carlo | {SCALAR_POINTS} scalar points | ratio | target |", "|---|---|---|---|---|"]
    missed = []
    for result in serial.candidates:
        mc = result.seconds.get("monte carlo", 0.0)
        if result.id not in scalar or "random_error_mc" not in result.metrics:
            continue
        ratio = mc / scalar[result.id]
        met = ratio <= 1.0
        missed += [] if met else [result.id]
        lines.append(f"| {result.id} | {mc:.3f} s | {scalar[result.id]:.3f} s | {ratio:.2f} | "
                     f"{'met' if met else 'MISSED'} |")
    same = [c.id for c in serial.candidates] == [c.id for c in pooled.candidates] and serial.best == pooled.best
    lines += ["", f"Serial and 2-process rankings agree: {'yes' if same else 'NO'}. "
              f"Monte Carlo target missed by: {', '.join(missed) or 'none'}.", ""]
    text = "\n".join(lines)
    print(text)
    if args.write:
        (ROOT / "bench" / "results-rank.md").write_text(text)
    return 0 if same else 1


if __name__ == "__main__":
    sys.exit(main())
