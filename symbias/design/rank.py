"""Rank the library against a spec: every candidate sized, measured, checked; the feasible ones ordered.

Design layer, the last step (a :class:`~symbias.design.spec.Spec` and a
:class:`RankRequest` -> :class:`Ranking`), wiring the steps before it:

1. :func:`~symbias.design.candidates.candidates`: the library's topologies of
   the spec's family and technology, set up for the spec (process, supply,
   output voltage, N outputs);
2. for each candidate, one task (:func:`evaluate`): sizing
   (:mod:`~symbias.design.sizing`) and metrics (:mod:`~symbias.design.metrics`);
3. for each sized candidate, its Monte Carlo chunks, each one task
   (:mod:`~symbias.design.montecarlo`), submitted as soon as the candidate is back;
4. the verdict (:mod:`~symbias.design.verdict`): violations, Pareto fronts,
   scores, ranks; with no feasible candidate, the closest one and its worst
   violation.

Tasks go to a :class:`concurrent.futures.Executor`
(:func:`~symbias.design.executors.executor_for`): serial by default, a
process pool or a Dask cluster.  The chunks have a fixed size and their seeds
do not depend on where they run, so every engine gives the same ranking.

Examples
--------
>>> from symbias.design.spec import load_spec
>>> ranking = rank(load_spec("examples/sensor_bias_spec.toml"),
...                RankRequest(only=("bjt-simple-mirror", "mos-wide-swing-cascode-mirror"), samples=0))
>>> [(c.id, c.feasible, c.rank) for c in ranking.candidates]
[('mos-wide-swing-cascode-mirror', True, 1), ('bjt-simple-mirror', False, None)]
>>> [v.text for v in ranking.candidates[1].violations][:2]
['rout 12.02Mohm < 20Mohm', 'ratio_error 9.59% > 1%']
"""

from __future__ import annotations

import concurrent.futures
import math
import time
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any, Callable, Mapping

from ..errors import SymbiasError, UsageError
from .candidates import Candidate, candidates, spec_process
from .metrics import Metric, measure
from .montecarlo import CHUNK, DEFAULT_SAMPLES, monte_carlo_tasks, run_chunk, summarize
from .sizing import size
from .stages import StageTimer, add_times
from .verdict import Violation, check, objectives, order, pareto_fronts, scores

__all__ = ["RankRequest", "EvaluationTask", "Evaluation", "CandidateResult", "Ranking", "rank", "rank_candidates",
           "evaluate"]

Progress = Callable[[int, int, str], None]


@dataclass(frozen=True)
class RankRequest:
    """How to rank: which library and candidates, how many Monte Carlo samples, which seed.

    Parameters
    ----------
    library_dirs : tuple of str
        Extra library folders, searched before the shipped one.
    only : tuple of str
        Candidate identifiers to keep (all of the spec's family when empty).
    samples : int
        Monte Carlo samples per candidate (0: the first-order random error alone).
    seed : int
    chunk : int
        Samples per Monte Carlo task.
    """

    library_dirs: tuple[str, ...] = ()
    only: tuple[str, ...] = ()
    samples: int = DEFAULT_SAMPLES
    seed: int = 0
    chunk: int = CHUNK

    def __post_init__(self) -> None:
        object.__setattr__(self, "library_dirs", tuple(str(d) for d in self.library_dirs))
        object.__setattr__(self, "only", tuple(self.only))
        if self.samples < 0 or self.samples == 1:
            raise UsageError(f"--samples must be 0 or at least 2, got {self.samples}", path="--samples")
        if self.chunk < 1:
            raise UsageError(f"chunk must be at least 1, got {self.chunk}", path="--samples")


@dataclass(frozen=True)
class EvaluationTask:
    """One candidate to size and measure: everything a worker needs (it pickles)."""

    candidate: Candidate
    spec: Any
    process: Any


@dataclass(frozen=True)
class Evaluation:
    """What a worker returns for one candidate."""

    candidate: Candidate
    sizing: Any
    metrics: Mapping[str, Metric]
    seconds: Mapping[str, float]
    failure: str | None = None


