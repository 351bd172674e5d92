"""The frozen results of the DC solver: one operating point, or a batch of them.

Third step of the DC side (data only; :mod:`symbias.dc.report` fills them).
:class:`OperatingPoint` holds plain SI floats; :class:`OperatingPoints` holds
the same fields as arrays over a batch (Monte Carlo samples, corners, sweep
points), with :meth:`OperatingPoints.point` giving sample ``i`` as an
:class:`OperatingPoint`.  Failed samples are listed with their cause and
hold ``nan``.  Everything here pickles (mappings are rebuilt from plain
dicts), so results can cross a process pool.

Device regions, small-signal values and limits are those the device models
of :mod:`symbias.devices` describe (BJT ``gm rpi ro beta``; MOS ``gm gmb
ro``; diode ``rd`` and ``cj``).

Examples
--------
>>> import pickle
>>> from symbias.netlist import parse_netlist
>>> from symbias.dc.operating_point import operating_point
>>> op = operating_point(parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn\\n"))
>>> pickle.loads(pickle.dumps(op)) == op
True
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields
from types import MappingProxyType
from typing import Any, Mapping

import numpy as np

from ..circuit import GROUND
from ..errors import CircuitError, SymbiasError

__all__ = ["DeviceOperatingPoint", "OperatingPoint", "DeviceOperatingPoints", "OperatingPoints"]


def _frozen(data: Mapping) -> Mapping:
    return MappingProxyType(dict(data))


def _plain_fields(obj, mappings: tuple[str, ...]) -> dict:
    items = {f.name: getattr(obj, f.name) for f in fields(obj)}
    for name in mappings:
        items[name] = dict(items[name])
    return items


def _rebuild(cls, items: dict):
    return cls(**items)


def _lookup(table: Mapping[str, Any], name: str, what: str, path: str | None):
    for key, value in table.items():
        if key.lower() == name.lower():
            return value
    raise CircuitError(f"no {what} named {name!r}", path=path)


@dataclass(frozen=True)
class DeviceOperatingPoint:
    """One nonlinear device at the operating point.

    Attributes
    ----------
    name, type : str
        Element name as written; model type (npn, pnp, nmos, pmos, d).
    region : str
    currents : mapping
        Current into each terminal (A): BJT ``c b e``, MOS ``d g s b``, diode ``a k``.
    voltages : mapping
        BJT ``vbe vce vbc``, MOS ``vgs vds vbs``, diode ``vd`` as in the circuit
        (pnp/pmos negative when on).
    small_signal : mapping
        BJT ``gm rpi ro beta``, MOS ``gm gmb ro``, diode ``rd`` (``cj``) (siemens, ohm, farad).
    limits : mapping
        BJT ``vcesat`` (V, magnitude); MOS ``vth`` (signed as in SPICE), ``vov``
        (positive when on) and ``vdsat`` (magnitude).
    line : int
        Netlist line of the device.
    kind : str
        Element letter.
    output : str
        Terminal whose current is :attr:`output_current`.
    polarity : int
        +1 (npn, nmos, diode) or -1 (pnp, pmos).
    working : bool
        In the region where the device acts as a current source (BJT active, MOS saturation).
    fields : tuple of (str, str, str, str)
        Report columns of its kind: label, section, key, unit (see :meth:`table`).
    """

    name: str
    type: str
    region: str
    currents: Mapping[str, float]
    voltages: Mapping[str, float]
    small_signal: Mapping[str, float]
    limits: Mapping[str, float]
    line: int = 0
    kind: str = ""
    output: str = ""
    polarity: int = 1
    working: bool = False
    fields: tuple[tuple[str, str, str, str], ...] = ()

    _MAPPINGS = ("currents", "voltages", "small_signal", "limits")

    def __post_init__(self) -> None:
        for key in self._MAPPINGS:
            object.__setattr__(self, key, _frozen(getattr(self, key)))

    def __reduce__(self):
        return (_rebuild, (DeviceOperatingPoint, _plain_fields(self, self._MAPPINGS)))

    @property
    def output_current(self) -> float:
        """Collector, drain or anode current (A, into the terminal)."""
        if self.output:
            return self.currents[self.output]
        return self.currents["c"] if "c" in self.currents else self.currents["d"]

    def table(self) -> list[tuple[str, float, str]]:
        """The report columns of this device: (label, value, unit), ``nan`` where a value is absent.

        Examples
        --------
        >>> from symbias.netlist import parse_netlist
        >>> from symbias.dc.operating_point import operating_point
        >>> op = operating_point(parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn\\n"))
        >>> [label for label, _, _ in op.devices["Q1"].table()][:3]
        ['IC', 'VBE', 'VCE']
        """
        return [(label, float(getattr(self, section).get(key, np.nan)), unit)
                for label, section, key, unit in self.fields]

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
        Resistors, current sources, G and F -> current from the first node
        through the element to the second.
    devices : mapping
        Device name as written -> :class:`DeviceOperatingPoint`.
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
    solution: Any = field(repr=False, compare=False)

    _MAPPINGS = ("node_voltages", "branch_currents", "element_currents", "devices")

    def __post_init__(self) -> None:
        for key in self._MAPPINGS:
            object.__setattr__(self, key, _frozen(getattr(self, key)))

    def __reduce__(self):
        return (_rebuild, (OperatingPoint, _plain_fields(self, self._MAPPINGS)))

    def voltage(self, node: str) -> float:
        """Voltage of ``node`` (any case; ``gnd`` is ground)."""
        key = GROUND if node.lower() == "gnd" else node.lower()
        try:
            return self.node_voltages[key]
        except KeyError:
            raise CircuitError(f"no node {node!r}", path=self.path) from None

    def current(self, name: str) -> float:
        """Branch or element current of the element ``name`` (any case)."""
        return _lookup({**self.branch_currents, **self.element_currents}, name, "current for element", self.path)

    def device(self, name: str) -> DeviceOperatingPoint:
        """The device ``name`` (any case)."""
        return _lookup(self.devices, name, "device", self.path)

    def small_signal(self, device: str) -> dict[str, float]:
        """Small-signal values of one device: ``{"gm": ..., "rpi": ..., "ro": ...}`` etc.

        Examples
        --------
        >>> from symbias.netlist import parse_netlist
        >>> from symbias.dc.operating_point import operating_point
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
        >>> from symbias.dc.operating_point import operating_point
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
        >>> from symbias.dc.operating_point import operating_point
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


@dataclass(frozen=True)
class DeviceOperatingPoints:
    """One device over a batch: the fields of :class:`DeviceOperatingPoint` as arrays of length K.

    ``nan`` in ``small_signal`` or ``limits`` marks a value the device does not have.
    """

    name: str
    type: str
    kind: str
    line: int
    output: str
    polarity: int
    working_regions: frozenset
    fields: tuple[tuple[str, str, str, str], ...]
    region: np.ndarray
    currents: Mapping[str, np.ndarray]
    voltages: Mapping[str, np.ndarray]
    small_signal: Mapping[str, np.ndarray]
    limits: Mapping[str, np.ndarray]

    _MAPPINGS = ("currents", "voltages", "small_signal", "limits")

    def __post_init__(self) -> None:
        for key in self._MAPPINGS:
            object.__setattr__(self, key, _frozen(getattr(self, key)))

    def __reduce__(self):
        return (_rebuild, (DeviceOperatingPoints, _plain_fields(self, self._MAPPINGS)))

    @property
    def output_current(self) -> np.ndarray:
        """Collector, drain or anode current over the batch (A)."""
        return self.currents[self.output]

    def point(self, i: int) -> DeviceOperatingPoint:
        """Sample ``i`` as a :class:`DeviceOperatingPoint`."""
        def pick(table: Mapping[str, np.ndarray], keep_nan: bool = True) -> dict[str, float]:
            values = {k: float(v[i]) + 0.0 for k, v in table.items()}
            return values if keep_nan else {k: v for k, v in values.items() if v == v}

        region = str(self.region[i])
        return DeviceOperatingPoint(
            name=self.name, type=self.type, region=region, currents=pick(self.currents),
            voltages=pick(self.voltages), small_signal=pick(self.small_signal, False),
            limits=pick(self.limits, False), line=self.line, kind=self.kind, output=self.output,
            polarity=self.polarity, working=region in self.working_regions, fields=self.fields,
        )


@dataclass(frozen=True)
class OperatingPoints:
    """K solved operating points of one circuit: the fields of :class:`OperatingPoint` as arrays.

    Attributes
    ----------
    title, path : str
    temperature : float or ndarray
    node_voltages, branch_currents, element_currents : mapping of str to ndarray
        Each ``(K,)``; see :class:`OperatingPoint` for the conventions.
    devices : mapping of str to DeviceOperatingPoints
    methods : tuple of str
    iterations : ndarray of int
    solution : BatchSolution
        The solver's state (warm starts, continuation).
    errors : tuple of (int, SymbiasError)
        Samples that failed and why; their values are ``nan``.
    """

    title: str
    path: str | None
    temperature: Any
    node_voltages: Mapping[str, np.ndarray]
    branch_currents: Mapping[str, np.ndarray]
    element_currents: Mapping[str, np.ndarray]
    devices: Mapping[str, DeviceOperatingPoints]
    methods: tuple[str, ...]
    iterations: np.ndarray
    solution: Any = field(repr=False, compare=False)
    errors: tuple[tuple[int, SymbiasError], ...] = ()

    _MAPPINGS = ("node_voltages", "branch_currents", "element_currents", "devices")

    def __post_init__(self) -> None:
        for key in self._MAPPINGS:
            object.__setattr__(self, key, _frozen(getattr(self, key)))

    def __reduce__(self):
        return (_rebuild, (OperatingPoints, _plain_fields(self, self._MAPPINGS)))

    @property
    def size(self) -> int:
        """Number of samples K."""
        return len(self.methods)

    @property
    def converged(self) -> np.ndarray:
        """``(K,)`` True for the samples that have a valid operating point."""
        ok = np.ones(self.size, dtype=bool)
        ok[[i for i, _ in self.errors]] = False
        return ok

    @property
    def failures(self) -> dict[int, str]:
        """Failed sample index -> cause."""
        return {i: str(error) for i, error in self.errors}

    def voltage(self, node: str) -> np.ndarray:
        """Voltage of ``node`` over the batch (any case; ``gnd`` is ground)."""
        key = GROUND if node.lower() == "gnd" else node.lower()
        if key not in self.node_voltages:
            raise CircuitError(f"no node {node!r}", path=self.path)
        return self.node_voltages[key]

    def current(self, name: str) -> np.ndarray:
        """Branch or element current of the element ``name`` over the batch (any case)."""
        return _lookup({**self.branch_currents, **self.element_currents}, name, "current for element", self.path)

    def device(self, name: str) -> DeviceOperatingPoints:
        """The device ``name`` (any case) over the batch."""
        return _lookup(self.devices, name, "device", self.path)

    def point(self, i: int):
        """Sample ``i`` as an :class:`OperatingPoint`.

        Raises
        ------
        SymbiasError
            The error sample ``i`` failed with.
        """
        for index, error in self.errors:
            if index == i:
                raise error
        temperature = self.temperature
        if np.ndim(temperature):
            temperature = temperature[i]
        return OperatingPoint(
            title=self.title, path=self.path, temperature=float(temperature),
            node_voltages={k: float(v[i]) for k, v in self.node_voltages.items()},
            branch_currents={k: float(v[i]) for k, v in self.branch_currents.items()},
            element_currents={k: float(v[i]) for k, v in self.element_currents.items()},
            devices={k: d.point(i) for k, d in self.devices.items()},
            method=self.methods[i], iterations=int(self.iterations[i]), solution=self.solution.solution(i),
        )

    def points(self) -> tuple:
        """Every sample as an :class:`OperatingPoint` (raises for a failed one)."""
        return tuple(self.point(i) for i in range(self.size))
