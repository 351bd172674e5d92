"""The verdict on each candidate and the order of the feasible ones.

Design layer, the step after :mod:`~symbias.design.metrics` (metrics and the
spec -> violations; the feasible candidates' metrics -> Pareto fronts,
scores, ranks).  Pure functions of plain numbers; no solving here.

* :func:`check`: every requirement of the spec against its metric; a failed
  one is a :class:`Violation` with its value and limit (``headroom 0.92 V >
  0.35 V``); a metric that could not be measured fails its requirement.
* :func:`pareto_fronts`: non-dominated sorting over the metrics the spec
  names (by a limit or a weight), each in its better direction.
* :func:`scores`: the weighted mean of each metric's place between the worst
  and the best feasible candidate (log scale for metrics that span decades).
* :func:`order`: front first, then score (higher first), then fewer devices.

Examples
--------
>>> from symbias.design.spec import parse_spec
>>> from symbias.design.metrics import Metric
>>> spec = parse_spec('[block]\\nfamily = "current-mirror"\\ncurrent = "5u"\\n[supply]\\nmin = 1.6\\nmax = 2\\n'
...                   '[limits]\\nheadroom_max = "0.35V"\\nrout_min = "20meg"\\n')
>>> found = check({"headroom": Metric("headroom", 0.92, "V", "sweep"),
...                           "rout": Metric("rout", 5e7, "ohm", "formula")}, spec)
>>> [v.text for v in found]
['headroom 0.92 V > 0.35 V']
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Mapping, Sequence

from ..symbols import engineering

__all__ = ["Violation", "Requirement", "REQUIREMENTS", "check", "requirements", "pareto_fronts", "scores", "order",
           "LOG_METRICS"]

#: Metrics that span decades: their scores are placed on a log scale.
LOG_METRICS = frozenset({"rout", "random_error", "ratio_error", "area", "supply_current", "voltage_error", "noise",
                         "rout_at_frequency"})


@dataclass(frozen=True)
class Requirement:
    """A limit of the spec and the metric it checks: ``metric <= limit`` (``max``) or ``>= limit`` (``min``)."""

    key: str
    metric: str
    kind: str
    absolute: bool = False


#: Every requirement a spec can state, by its key in the spec file.
REQUIREMENTS = (
    Requirement("headroom_max", "headroom", "max"),
    Requirement("rout_min", "rout", "min"),
    Requirement("rout_min", "rout_at_frequency", "min"),
    Requirement("ratio_error_max", "ratio_error", "max", absolute=True),
    Requirement("random_error_max", "random_error", "max"),
    Requirement("tc_max", "tc", "max"),
    Requirement("line_sensitivity_max", "line_sensitivity", "max"),
    Requirement("devices_max", "devices", "max"),
    Requirement("area_max", "area", "max"),
    Requirement("supply_current_max", "supply_current", "max"),
    Requirement("noise_max", "noise", "max"),
    Requirement("voltage_error_max", "voltage_error", "max", absolute=True),
    Requirement("supply.min", "supply_min", "max"),
)


@dataclass(frozen=True)
class Violation:
    """A requirement a candidate fails.

    Attributes
    ----------
    requirement : str
        The spec key (``headroom_max``, ``rout_min``, ``supply.min``).
    metric : str
    value : float or None
        None when the metric could not be measured (``note`` says why).
    limit : float
    unit : str
    kind : str
        ``max`` (the value must not exceed the limit) or ``min``.
    note : str
    """

    requirement: str
    metric: str
    value: float | None
    limit: float
    unit: str
    kind: str
    note: str = ""

    @property
    def text(self) -> str:
        """One line: ``headroom 0.92 V > 0.35 V``."""
        if self.value is None:
            return f"{self.metric} {self.note or 'could not be measured'}"
        shown = _unit(self.unit)
        sign = ">" if self.kind == "max" else "<"
        return f"{self.metric} {_number(self.value, shown)} {sign} {_number(self.limit, shown)}"

    @property
    def excess(self) -> float:
        """How far past its limit, relative: ``value/limit - 1`` (``limit/value - 1`` for a minimum)."""
        if self.value is None:
            return math.inf
        value, limit = abs(self.value), abs(self.limit)
        if self.kind == "max":
            return value / limit - 1.0 if limit > 0 else math.inf
        return limit / value - 1.0 if value > 0 else math.inf

    def to_dict(self) -> dict:
        """Plain data: ``requirement``, ``value``, ``limit`` and the rest."""
        return {"requirement": self.requirement, "metric": self.metric, "value": self.value, "limit": self.limit,
                "unit": self.unit, "text": self.text}


def _unit(unit: str) -> str:
    return "" if unit == "1" else unit


def _number(value: float, unit: str) -> str:
    if unit == "":
        return f"{100 * value:.3g}%" if abs(value) < 1 else f"{value:.4g}"
    if unit in ("V", "ppm/degC", "%/V", "um^2"):
        return f"{value:.3g} {unit}"
    return engineering(value, unit)


def requirements(spec) -> list[tuple[Requirement, float]]:
    """The spec's requirements with their limits (fractions for errors, the lowest supply for ``supply.min``)."""
    out = []
    for requirement in REQUIREMENTS:
        if requirement.key == "supply.min":
            out.append((requirement, spec.supply.min))
            continue
        limit = getattr(spec.limits, requirement.key)
        if limit is None:
            continue
        out.append((requirement, float(limit)))
    return out


