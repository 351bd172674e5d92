"""Adversarial run of the command line: 10,000 seeded bad inputs, each judged; the report in bench/results-fuzz.md.

The generator and the judge live in ``tests/support`` (``adversarial``,
``families``, ``netlists``, ``harness``), shared with the test suite, which runs
a 1,500-case slice of the same generator (``tests/robustness/test_fuzz_netlists.py``).
Each case runs in a forked child under the memory guard; a case is a clean
success, a clean one-line error, or a finding (traceback, untidy error, hang
past 20 s, crash by a signal, wrong success on input invalid on purpose, file
damage, peak resident memory at or above 2 GiB).

Usage::

    python3 bench/fuzz_netlists.py                      # 10,000 cases, seed 1, writes bench/results-fuzz.md
    python3 bench/fuzz_netlists.py --cases 500 --seed 3 --report /tmp/r.md

Exit status 1 when anything was found.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))

from support.adversarial import main  # noqa: E402

if __name__ == "__main__":
    os.environ.setdefault("COLUMNS", "100")
    arguments = sys.argv[1:]
    if "--report" not in arguments:
        arguments += ["--report", str(ROOT / "bench" / "results-fuzz.md")]
    sys.exit(main(arguments))
