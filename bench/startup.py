"""Start-up cost of the command line, as ratios against ``python -c "import numpy"`` in the same run.

Every figure is the best of several whole-process runs (start-up included: the
interpreter, the imports, the work, the printing), measured alternately with
the reference so that a busy machine slows both alike.  Targets (issue "one
pipeline under every command"):

* ``symbias --help``                       at most 2x the reference
* ``symbias bias`` on a library cell       at most 4x
* ``symbias sweep`` on a library cell      at most 4x
* ``symbias derive`` on the Wilson example at most 6x

Usage::

    python3 bench/startup.py            # 15 runs of each, prints the table
    python3 bench/startup.py --quick    # 3 runs of each
    python3 bench/startup.py --write    # also rewrite bench/results-startup.md

Exit status 1 when a command fails or a target is missed.
"""

from __future__ import annotations

import argparse
import shutil
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

CASES = [
    ("symbias --help", ["--help"], 2.0),
    ("symbias bias bjt-wilson-mirror", ["bias", "bjt-wilson-mirror"], 4.0),
    ("symbias sweep bjt-wilson-mirror --vary Vout --from 0 --to 5", ["sweep", "bjt-wilson-mirror", "--vary", "Vout",
                                                                    "--from", "0", "--to", "5"], 4.0),
    ("symbias bias mos-cascode-mirror", ["bias", "mos-cascode-mirror"], 4.0),
    ("symbias derive examples/wilson_mirror.cir", ["derive", "examples/wilson_mirror.cir"], 6.0),
]


def _command() -> list[str]:
    """The console script beside this interpreter, else ``python -m symbias``."""
    script = Path(sys.executable).with_name("symbias")
    if script.exists():
        return [str(script)]
    found = shutil.which("symbias")
    return [found] if found else [sys.executable, "-m", "symbias"]


def _time(argv: list[str]) -> float:
    start = time.perf_counter()
    done = subprocess.run(argv, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    elapsed = time.perf_counter() - start
    if done.returncode != 0:
        raise SystemExit(f"{' '.join(argv)} failed: {done.stderr.strip()[-300:]}")
    return elapsed


def measure(runs: int) -> list[tuple[str, float, float, float, float]]:
    """(case, best seconds, reference best seconds, ratio, target) per case."""
    reference = [sys.executable, "-c", "import numpy"]
    symbias = _command()
    _time(reference), _time(symbias + ["--help"])  # warm the file cache
    rows = []
    for label, arguments, target in CASES:
        ours, theirs = [], []
        for _ in range(runs):
            theirs.append(_time(reference))
            ours.append(_time(symbias + arguments))
        best, base = min(ours), min(theirs)
        rows.append((label, best, base, best / base, target))
    return rows


def table(rows) -> str:
    lines = ["| command | best of runs (s) | `python -c \"import numpy\"` (s) | ratio | target | met |",
             "|---|---|---|---|---|---|"]
    for label, best, base, ratio, target in rows:
        lines.append(f"| `{label}` | {best:.3f} | {base:.3f} | {ratio:.2f} | {target:g} | "
                     f"{'yes' if ratio <= target else 'NO'} |")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="3 runs of each command instead of 15")
    parser.add_argument("--runs", type=int, default=None, help="runs of each command")
    parser.add_argument("--write", action="store_true", help="rewrite bench/results-startup.md")
    args = parser.parse_args(argv)
    runs = args.runs or (3 if args.quick else 15)
    rows = measure(runs)
    text = table(rows)
    print(text)
    if args.write:
        header = ("# Start-up benchmark\n\nWritten by `python3 bench/startup.py --write`: whole processes, best of "
                  f"{runs} runs each, alternated with the reference in the same run.\n\n")
        (ROOT / "bench" / "results-startup.md").write_text(header + text + "\n")
    return 0 if all(ratio <= target for *_, ratio, target in rows) else 1


if __name__ == "__main__":
    sys.exit(main())
