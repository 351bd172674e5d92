"""Benchmark: reading the whole topology library, against decoding its TOML alone, same run.

Reference: ``tomllib.loads`` of every shipped file (the floor of any reader:
the text must at least be decoded).  Measured against it, best of
``REPEAT`` runs each:

- a cold :func:`symbias.library.load_library` (the reader's kept results
  cleared first): decode, check every field, parse every netlist and
  expression, build the frozen topologies;
- a warm :func:`~symbias.library.load_library` (files unchanged): a file
  read per topology, the parsed topologies reused;
- :func:`~symbias.library.find_topology` then ``.circuit()`` of one topology,
  warm, as each command line call after the first in a session does.

Figures are ratios to the reference measured in this run; the targets are
checked (met / MISSED), and the exit status is 0 when all are met.

Run: ``python3 bench/library.py`` (a few seconds).
"""

from __future__ import annotations

import os
import platform
import sys
import time
import tomllib
from typing import Any, Callable

REPEAT = 7
#: Largest ratio to the TOML decoding alone: (what, target).
TARGETS = {
    "cold load_library": 12.0,
    "warm load_library": 0.5,
    "warm find_topology + circuit": 0.5,
}


def _best(function: Callable[[], Any], before: Callable[[], None] = lambda: None) -> float:
    best = float("inf")
    for _ in range(REPEAT):
        before()
        start = time.perf_counter()
        function()
        best = min(best, time.perf_counter() - start)
    return best


def main() -> int:
    from symbias.library import find_topology, load_library, shipped_dir
    from symbias.library.reading import _parse_kept

    files = sorted(shipped_dir().glob("*.toml"))
    texts = [f.read_text(encoding="utf-8") for f in files]
    load = ", ".join(f"{v:.1f}" for v in os.getloadavg()) if hasattr(os, "getloadavg") else "n/a"
    print(f"Python {platform.python_version()}, {os.cpu_count()} CPUs, load average at start {load}")
    print(f"{len(files)} library files; ratios to tomllib.loads of every file, same run (best of {REPEAT})\n")
    reference = _best(lambda: [tomllib.loads(t) for t in texts])
    load_library()  # imports and first-call costs stay out of the figures
    times = {
        "cold load_library": _best(load_library, before=_parse_kept.cache_clear),
        "warm load_library": _best(load_library),
        "warm find_topology + circuit": _best(lambda: find_topology("bjt-wilson-mirror").circuit()),
    }
    missed = 0
    for what, seconds in times.items():
        ratio = seconds / reference
        met = ratio <= TARGETS[what]
        missed += not met
        print(f"{what:30} {ratio:8.2f}   target <= {TARGETS[what]:g}  {'met' if met else 'MISSED'}")
    return 1 if missed else 0


if __name__ == "__main__":
    sys.exit(main())
