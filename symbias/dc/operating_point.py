"""The DC operating point: solve a circuit and report what everything does.

Third step of the DC side, the entry point :func:`operating_point`.  The
result types live in :mod:`symbias.dc.results` (re-exported here).

Device regions: BJT ``active``, ``saturation``, ``cutoff``, ``reverse``;
MOS ``saturation`` (the active region of a MOS device), ``triode``,
``subthreshold``, ``cutoff``; diode ``forward``, ``off``, ``reverse``,
``breakdown`` (definitions in the device modules of :mod:`symbias.devices`).

Small-signal values per device: BJT ``gm``, ``rpi``, ``ro``, ``beta``; MOS
``gm``, ``gmb``, ``ro``; diode ``rd`` (and ``cj``).
:meth:`OperatingPoint.symbol_values` names them the way symbolic formulas do
(``gm_Q1``).

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
"""

from __future__ import annotations

from typing import Any, Mapping

import numpy as np

from ..circuit import Circuit
from ..devices.mos import BULK_FORWARD_LIMIT
from ..devices.nonlinear import MAX_CURRENT
from ..process import Process
from .newton import DcOptions
from .report import report_batch, violations
from .results import DeviceOperatingPoint, OperatingPoint
from .stepping import BatchSolution, Solution, solve
from .system import DcSystem, build_system

__all__ = ["OperatingPoint", "DeviceOperatingPoint", "operating_point", "report", "check_plausible", "MAX_CURRENT",
           "BULK_FORWARD_LIMIT"]


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
        Element values and model parameters replaced, named as the samples of
        :mod:`symbias.devices.dc_context` (``"R1"``, ``"QN.BF"``, ``"Q1.IS"``; one number each).

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