def evaluate(task: EvaluationTask) -> Evaluation:
    """Size and measure one candidate (a module-level function: it pickles for any executor)."""
    import numpy as np

    timer = StageTimer()
    candidate, spec, process = task.candidate, task.spec, task.process
    with np.errstate(all="ignore"):  # a Newton step may overflow on its way; every result is checked after
        with timer.stage("sizing"):
            sizing = size(candidate, spec, process)
        if sizing.failure is not None:
            return Evaluation(candidate, sizing, {}, timer.seconds, sizing.failure)
        try:
            metrics = measure(candidate, spec, process, sizing, timer)
        except SymbiasError as err:  # the candidate is reported as not measured, with the reason
            return Evaluation(candidate, sizing, {}, timer.seconds, f"could not be measured: {err.reason}")
    return Evaluation(candidate, sizing, metrics, timer.seconds)


@dataclass(frozen=True)
class CandidateResult:
    """A candidate's sizing, metrics and verdict.

    Attributes
    ----------
    id, title, family, technology : str
    feasible : bool
    rank : int or None
        1 for the best feasible candidate; None when infeasible.
    sizing : mapping of str to float
        Design variables (SI units).
    sizing_how : mapping of str to str
        How each got its value.
    sizing_units : mapping of str to str
        The unit of each design variable.
    metrics : mapping of str to Metric
    violations : tuple of Violation
    reason : str or None
        Why it was not evaluated (excluded, or could not be sized).
    front : int or None
        Its Pareto front among the feasible candidates.
    score : float or None
        Its weighted score among the feasible candidates (0 to 1).
    seconds : mapping of str to float
        Time per stage.
    """

    id: str
    title: str
    family: str
    technology: str
    feasible: bool
    rank: int | None
    sizing: Mapping[str, float]
    sizing_how: Mapping[str, str]
    sizing_units: Mapping[str, str]
    metrics: Mapping[str, Metric]
    violations: tuple[Violation, ...]
    reason: str | None = None
    front: int | None = None
    score: float | None = None
    seconds: Mapping[str, float] = field(default_factory=dict)

    def __post_init__(self) -> None:
        for key in _MAPPINGS:
            object.__setattr__(self, key, MappingProxyType(dict(getattr(self, key))))

    def __reduce__(self):
        values = {k: getattr(self, k) for k in self.__dataclass_fields__}
        for key in _MAPPINGS:
            values[key] = dict(values[key])
        return (_rebuild, (CandidateResult, values))

    @property
    def worst(self) -> Violation | None:
        """The violation farthest past its limit."""
        return max(self.violations, key=lambda v: v.excess) if self.violations else None

    def to_dict(self) -> dict[str, Any]:
        """Plain data, as in ``symbias rank --json``."""
        return {"id": self.id, "title": self.title, "family": self.family, "technology": self.technology,
                "feasible": self.feasible, "rank": self.rank, "reason": self.reason,
                "sizing": dict(self.sizing), "sizing_how": dict(self.sizing_how),
                "sizing_units": dict(self.sizing_units),
                "metrics": {name: m.to_dict() for name, m in self.metrics.items()},
                "violations": [v.to_dict() for v in self.violations], "pareto_front": self.front,
                "score": self.score, "seconds": dict(self.seconds)}


_MAPPINGS = ("sizing", "sizing_how", "sizing_units", "metrics", "seconds")


def _rebuild(cls, values: dict):
    return cls(**values)


@dataclass(frozen=True)
class Ranking:
    """The answer to a spec: every candidate in order, the best one, or the closest when none is feasible.

    Attributes
    ----------
    spec : Spec
    candidates : tuple of CandidateResult
        Feasible ones by rank, then the infeasible ones from the closest, then those not sized or excluded.
    best : str or None
    closest : str or None
        With no feasible candidate: the one whose worst violation is smallest.
    seconds : mapping of str to float
        Time per stage, summed over every task.
    wall : float
        Seconds from start to verdict.
    samples, seed : int
    engine : str
        Where the tasks ran.
    """

    spec: Any
    candidates: tuple[CandidateResult, ...]
    best: str | None
    closest: str | None
    seconds: Mapping[str, float]
    wall: float
    samples: int
    seed: int
    engine: str = "serial"

    @property
    def verdict(self) -> str:
        """One line: the best candidate, or that none meets the spec and which comes closest."""
        if self.best is not None:
            return f"{self.best} meets the spec best"
        if self.closest is None:
            return "no candidate meets the spec (none could be sized)"
        closest = next(c for c in self.candidates if c.id == self.closest)
        return f"no candidate meets the spec; closest: {self.closest} ({closest.worst.text})"

    def candidate(self, identifier: str) -> CandidateResult:
        """The result of one candidate.

        Raises
        ------
        UsageError
            When no candidate has that identifier.
        """
        for found in self.candidates:
            if found.id == identifier:
                return found
        raise UsageError(f"no candidate {identifier!r} in this ranking")

    def to_dict(self) -> dict[str, Any]:
        """The JSON object of ``symbias rank --json``."""
        return {"spec": self.spec.to_dict(), "candidates": [c.to_dict() for c in self.candidates],
                "best": self.best, "closest": self.closest, "verdict": self.verdict,
                "samples": self.samples, "seed": self.seed,
                "engine": self.engine, "seconds": dict(self.seconds), "wall_seconds": self.wall}


