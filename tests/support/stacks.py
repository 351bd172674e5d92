"""The synthetic cascode stack and its independent numpy reference, shared by tests and benchmarks.

Transistor k (npn, hybrid-pi gm, rpi, ro) has its collector at node k, its
emitter at node k-1 (ground for k = 1) and its base at small-signal ground --
a cascode stack, the structure of a high-output-resistance current sink.  Its
term counts (8 nodes: 6,528 over 2,704; 12 nodes: 887,040 over 367,424) are
those of the chain in the design notes.  :func:`reference_values` solves it
with numpy from the hybrid-pi model alone (it imports nothing from symbias).
``bench/common.py`` imports this module, so the benchmarks time the very
netlists the tests check.

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

import numpy as np

__all__ = ["stack_netlist", "random_points", "reference_values"]


def stack_netlist(n: int) -> str:
    """SPICE-subset netlist of an n-stage cascode stack (nodes n1..nN, input current into n1)."""
    lines = [f"synthetic cascode stack, {n} stages, every device's symbols distinct", "Iin 0 n1 1"]
    for k in range(1, n + 1):
        emitter = "0" if k == 1 else f"n{k - 1}"
        lines.append(f"Q{k} n{k} 0 {emitter} QN")
    lines.append(".model QN npn")
    return "\n".join(lines) + "\n"


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