def check(metrics: Mapping, spec) -> tuple[Violation, ...]:
    """The violations of a candidate's metrics.

    A metric the candidate does not have (a ratio error for a source) is not applicable; one that
    failed to measure (value None, its note says why) is a violation.
    """
    found = []
    for requirement, limit in requirements(spec):
        metric = metrics.get(requirement.metric)
        if metric is None:
            continue
        if metric.value is None:
            found.append(Violation(requirement.key, requirement.metric, None, limit, metric.unit, requirement.kind,
                                   metric.note))
            continue
        value = abs(metric.value) if requirement.absolute else metric.value
        failed = value > limit if requirement.kind == "max" else value < limit
        if failed or math.isnan(value):
            found.append(Violation(requirement.key, requirement.metric, metric.value, limit, metric.unit,
                                   requirement.kind))
    return tuple(found)


def objectives(spec, metric_names: Sequence[str]) -> list[tuple[str, int]]:
    """The metrics a spec names by a limit or a weight, with the sign that makes larger better."""
    from .spec import METRICS

    named = {r.metric for r, _ in requirements(spec) if r.key != "supply.min"} | {k for k, w in spec.weights.items()
                                                                                   if w > 0}
    return [(m, -1 if METRICS.get(m, ("", "max"))[1] == "max" else 1) for m in metric_names if m in named]


def _goodness(value: float, sign: int, metric: str) -> float:
    """A number that grows as the metric gets better (log scale for metrics that span decades)."""
    value = abs(value)
    if metric in LOG_METRICS:
        value = math.log(max(value, 1e-300))
    return sign * value


def pareto_fronts(rows: Sequence[Mapping[str, float]], goals: Sequence[tuple[str, int]]) -> list[int]:
    """The Pareto front of each row (1: not dominated; 2: dominated only by the first front; ...).

    Examples
    --------
    >>> pareto_fronts([{"a": 1, "b": 1}, {"a": 2, "b": 0}, {"a": 0, "b": 0}], [("a", 1), ("b", 1)])
    [1, 1, 2]
    """
    good = [[_goodness(row[m], s, m) if row.get(m) is not None else -math.inf for m, s in goals] for row in rows]
    front = [0] * len(rows)
    level, left = 1, set(range(len(rows)))
    while left:
        top = {i for i in left if not any(_dominates(good[j], good[i]) for j in left if j != i)}
        for i in top:
            front[i] = level
        left -= top
        level += 1
    return front


def _dominates(a: Sequence[float], b: Sequence[float]) -> bool:
    return all(x >= y for x, y in zip(a, b)) and any(x > y for x, y in zip(a, b))


def scores(rows: Sequence[Mapping[str, float]], weights: Mapping[str, float]) -> list[float]:
    """The weighted mean, over the weighted metrics, of each row's place between the worst (0) and best (1) row.

    Examples
    --------
    >>> scores([{"rout": 1e6, "headroom": 0.2}, {"rout": 1e8, "headroom": 0.4}], {"rout": 1, "headroom": 1})
    [0.5, 0.5]
    """
    from .spec import METRICS

    total = [0.0] * len(rows)
    weight_sum = sum(w for m, w in weights.items() if w > 0)
    if not rows or weight_sum == 0:
        return total
    for metric, weight in weights.items():
        sign = -1 if METRICS.get(metric, ("", "max"))[1] == "max" else 1
        good = [_goodness(r[metric], sign, metric) if r.get(metric) is not None else None for r in rows]
        known = [g for g in good if g is not None]
        if weight <= 0 or not known:
            continue
        low, high = min(known), max(known)
        for i, g in enumerate(good):
            place = 1.0 if high == low else (0.0 if g is None else (g - low) / (high - low))
            total[i] += weight * place
    return [t / weight_sum for t in total]


def order(fronts: Sequence[int], score: Sequence[float], devices: Sequence[float]) -> list[int]:
    """Indices in rank order: front, then score (higher first), then fewer devices.

    Examples
    --------
    >>> order([1, 1, 2], [0.2, 0.9, 1.0], [4, 6, 2])
    [1, 0, 2]
    """
    return sorted(range(len(fronts)), key=lambda i: (fronts[i], -score[i], devices[i]))
