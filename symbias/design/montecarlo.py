"""Random error of a candidate's output: Pelgrom's law to first order, confirmed by a batched Monte Carlo run.

Design layer, beside :mod:`~symbias.design.metrics`.  The device mismatch is
Pelgrom's (Pelgrom, Duinmaijer and Welbers, IEEE JSSC 24(5), 1989):
``sigma(dVT) = AVT/sqrt(W L)`` and ``sigma(dbeta/beta) = ABETA/sqrt(W L)``
for a MOS pair, ``AIS`` per unit emitter area for the saturation current of a
bipolar pair, each device varying by ``1/sqrt(2)`` of the pair's figure
(:func:`symbias.dc.mismatch.mismatch_sigmas`, coefficients from the process
file).

* :func:`first_order_random`: the relative standard deviation of the output
  (a mirror's or source's output current, a reference's voltage) propagated
  through its sensitivities, ``sqrt(sum_i (dy/dp_i sigma_i)^2)/y``; each
  sensitivity is a central difference on the DC model (all parameters in one
  batched solve from the operating point);
* :func:`monte_carlo_tasks` and :func:`run_chunk`: seeded mismatch samples
  (default 10,000) cut into chunks of a fixed size, each chunk one batched
  DC solve from the operating point, independent of the others, so that a
  :class:`concurrent.futures.Executor` can run them anywhere; the same seed
  and chunk size give the same numbers serially, in a process pool or on a
  Dask cluster;
* :func:`summarize`: the relative standard deviation of the samples, with its
  sampling error ``s/sqrt(2(n-1))``.

Examples
--------
>>> from symbias.design.spec import parse_spec
>>> from symbias.design.candidates import candidates, spec_process
>>> from symbias.design.sizing import size
>>> spec = parse_spec('[block]\\nfamily = "current-mirror"\\ncurrent = "5uA"\\n[supply]\\nmin = 1.6\\nmax = 2\\n')
>>> mirror, = candidates(spec, only=["bjt-simple-mirror"])
>>> process = spec_process(spec)
>>> sizing = size(mirror, spec, process)
>>> round(100 * first_order_random(mirror, process, sizing.values, sizing.point).relative, 3)  # AIS = 1 %; base currents take a little
0.992
>>> tasks = monte_carlo_tasks(mirror, process, sizing.values, sizing.point, 4000, seed=1)
>>> result = summarize(mirror, [run_chunk(t) for t in tasks])
>>> result.samples, abs(result.relative - 0.01) < 3 * result.sampling_error
(4000, True)
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from typing import Any, Mapping

import numpy as np

from ..errors import AnalysisError
from .candidates import Candidate, output_value

__all__ = ["FirstOrder", "MonteCarloTask", "ChunkResult", "MonteCarlo", "first_order_random", "monte_carlo_tasks",
           "run_chunk", "summarize", "CHUNK", "DEFAULT_SAMPLES"]

#: Samples per Monte Carlo task: fixed, so that serial and parallel runs solve the same batches.
CHUNK = 2500
#: Monte Carlo samples of a ranking run unless asked otherwise.
DEFAULT_SAMPLES = 10_000
#: Step of the central differences, in standard deviations of each parameter.
_STEP = 0.01


@dataclass(frozen=True)
class FirstOrder:
    """The first-order random error of the output.

    Attributes
    ----------
    relative : float
        One standard deviation of the output, relative to the output.
    contributions : tuple of (str, float)
        Each varying parameter (``M2.VTO``, ``Q1.IS``) and its share of the variance, largest first.
    """

    relative: float
    contributions: tuple[tuple[str, float], ...]


def first_order_random(candidate: Candidate, process, values: Mapping[str, float], point,
                       temperature: float = 27.0) -> FirstOrder:
    """The output's relative standard deviation from Pelgrom's law, to first order (see the module docstring).

    Raises
    ------
    ProcessError
        When no device has mismatch coefficients.
    AnalysisError
        When a perturbed point does not solve.
    """
    from ..dc.mismatch import mismatch_sigmas
    from ..dc.operating_point import operating_points

    sigmas = mismatch_sigmas(candidate.circuit, process, values)
    if not sigmas:
        return FirstOrder(0.0, ())
    names = list(sigmas)
    count = 2 * len(names)
    samples = {name: np.full(count, nominal) for name, (nominal, _) in sigmas.items()}
    for k, name in enumerate(names):
        nominal, sigma = sigmas[name]
        samples[name][2 * k] = nominal + _STEP * sigma
        samples[name][2 * k + 1] = nominal - _STEP * sigma
    with np.errstate(all="ignore"):  # a Newton step may overflow on its way; the samples still converge
        solved = operating_points(candidate.circuit, process, samples, temperature, values, start=point)
    if solved.errors:
        index, error = solved.errors[0]
        raise AnalysisError(f"{names[index // 2]} moved by {_STEP} sigma: no operating point ({error.reason})")
    outputs = np.asarray(output_value(candidate, solved), dtype=float)
    slopes = (outputs[0::2] - outputs[1::2]) / (2 * _STEP)
    variance = slopes ** 2
    total = float(variance.sum())
    relative = math.sqrt(total) / abs(output_value(candidate, point))
    shares = sorted(((n, float(v / total) if total else 0.0) for n, v in zip(names, variance)), key=lambda x: -x[1])
    return FirstOrder(relative, tuple(shares))


@dataclass(frozen=True)
class MonteCarloTask:
    """One chunk of Monte Carlo samples of a candidate: everything a worker needs (it all pickles)."""

    candidate: Candidate
    process: Any
    values: Mapping[str, float]
    start: Any
    samples: Mapping[str, np.ndarray]
    temperature: float = 27.0


@dataclass(frozen=True)
class ChunkResult:
    """The outputs of one chunk (``nan`` where a sample did not solve) and the seconds it took."""

    outputs: np.ndarray
    seconds: float


@dataclass(frozen=True)
class MonteCarlo:
    """A Monte Carlo run's random error.

    Attributes
    ----------
    relative : float
        One standard deviation of the output over the samples that solved, relative to their mean.
    sampling_error : float
        The standard error of ``relative``, ``relative/sqrt(2(n - 1))``.
    samples : int
        Samples that solved.
    failed : int
        Samples without an operating point (left out).
    seconds : float
        Time spent in the chunks (summed over workers).
    """

    relative: float
    sampling_error: float
    samples: int
    failed: int
    seconds: float


def monte_carlo_tasks(candidate: Candidate, process, values: Mapping[str, float], point, count: int, seed: int = 0,
                      chunk: int = CHUNK, temperature: float = 27.0) -> list[MonteCarloTask]:
    """``count`` seeded mismatch samples of the candidate, cut into tasks of ``chunk`` samples.

    Raises
    ------
    ProcessError
        When no device has mismatch coefficients.
    """
    from ..dc.mismatch import mismatch_samples

    drawn = mismatch_samples(candidate.circuit, process, count, seed, values=values)
    return [MonteCarloTask(candidate, process, dict(values), point,
                           {name: array[first:first + chunk] for name, array in drawn.items()}, temperature)
            for first in range(0, count, chunk)]


def run_chunk(task: MonteCarloTask) -> ChunkResult:
    """Solve one chunk in one batch from the operating point (a module-level function: it pickles)."""
    from ..dc.operating_point import operating_points

    began = time.perf_counter()
    with np.errstate(all="ignore"):  # a Newton step may overflow on its way; the samples still converge
        solved = operating_points(task.candidate.circuit, task.process, dict(task.samples), task.temperature,
                                  task.values, start=task.start)
    outputs = np.array(output_value(task.candidate, solved), dtype=float)
    for index, _ in solved.errors:
        outputs[index] = np.nan
    return ChunkResult(outputs, time.perf_counter() - began)


def summarize(candidate: Candidate, chunks: list[ChunkResult]) -> MonteCarlo:
    """The relative standard deviation over every chunk's samples, with its sampling error."""
    outputs = np.concatenate([c.outputs for c in chunks]) if chunks else np.zeros(0)
    good = outputs[np.isfinite(outputs)]
    seconds = float(sum(c.seconds for c in chunks))
    if good.size < 2:
        return MonteCarlo(math.nan, math.nan, int(good.size), int(outputs.size - good.size), seconds)
    relative = float(np.std(good, ddof=1) / abs(np.mean(good)))
    return MonteCarlo(relative, relative / math.sqrt(2.0 * (good.size - 1)), int(good.size),
                      int(outputs.size - good.size), seconds)
