"""The DC operating point: solve a circuit and report what every node and device does.

Third step of the DC side: :class:`~symbias.dc.newton.Solution` ->
:class:`OperatingPoint`, a frozen record of node voltages, branch currents,
per-device terminal currents, regions and small-signal values (plain SI
floats).  :func:`operating_point` runs the whole chain from a circuit.

Device regions: BJT ``active``, ``saturation``, ``cutoff``, ``reverse``;
MOS ``saturation`` (the active region of a MOS device), ``triode``,
``subthreshold``, ``cutoff`` (definitions in :mod:`symbias.devices.bjt` and
:mod:`symbias.devices.mos`).

Small-signal values per device: BJT ``gm``, ``rpi``, ``ro``, ``beta``; MOS
``gm``, ``gmb``, ``ro``.  :meth:`OperatingPoint.symbol_values` names them the
way symbolic formulas do (``gm_Q1``).

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

from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Mapping

import numpy as np

from ..circuit import GROUND, Circuit
from ..devices.bjt import bjt_region, bjt_small_signal, bjt_vcesat
from ..devices.mos import mos_region, mos_small_signal
from ..errors import AnalysisError, CircuitError
from ..process import Process
from .newton import DcOptions, Solution, device_voltages, evaluate, solve
from .system import DcSystem, build_system

__all__ = ["OperatingPoint", "DeviceOperatingPoint", "operating_point", "report", "check_plausible",
           "MAX_CURRENT", "BULK_FORWARD_LIMIT"]

#: A terminal current above this (A) means a junction is forced on hard: refused.
MAX_CURRENT = 1.0
#: Forward bias (V) of a MOS bulk junction beyond which a result is refused (bulk diodes are not modelled).
BULK_FORWARD_LIMIT = 0.5


def _frozen(data: Mapping) -> Mapping:
    return MappingProxyType(dict(data))


@dataclass(frozen=True)
class DeviceOperatingPoint:
    """One transistor at the operating point.

    Attributes
    ----------
    name, type : str
        Element name as written; model type (npn, pnp, nmos, pmos).
    region : str
    currents : mapping
        Current into each terminal (A): ``c b e`` or ``d g s b``.
    voltages : mapping
        ``vbe vce vbc`` or ``vgs vds vbs`` as in the circuit (pnp/pmos negative when on).
    small_signal : mapping
        ``gm rpi ro beta`` or ``gm gmb ro`` (siemens, ohm).
    limits : mapping
        BJT ``vcesat`` (V, magnitude); MOS ``vth`` (signed as in SPICE), ``vov``
        (positive when on) and ``vdsat`` (magnitude).
    line : int
        Netlist line of the device.
    """

    name: str
    type: str
    region: str
    currents: Mapping[str, float]
    voltages: Mapping[str, float]
    small_signal: Mapping[str, float]
    limits: Mapping[str, float]
    line: int = 0

    def __post_init__(self) -> None:
        for key in ("currents", "voltages", "small_signal", "limits"):
            object.__setattr__(self, key, _frozen(getattr(self, key)))

    @property
    def output_current(self) -> float:
        """Collector or drain current (A, into the terminal)."""
        return self.currents["c"] if "c" in self.currents else self.currents["d"]

    def to_dict(self) -> dict:
        """Plain-dict form for JSON."""
        return {
            "type": self.type,
            "region": self.region,
            "currents": dict(self.currents),
            "voltages": dict(self.voltages),
            "small_signal": dict(self.small_signal),
            "limits": dict(self.limits),
        }


@dataclass(frozen=True)
class OperatingPoint:
    """A solved DC operating point (all values plain SI floats).

    Attributes
    ----------
    title, path : str
        Of the circuit solved.
    temperature : float
        degC.
    node_voltages : mapping
        Node -> volts, ground ``"0"`` included.
    branch_currents : mapping
        Voltage sources (and L, E, H elements), by name as written -> amperes,
        SPICE sign: positive when current enters the + terminal (first node).
    element_currents : mapping
        Resistors and current sources (and G, F) -> current from the first
        node through the element to the second.
    devices : mapping
        Transistor name as written -> :class:`DeviceOperatingPoint`.
    method : str
        How the solver got there (``newton``, ``gmin stepping``, ...).
    iterations : int
    solution : Solution
        The solver's state, to warm-start a nearby solve.
    """

    title: str
    path: str | None
    temperature: float
    node_voltages: Mapping[str, float]
    branch_currents: Mapping[str, float]
    element_currents: Mapping[str, float]
    devices: Mapping[str, DeviceOperatingPoint]
    method: str
    iterations: int
    solution: Solution = field(repr=False, compare=False)

    def __post_init__(self) -> None:
        for key in ("node_voltages", "branch_currents", "element_currents", "devices"):
            object.__setattr__(self, key, _frozen(getattr(self, key)))

    def voltage(self, node: str) -> float:
        """Voltage of ``node`` (any case; ``gnd`` is ground)."""
        key = GROUND if node.lower() == "gnd" else node.lower()
        try:
            return self.node_voltages[key]
        except KeyError:
            raise CircuitError(f"no node {node!r}", path=self.path) from None

    def current(self, name: str) -> float:
        """Branch or element current of the element ``name`` (any case)."""
        for table in (self.branch_currents, self.element_currents):
            for key, value in table.items():
                if key.lower() == name.lower():
                    return value
        raise CircuitError(f"no current for element {name!r}", path=self.path)

    def device(self, name: str) -> DeviceOperatingPoint:
        """The transistor ``name`` (any case)."""
        for key, value in self.devices.items():
            if key.lower() == name.lower():
                return value
        raise CircuitError(f"no transistor named {name!r}", path=self.path)

    def small_signal(self, device: str) -> dict[str, float]:
        """Small-signal values of one device: ``{"gm": ..., "rpi": ..., "ro": ...}`` etc.

        Examples
        --------
        >>> from symbias.netlist import parse_netlist
        >>> op = operating_point(parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn\\n"))
        >>> sorted(op.small_signal("q1"))
        ['beta', 'gm', 'ro', 'rpi']
        """
        return dict(self.device(device).small_signal)

    def small_signal_values(self) -> dict[str, dict[str, float]]:
        """Small-signal values of every device, keyed by device name."""
        return {name: dict(dev.small_signal) for name, dev in self.devices.items()}

    def symbol_values(self) -> dict[str, float]:
        """Small-signal values named as formula symbols: ``gm_Q1``, ``rpi_Q1``, ``ro_M2``, ...

        Examples
        --------
        >>> from symbias.netlist import parse_netlist
        >>> op = operating_point(parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn\\n"))
        >>> round(op.symbol_values()["gm_Q1"] * 1e3, 1)
        38.3
        """
        from ..symbols import device_symbol

        return {device_symbol(key, name): value
                for name, dev in self.devices.items() for key, value in dev.small_signal.items()}

    @property
    def supply_current(self) -> float:
        """Sum of the magnitudes of the voltage-source currents (A)."""
        return float(sum(abs(v) for v in self.branch_currents.values()))

    def to_dict(self) -> dict:
        """Plain-dict form for JSON: node_voltages, branch_currents, element_currents, devices, ...

        Examples
        --------
        >>> from symbias.netlist import parse_netlist
        >>> op = operating_point(parse_netlist("t\\nV1 a 0 1\\nR1 a 0 1k\\n"))
        >>> op.to_dict()["branch_currents"]
        {'V1': -0.001}
        """
        return {
            "title": self.title,
            "temperature": self.temperature,
            "node_voltages": dict(self.node_voltages),
            "branch_currents": dict(self.branch_currents),
            "element_currents": dict(self.element_currents),
            "devices": {name: dev.to_dict() for name, dev in self.devices.items()},
            "method": self.method,
            "iterations": self.iterations,
        }


def operating_point(circuit: Circuit, process: Process | None = None, temperature: float = 27.0,
                    values: Mapping[str, float] | None = None, *, overrides: Mapping[str, float] | None = None,
                    start: OperatingPoint | None = None, guess: Mapping[str, float] | None = None,
                    options: DcOptions = DcOptions()) -> OperatingPoint:
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

    Raises
    ------
    CircuitError
        Bad input: no DC path, missing numbers, a junction driven far outside the model.
    ConvergenceError
        No solution found.
    """
    system = build_system(circuit, process, temperature, values)
    solution = solve(system, overrides=overrides, start=start.solution if start else None, guess=guess,
                     options=options)
    return report(system, solution)


def check_plausible(system: DcSystem, x: np.ndarray) -> None:
    """Refuse a solution outside what the device models describe.

    A BJT emitter-base junction reversed beyond its ``BVEBO``, a MOS bulk
    junction forward-biased beyond :data:`BULK_FORWARD_LIMIT`, or a terminal
    current above :data:`MAX_CURRENT` (a junction forced on hard, e.g. by a
    voltage source across it) raise :class:`CircuitError` at the device's line.
    """
    volts = device_voltages(system, x)
    bjt, mos = evaluate(system, volts)
    path = system.circuit.path
    if bjt is not None:
        bank = system.bjt
        for i, name in enumerate(bank.names):
            limit = bank.models[i].BVEBO
            if volts["vbe"][i] < -limit:
                raise CircuitError(
                    f"{name}: emitter-base junction reversed by {-volts['vbe'][i]:.3g} V, beyond BVEBO = {limit:g} V "
                    f"(the model has no breakdown); check the sources driving it",
                    path=path, line=bank.lines[i])
            worst = max(abs(bjt.ic[i]), abs(bjt.ib[i]))
            if worst > MAX_CURRENT:
                raise CircuitError(
                    f"{name}: {worst:.3g} A through a junction forced on hard (a voltage source across it?)",
                    path=path, line=bank.lines[i])
    if mos is not None:
        bank = system.mos
        vbd = volts["vbs"] - volts["vds"]
        for i, name in enumerate(bank.names):
            forward = max(volts["vbs"][i], vbd[i])
            if forward > BULK_FORWARD_LIMIT:
                raise CircuitError(
                    f"{name}: bulk junction forward-biased by {forward:.3g} V (bulk diodes are not modelled); "
                    f"tie the bulk to the lowest (nmos) or highest (pmos) supply",
                    path=path, line=bank.lines[i])
            if abs(mos.id[i]) > MAX_CURRENT:
                raise CircuitError(f"{name}: implausible drain current {mos.id[i]:.3g} A", path=path,
                                   line=bank.lines[i])


def report(system: DcSystem, solution: Solution) -> OperatingPoint:
    """Build the :class:`OperatingPoint` of a converged solution (checks it with :func:`check_plausible`)."""
    x = solution.x
    check_plausible(system, x)
    xe = np.append(x, 0.0)
    circuit = system.circuit
    nodes = {node: float(xe[i]) for node, i in system.node_index.items()}
    nodes[GROUND] = 0.0
    branch = {}
    elements = {}
    for element in circuit.elements:
        if element.key in system.branch_index:
            branch[element.name] = float(x[system.branch_index[element.key]])
        elif element.kind == "R":
            a, b = element.nodes
            elements[element.name] = (nodes[a] - nodes[b]) / system.resistors[element.key]
        elif element.kind == "I":
            elements[element.name] = system.sources[element.key][1]
    if not np.all(np.isfinite(x)):
        raise AnalysisError("the DC solution is not finite", path=circuit.path)
    devices = {**_bjt_reports(system, xe), **_mos_reports(system, xe)}
    ordered = {e.name: devices[e.name] for e in circuit.devices}
    return OperatingPoint(
        title=circuit.title,
        path=circuit.path,
        temperature=system.temperature,
        node_voltages={n: nodes[n] for n in circuit.nodes},
        branch_currents=branch,
        element_currents=elements,
        devices=ordered,
        method=solution.method,
        iterations=solution.iterations,
        solution=solution,
    )


def _bjt_reports(system: DcSystem, xe: np.ndarray) -> dict[str, DeviceOperatingPoint]:
    bank = system.bjt
    if bank is None:
        return {}
    volts = device_voltages(system, xe[:-1])
    currents, _ = evaluate(system, volts)
    t = bank.params
    regions = bjt_region(currents, volts["vbc"], t)
    small = bjt_small_signal(currents)
    vcesat = bjt_vcesat(volts["vbe"], t)
    c, b, e = bank.terminals
    out = {}
    for i, name in enumerate(bank.names):
        pol = t.polarity[i]
        ic, ib = pol * currents.ic[i], pol * currents.ib[i]
        vb, vc, ve = xe[b[i]], xe[c[i]], xe[e[i]]
        out[name] = DeviceOperatingPoint(
            name=name,
            type="npn" if pol > 0 else "pnp",
            region=str(regions[i]),
            currents={"c": float(ic), "b": float(ib), "e": float(-(ic + ib))},
            voltages={"vbe": float(vb - ve), "vce": float(vc - ve), "vbc": float(vb - vc)},
            small_signal={k: float(v[i]) for k, v in small.items()},
            limits={"vcesat": float(vcesat[i])},
            line=bank.lines[i],
        )
    return out


def _mos_reports(system: DcSystem, xe: np.ndarray) -> dict[str, DeviceOperatingPoint]:
    bank = system.mos
    if bank is None:
        return {}
    volts = device_voltages(system, xe[:-1])
    _, currents = evaluate(system, volts)
    t = bank.params
    regions = mos_region(currents, volts["vds"], t)
    small = mos_small_signal(currents, t)
    d, g, s, b = bank.terminals
    out = {}
    for i, name in enumerate(bank.names):
        pol = t.polarity[i]
        drain = float(pol * currents.id[i])
        vd, vg, vs, vb = xe[d[i]], xe[g[i]], xe[s[i]], xe[b[i]]
        vov = float(currents.vov[i])
        out[name] = DeviceOperatingPoint(
            name=name,
            type="nmos" if pol > 0 else "pmos",
            region=str(regions[i]),
            currents={"d": drain, "g": 0.0, "s": -drain, "b": 0.0},
            voltages={"vgs": float(vg - vs), "vds": float(vd - vs), "vbs": float(vb - vs)},
            small_signal={k: float(v[i]) for k, v in small.items()},
            limits={"vth": float(pol * currents.vth[i]), "vov": vov, "vdsat": float(max(vov, t.s[i]))},
            line=bank.lines[i],
        )
    return out
