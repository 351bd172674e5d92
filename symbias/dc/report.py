"""Turn solved unknowns into operating points: node voltages, currents, device regions and small-signal values.

Third step of the DC side: :class:`~symbias.dc.system.DcSystem` +
:class:`~symbias.dc.stepping.BatchSolution` ->
:class:`~symbias.dc.results.OperatingPoints`.  Every quantity is computed
for the whole batch at once; devices are described through the interface of
:mod:`symbias.devices.nonlinear` (regions, small-signal values, limits, and
the checks that refuse a solution outside what a model describes).

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.dc.system import build_system
>>> from symbias.dc.stepping import solve_batch
>>> s = build_system(parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn\\n"))
>>> ops = report_batch(s, solve_batch(s, overrides={"I1": [1e-4, 1e-3]}), {"I1": [1e-4, 1e-3]})
>>> ops.device("Q1").region.tolist(), ops.element_currents["I1"].tolist()
(['active', 'active'], [0.0001, 0.001])
"""

from __future__ import annotations

from typing import Any, Mapping

import numpy as np

from ..circuit import GROUND
from ..errors import AnalysisError, CircuitError, SymbiasError
from .newton import bank_numbers, device_controls
from .results import DeviceOperatingPoints, OperatingPoints
from .stepping import BatchSolution
from .system import DcSystem

__all__ = ["report_batch", "violations"]


def _evaluated(system: DcSystem, x: np.ndarray) -> list[tuple]:
    """(bank, numbers, controls, currents, description) of every bank at unknowns ``x`` ``(A, n)``."""
    out = []
    for bank, numbers, v in zip(system.banks, bank_numbers(system, np.arange(x.shape[0])), device_controls(system, x)):
        with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
            described = bank.model.describe(numbers, v)
            currents = described.currents
            if currents is None:
                currents, _ = bank.model.evaluate(numbers, v)
        out.append((bank, numbers, v, currents, described))
    return out


def violations(system: DcSystem, x: np.ndarray, evaluated: list | None = None) -> dict[int, CircuitError]:
    """Samples whose solution lies outside what a device model describes, with the first reason each.

    Devices are checked in bank order, each device's conditions in the order
    its model lists them (e.g. a BJT's emitter-base junction reversed beyond
    ``BVEBO``, a terminal current above 1 A; a MOS bulk junction forward-biased).
    """
    found: dict[int, CircuitError] = {}
    for bank, numbers, v, currents, _ in evaluated or _evaluated(system, x):
        checks = bank.model.check(numbers, v, currents)
        if not checks:
            continue
        masks = np.stack([np.broadcast_to(c.mask, v.shape[:2]) for c in checks], axis=-1)  # (A, ndev, checks)
        flat = masks.reshape(masks.shape[0], -1)
        for sample in np.flatnonzero(flat.any(axis=1)):
            if int(sample) in found:
                continue
            device, which = divmod(int(np.argmax(flat[sample])), len(checks))
            check = checks[which]
            limit = None if check.limit is None else float(np.broadcast_to(check.limit, v.shape[:2])[sample, device])
            message = check.message.format(name=bank.names[device],
                                           value=float(np.broadcast_to(check.value, v.shape[:2])[sample, device]),
                                           limit=limit)
            found[int(sample)] = CircuitError(message, path=system.circuit.path, line=bank.lines[device])
    return found


def _element_currents(system: DcSystem, xe: np.ndarray, overrides: Mapping[str, Any] | None) -> dict:
    given = {k.lower(): v for k, v in (overrides or {}).items()}
    count = xe.shape[0]
    out = {}
    for name, current in system.currents.items():
        if current.source is not None:
            value = given.get(current.source, system.sources[current.source].value)
            out[name] = np.broadcast_to(np.asarray(value, dtype=float), (count,)).copy()
        else:
            out[name] = np.sum(xe[:, current.index] * current.coefficient, axis=1)
    return out


def _devices(evaluated: list, xe: np.ndarray) -> dict[str, DeviceOperatingPoints]:
    count = xe.shape[0]
    devices = {}
    for bank, numbers, v, currents, described in evaluated:
        model = bank.model
        signed = np.zeros(currents.shape[:2] + (len(model.terminals),))  # terminals that carry none stay 0
        signed[..., list(model.current_terminals)] = bank.polarity[:, None] * currents + 0.0
        for j, name in enumerate(bank.names):
            pins = bank.pins[j]
            devices[name] = DeviceOperatingPoints(
                name=name, type=bank.types[j], kind=model.letter, line=bank.lines[j], output=model.output,
                polarity=int(bank.polarity[j]), working_regions=model.working_regions, fields=model.fields,
                region=np.broadcast_to(described.region, (count, bank.size))[:, j].copy(),
                currents={t: signed[:, j, k].copy() for k, t in enumerate(model.terminals)},
                voltages={key: xe[:, pins[p]] - xe[:, pins[m]] for key, p, m in model.voltages},
                small_signal={k: np.broadcast_to(a, (count, bank.size))[:, j].copy()
                              for k, a in described.small_signal.items()},
                limits={k: np.broadcast_to(a, (count, bank.size))[:, j].copy() for k, a in described.limits.items()},
            )
    return devices


def report_batch(system: DcSystem, solution: BatchSolution,
                 overrides: Mapping[str, Any] | None = None) -> OperatingPoints:
    """Build the :class:`OperatingPoints` of a batch of solutions (failed samples hold ``nan``).

    Samples whose solution lies outside the device models (:func:`violations`)
    or is not finite are added to the errors.
    """
    x = solution.x
    count = x.shape[0]
    errors: dict[int, SymbiasError] = dict(solution.errors)
    evaluated = _evaluated(system, x)
    for sample, error in violations(system, x, evaluated).items():
        errors.setdefault(sample, error)
    for sample in np.flatnonzero(~np.all(np.isfinite(x), axis=1)):
        errors.setdefault(int(sample), AnalysisError("the DC solution is not finite", path=system.circuit.path))
    bad = np.array(sorted(errors), dtype=int)
    xe = np.concatenate([x, np.zeros((count, 1))], axis=1)
    if bad.size:
        xe[bad] = np.nan
        xe[:, -1] = 0.0
    circuit = system.circuit
    nodes = {node: (np.zeros(count) if node == GROUND else xe[:, system.node_index[node]].copy())
             for node in circuit.nodes}
    branches = {e.name: xe[:, system.branch_index[e.key]].copy() for e in circuit.elements
                if e.key in system.branch_index}
    elements = _element_currents(system, xe, overrides)
    if bad.size:  # failed samples: every device quantity nan too
        evaluated = _evaluated(system, xe[:, :-1])
    devices = _devices(evaluated, xe)
    for value in elements.values():
        value[bad] = np.nan
    ordered = {e.name: devices[e.name] for e in circuit.devices}
    return OperatingPoints(
        title=circuit.title,
        path=circuit.path,
        temperature=system.temperature,
        node_voltages=nodes,
        branch_currents=branches,
        element_currents=elements,
        devices=ordered,
        methods=solution.methods,
        iterations=solution.iterations,
        solution=BatchSolution(solution.x, solution.state, solution.iterations, solution.methods,
                               tuple(sorted(errors.items()))),
        errors=tuple(sorted(errors.items())),
    )