def rank(spec, request: RankRequest | None = None, executor: concurrent.futures.Executor | None = None,
         progress: Progress | None = None, engine: str = "serial") -> Ranking:
    """Rank the library's candidates against ``spec`` (see the module docstring).

    Raises
    ------
    UsageError, LibraryError, ProcessError
        From choosing the candidates.
    """
    from .executors import SerialExecutor

    began = time.perf_counter()
    request = request or RankRequest()
    executor = executor or SerialExecutor()
    process = spec_process(spec)
    found = candidates(spec, request.library_dirs, request.only, process)
    report = progress or (lambda done, total, what: None)
    evaluations, chunks = _run(executor, found, spec, process, request, report)
    results = [_result(c, evaluations.get(c.id), chunks.get(c.id), spec, request) for c in found]
    ordered, best, closest = _verdict(results, spec)
    seconds = add_times(*(c.seconds for c in ordered))
    return Ranking(spec, tuple(ordered), best, closest, seconds, time.perf_counter() - began,
                   request.samples, request.seed, engine)


def rank_candidates(spec, *, library: tuple[str, ...] = (), only: tuple[str, ...] = (),
                    samples: int = DEFAULT_SAMPLES, seed: int = 0, workers: int | None = None,
                    scheduler: str | None = None, progress: Progress | None = None) -> Ranking:
    """Rank the topology library against a spec: the library API behind ``symbias rank``.

    Parameters
    ----------
    spec : Spec or str or Path
        A spec, or the path of a spec file (``docs/spec-format.md``).
    library : tuple of str
        Extra topology folders, searched before the shipped library.
    only : tuple of str
        Rank only these topology identifiers.
    samples : int
        Monte Carlo samples per candidate (default 10,000; 0: the first-order random error alone).
    seed : int
        Seed of the mismatch samples: the same seed gives the same ranking on every engine.
    workers : int, optional
        Run candidates and Monte Carlo chunks in this many local processes.
    scheduler : str, optional
        The address of a Dask scheduler to run them on (``pip install 'symbias[distributed]'``).
    progress : callable, optional
        ``(done, total, what)``, called as tasks finish.

    Returns
    -------
    Ranking
        Frozen: every candidate's sizing, metrics (value, unit, source), violations, Pareto front,
        score and rank; ``best``, or ``closest`` when no candidate meets the spec.

    Raises
    ------
    SpecError, UsageError, LibraryError, ProcessError
        For a bad spec file, an unknown ``--only`` identifier or engine, a bad library or process.

    Examples
    --------
    >>> ranking = rank_candidates("examples/sensor_bias_spec.toml", only=("mos-simple-mirror",), samples=200)
    >>> result = ranking.candidates[0]
    >>> result.feasible, result.metrics["rout"].unit, [v.requirement for v in result.violations]
    (False, 'ohm', ['rout_min'])
    """
    from .executors import describe, executor_for
    from .spec import Spec, load_spec

    spec = spec if isinstance(spec, Spec) else load_spec(spec)
    request = RankRequest(tuple(library), tuple(only), samples, seed)
    with executor_for(workers, scheduler) as executor:
        return rank(spec, request, executor, progress, describe(workers, scheduler))


