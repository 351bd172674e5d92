"""The DC operating point: solve a circuit (or a batch of variants of it) and report what everything does.

Third step of the DC side, the entry points: :func:`operating_point` for one
circuit, :func:`operating_points` for K variants of one circuit in one
batched solve (Monte Carlo samples, corners, sweep points).  The result
types live in :mod:`symbias.dc.results` (re-exported here).

Device regions: BJT ``active``, ``saturation``, ``cutoff``, ``reverse``;
MOS ``saturation`` (the active region of a MOS device), ``triode``,
``subthreshold``, ``cutoff``; diode ``forward``, ``off``, ``reverse``,
``breakdown`` (definitions in the device modules of :mod:`symbias.devices`).

Small-signal values per device: BJT ``gm``, ``rpi``, ``ro``, ``beta``; MOS
``gm``, ``gmb``, ``ro``; diode ``rd`` (and ``cj``).
:meth:`OperatingPoint.symbol_values` names them the way symbolic formulas do
(``gm_Q1``).

Samples (:func:`operating_points`): a mapping of name to array, all arrays of
one length K: ``"R1"`` (an element's value), ``"Vdd"`` (a source's value),
``"M1.w"`` (an instance parameter), ``"QN.BF"`` (a parameter of every device
of model QN), ``"Q1.IS"`` (a model parameter of device Q1 alone); see
:mod:`symbias.devices.dc_context`.  Free symbols vary through ``values`` and
the temperature through ``temperature``, either as arrays.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist('''mirror
... Iref 0 in 100u
... Q1 in in 0 QN
... Q2 out in 0 QN
... Vout out 0 2
... .model QN npn (IS=1e-16 BF=100 VAF=50)
... ''')
>>> op = operating_point(c)
>>> op.devices["Q2"].region, round(op.branch_currents["Vout"] * 1e6, 2)
('active', -100.56)
>>> ops = operating_points(c, samples={"Q2.IS": [1e-16, 1.1e-16]})
>>> (ops.branch_currents["Vout"] * 1e6).round(2).tolist()
[-100.56, -110.51]
"""

from __future__ import annotations

from typing import Any, Mapping

import numpy as np

from ..circuit import Circuit
from ..devices.mos import BULK_FORWARD_LIMIT
from ..devices.nonlinear import MAX_CURRENT
from ..errors import SymbiasError
from ..process import Process
from .newton import DcOptions
from .report import report_batch, violations
from .results import DeviceOperatingPoint, DeviceOperatingPoints, OperatingPoint, OperatingPoints
from .stepping import BatchSolution, Solution, solve, solve_batch
from .system import DcSystem, build_system

__all__ = ["OperatingPoint", "DeviceOperatingPoint", "OperatingPoints", "DeviceOperatingPoints", "operating_point",
           "operating_points", "report", "check_plausible", "MAX_CURRENT", "BULK_FORWARD_LIMIT"]


def operating_point(circuit: Circuit, process: Process | None = None, temperature: float = 27.0,
                    values: Mapping[str, float] | None = None, *, overrides: Mapping[str, float] | None = None,
                    start: OperatingPoint | None = None, guess: Mapping[str, float] | None = None,
                    options: DcOptions = DcOptions(), parameters: Mapping[str, float] | None = None) -> OperatingPoint:
    """Solve the DC operating point of ``circuit``.

    Parameters
    ----------
    circuit : Circuit
    process : Process, optional
        Device parameters; ``.model`` cards override them.
    temperature : float, default 27
        degC.
    values : mapping, optional
        Numbers for free symbols in element values.
    overrides : mapping, optional
        Source name -> value, replacing the netlist's value.
    start : OperatingPoint, optional
        A nearby solution to start Newton from.
    guess : mapping, optional
        Node -> voltage to start from (like a simulator's nodeset), to pick
        one of several solutions.
    options : DcOptions
    parameters : mapping, optional
        Element values and model parameters replaced, named as the samples
        of :func:`operating_points` (one number each).

    Raises
    ------
    CircuitError
        Bad input: no DC path, missing numbers, a junction driven far outside the model.
    ConvergenceError
        No solution found.
    """
    system = build_system(circuit, process, temperature, values, samples=parameters)
    solution = solve(system, overrides=overrides, start=start.solution if start else None, guess=guess,
                     options=options)
    return report(system, solution, overrides)


def report(system: DcSystem, solution: Solution, overrides: Mapping[str, Any] | None = None) -> OperatingPoint:
    """Build the :class:`OperatingPoint` of a converged solution.

    Raises
    ------
    CircuitError
        When the solution lies outside what the device models describe (:func:`check_plausible`).
    AnalysisError
        When it is not finite.
    """
    batch = BatchSolution(solution.x[None, :], tuple(s[None] for s in solution.state),
                          np.array([solution.iterations]), (solution.method,))
    return report_batch(system, batch, overrides).point(0)


def check_plausible(system: DcSystem, x: np.ndarray) -> None:
    """Refuse a solution outside what the device models describe.

    A BJT emitter-base junction reversed beyond its ``BVEBO``, a MOS bulk
    junction forward-biased beyond :data:`BULK_FORWARD_LIMIT`, or a terminal
    current above :data:`MAX_CURRENT` (a junction forced on hard, e.g. by a
    voltage source across it) raise :class:`CircuitError` at the device's line.
    """
    found = violations(system, np.atleast_2d(x))
    if found:
        raise found[min(found)]


def _nominal(value):
    """A representative of a batch: the value itself, or the sample nearest the median."""
    array = np.asarray(value, dtype=float)
    if array.ndim == 0:
        return float(array)
    return float(array[np.argmin(np.abs(array - np.median(array)))])


def operating_points(circuit: Circuit, process: Process | None = None, samples: Mapping[str, Any] | None = None,
                     temperature=27.0, values: Mapping[str, Any] | None = None, *,
                     overrides: Mapping[str, Any] | None = None, guess: Mapping[str, float] | None = None,
                     start: OperatingPoint | None = None, options: DcOptions = DcOptions()) -> OperatingPoints:
    """Solve K variants of ``circuit`` in one batch (Monte Carlo samples, corners, sweep points).

    Every sample starts Newton from the nominal solution (``start``, or the
    circuit solved without the samples, with each other array replaced by
    its median sample), so a self-biased cell stays on its conducting state;
    samples that do not converge go on through gmin and source stepping on
    their own.  A sample
    that still fails is listed in :attr:`OperatingPoints.errors` with its
    cause, its values ``nan``.

    Parameters
    ----------
    samples : mapping, optional
        Name -> array over the batch (see the module docstring).
    temperature : float or array
    values : mapping, optional
        Free symbols; arrays vary over the batch.
    overrides : mapping, optional
        Source name -> value (arrays vary over the batch).

    Raises
    ------
    CircuitError
        Bad input (a sample naming nothing, arrays of different lengths, ...).
    """
    system = build_system(circuit, process, temperature, values, samples=samples)
    if start is None:
        try:
            start = operating_point(circuit, process, _nominal(temperature),
                                    {k: _nominal(v) for k, v in (values or {}).items()},
                                    overrides={k: _nominal(v) for k, v in (overrides or {}).items()}, guess=guess,
                                    options=options)
        except SymbiasError:
            start = None  # no nominal point: every sample starts from scratch
    solution = solve_batch(system, overrides=overrides, start=start.solution if start else None, guess=guess,
                           options=options)
    return report_batch(system, solution, overrides)
