"""Smoke test of ``bench/frequency_approx.py``: it runs, prints its table, writes only when asked.

No timing is asserted (the ratio against the exact derivation, measured in the
same run, is the benchmark's own business); the checks are about what it
reports: one row per case with the approximation's error within the 10 %
tolerance.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
BENCH = ROOT / "bench" / "frequency_approx.py"


def test_quick_run_prints_a_row_per_case_and_writes_only_when_asked(tmp_path):
    done = subprocess.run([sys.executable, str(BENCH), "--quick"], capture_output=True, text=True, cwd=tmp_path,
                          timeout=300)
    assert done.returncode in (0, 1), done.stderr  # 1: a ratio above the target on a busy machine
    rows = [line for line in done.stdout.splitlines() if line.startswith("| ") and "ms |" in line]
    assert [r.split("|")[1].strip() for r in rows] == ["mos-simple-mirror", "mos-cascode-mirror", "bjt-simple-mirror"]
    for row in rows:
        error = float(row.split("|")[6].strip().rstrip(" %"))
        assert 0 <= error <= 10.0
    assert not list(tmp_path.iterdir())
    out = tmp_path / "results.md"
    done = subprocess.run([sys.executable, str(BENCH), "--quick", "--output", str(out)], capture_output=True,
                          text=True, cwd=tmp_path, timeout=300)
    assert done.returncode in (0, 1) and out.read_text().startswith("# Approximation of results in s")


def test_help_runs():
    done = subprocess.run([sys.executable, str(BENCH), "--help"], capture_output=True, text=True, timeout=60)
    assert done.returncode == 0 and "--quick" in done.stdout and "--output" in done.stdout
