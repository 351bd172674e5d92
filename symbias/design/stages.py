"""Where a ranking run spends its time: the stages of a candidate's evaluation and a timer for them.

Design layer, a small helper of :mod:`~symbias.design.rank` and
:mod:`~symbias.design.metrics` (no analysis here).  ``bench/rank.py`` reports
the time split by these stages.

Examples
--------
>>> timer = StageTimer()
>>> with timer.stage("sizing"):
...     pass
>>> sorted(timer.seconds) == sorted(STAGES), timer.seconds["sizing"] >= 0
(True, True)
"""

from __future__ import annotations

import time
from contextlib import contextmanager
from typing import Iterator, Mapping

__all__ = ["STAGES", "StageTimer", "add_times"]

#: The stages, in the order a candidate goes through them.
STAGES = ("sizing", "operating points", "formulas", "monte carlo", "sweeps")


class StageTimer:
    """Seconds spent per stage (wall time of the calling process)."""

    def __init__(self) -> None:
        self.seconds: dict[str, float] = {name: 0.0 for name in STAGES}

    @contextmanager
    def stage(self, name: str) -> Iterator[None]:
        """Count the time of the ``with`` block against ``name``."""
        began = time.perf_counter()
        try:
            yield
        finally:
            self.seconds[name] += time.perf_counter() - began


def add_times(*records: Mapping[str, float]) -> dict[str, float]:
    """The stage-by-stage sum of several time records.

    Examples
    --------
    >>> add_times({"sizing": 1.0}, {"sizing": 0.5, "sweeps": 2.0})["sizing"]
    1.5
    """
    total = {name: 0.0 for name in STAGES}
    for record in records:
        for name, seconds in record.items():
            total[name] = total.get(name, 0.0) + seconds
    return total