def _run(executor, found, spec, process, request: RankRequest, report: Progress):
    """Submit every candidate, then each sized candidate's Monte Carlo chunks as soon as it is back."""
    pending = {executor.submit(evaluate, EvaluationTask(c, spec, process)): c.id for c in found if not c.excluded}
    total, done = len(pending), 0
    report(done, total, "sizing and measuring")
    evaluations: dict[str, Evaluation] = {}
    chunk_futures: dict[concurrent.futures.Future, tuple[str, int]] = {}
    for future in concurrent.futures.as_completed(list(pending)):
        evaluation = future.result()
        evaluations[evaluation.candidate.id] = evaluation
        done += 1
        if evaluation.failure is None and request.samples:
            tasks = _chunks(evaluation, process, request)
            for index, task in enumerate(tasks):
                chunk_futures[executor.submit(run_chunk, task)] = (evaluation.candidate.id, index)
            total += len(tasks)
        report(done, total, evaluation.candidate.id)
    chunks: dict[str, dict[int, Any]] = {}
    for future in concurrent.futures.as_completed(list(chunk_futures)):
        identifier, index = chunk_futures[future]
        chunks.setdefault(identifier, {})[index] = future.result()
        done += 1
        report(done, total, f"Monte Carlo {identifier}")
    return evaluations, {k: [v[i] for i in sorted(v)] for k, v in chunks.items()}


def _chunks(evaluation: Evaluation, process, request: RankRequest) -> list:
    from ..dc.mismatch import mismatch_sigmas

    sizing = evaluation.sizing
    if not mismatch_sigmas(evaluation.candidate.circuit, process, sizing.values):
        return []  # no mismatch coefficients: the first-order value (zero) says so
    return monte_carlo_tasks(evaluation.candidate, process, sizing.values, sizing.point, request.samples,
                             request.seed, request.chunk)


def _result(candidate: Candidate, evaluation: Evaluation | None, chunks, spec, request: RankRequest
            ) -> CandidateResult:
    topology = candidate.topology
    head = (candidate.id, topology.title, topology.family, topology.technology)
    units = {v.name: v.unit for v in topology.variables}
    if evaluation is None:
        return CandidateResult(*head, False, None, {}, {}, units, {}, (), candidate.excluded)
    sizing = evaluation.sizing
    seconds = dict(evaluation.seconds)
    if evaluation.failure is not None:
        return CandidateResult(*head, False, None, sizing.values, sizing.how, units, {}, (), evaluation.failure,
                               seconds=seconds)
    metrics = dict(evaluation.metrics)
    if chunks:
        metrics["random_error_mc"] = _monte_carlo_metric(candidate, chunks, metrics.get("random_error"), spec,
                                                         request)
        seconds["monte carlo"] = seconds.get("monte carlo", 0.0) + sum(c.seconds for c in chunks)
    violations = check(metrics, spec)
    return CandidateResult(*head, not violations, None, sizing.values, sizing.how, units, metrics, violations,
                           seconds=seconds)


def _monte_carlo_metric(candidate: Candidate, chunks, first_order: Metric | None, spec, request) -> Metric:
    result = summarize(candidate, chunks)
    sigma = spec.limits.sigma
    value = sigma * result.relative
    note = ""
    if first_order is not None and first_order.value is not None and math.isfinite(value):
        if abs(value - first_order.value) > 3 * sigma * result.sampling_error + 0.05 * first_order.value:
            note = "differs from the first-order value by more than its sampling error: the output is not " \
                   "linear in the mismatch"
    return Metric("random_error_mc", value, "1",
                  f"Monte Carlo, {result.samples} samples, seed {request.seed}, {sigma:g} sigma",
                  {"sampling_error": sigma * result.sampling_error, "samples": result.samples,
                   "failed": result.failed}, note)


def _verdict(results: list[CandidateResult], spec) -> tuple[list[CandidateResult], str | None, str | None]:
    from dataclasses import replace

    feasible = [r for r in results if r.feasible]
    rows = [{k: m.value for k, m in r.metrics.items()} for r in feasible]
    goals = objectives(spec, sorted({k for r in feasible for k in r.metrics}))
    fronts = pareto_fronts(rows, goals)
    score = scores(rows, spec.weights)
    devices = [r.metrics["devices"].value for r in feasible]
    ranked = [replace(feasible[i], rank=place + 1, front=fronts[i], score=score[i])
              for place, i in enumerate(order(fronts, score, devices))]
    measured = sorted((r for r in results if not r.feasible and r.metrics), key=lambda r: r.worst.excess)
    rest = [r for r in results if not r.feasible and not r.metrics]
    rest.sort(key=lambda r: (r.reason is not None and "the spec asks" in r.reason, r.id))
    best = ranked[0].id if ranked else None
    closest = measured[0].id if not ranked and measured else None
    return ranked + measured + rest, best, closest
