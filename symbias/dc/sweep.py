"""DC sweeps and their metrics: compliance, temperature coefficient, line sensitivity.

Fourth step of the DC side: a circuit solved at many values of one source or
of the temperature - all points in a few batched solves, each point
warm-started from solved neighbours (:mod:`symbias.dc.continuation`) - gives
a :class:`Sweep`; free functions turn a sweep into design metrics:

* :func:`compliance` - for an output-voltage sweep, the output voltage where
  the current source stops being one, found two ways: where the output
  current departs by ``fraction`` (default 1%) from its value at the
  reference point (the middle of the sweep, i.e. mid-supply for a 0..VDD
  sweep), and where the first device leaves the region it has at the
  reference point (refined by bisection);
* :func:`temperature_metrics` - box-method temperature coefficient in
  ppm/degC, temperature of zero slope, curvature there;
* :func:`line_sensitivity` - supply sensitivity in %/V and as a normalised
  sensitivity in dB.

Definitions are written out in ``docs/dc.md``.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist('''mirror
... Iref 0 in 100u
... Q1 in in 0 QN
... Q2 out in 0 QN
... Vout out 0 2.5
... .model QN npn (IS=1e-16 BF=100 VAF=50)
... ''')
>>> s = sweep_source(c, "Vout", 0.0, 5.0, 101)
>>> round(compliance(s).by_region_low, 2)
0.14
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cached_property
from types import MappingProxyType
from typing import Callable, Mapping

import numpy as np

from ..circuit import Circuit
from ..devices.nonlinear import working_regions
from ..errors import CircuitError, SymbiasError
from ..process import Process
from .continuation import solve_sweep
from .newton import DcOptions
from .operating_point import OperatingPoint, report
from .report import report_batch
from .results import OperatingPoints
from .stepping import solve
from .system import DcSystem, build_system

__all__ = [
    "Sweep",
    "Compliance",
    "TemperatureMetrics",
    "LineMetrics",
    "sweep_source",
    "sweep_temperature",
    "compliance",
    "temperature_metrics",
    "line_sensitivity",
    "sweep_points",
    "ACTIVE_REGIONS",
]

#: Regions in which a device acts as a current source (BJT active, MOS saturation): the union of
#: the device models' working regions.
ACTIVE_REGIONS = working_regions()

Progress = Callable[[int, int], None]


def sweep_points(start: float, stop: float, points: int) -> np.ndarray:
    """The swept values: ``points`` equally spaced from ``start`` to ``stop``.

    Raises
    ------
    CircuitError
        For fewer than 2 points or an empty range (``start == stop``).

    Examples
    --------
    >>> sweep_points(0, 1, 3).tolist()
    [0.0, 0.5, 1.0]
    """
    if not (math.isfinite(start) and math.isfinite(stop)):
        raise CircuitError(f"sweep range {start}..{stop} is not finite")
    if start == stop:
        raise CircuitError(f"empty sweep range: from {start:g} to {stop:g}")
    if points < 2:
        raise CircuitError(f"a sweep needs at least 2 points, got {points}")
    return np.linspace(float(start), float(stop), int(points))


@dataclass(frozen=True, eq=False)
class Sweep:
    """A solved sweep: one operating point per swept value.

    Attributes
    ----------
    variable : str
        The swept source as written, or ``"temp"``.
    values : ndarray
        The swept values (V, A or degC).
    results : OperatingPoints
        Every point, as arrays over the sweep.
    """

    variable: str
    values: np.ndarray
    results: OperatingPoints
    circuit: Circuit = field(repr=False)
    process: Process | None = field(default=None, repr=False)
    temperature: float = 27.0
    system_values: Mapping[str, float] = field(default_factory=dict, repr=False)

    @cached_property
    def points(self) -> tuple[OperatingPoint, ...]:
        """One :class:`OperatingPoint` per swept value (built on first use)."""
        return self.results.points()

    def point(self, i: int) -> OperatingPoint:
        """The operating point at swept value ``i``."""
        return self.results.point(i)

    def probe(self, name: str) -> np.ndarray:
        """Values of ``V(node)``, ``I(element)``, a node name or an element name along the sweep.

        Examples
        --------
        >>> from symbias.netlist import parse_netlist
        >>> c = parse_netlist("t\\nV1 a 0 1\\nR1 a 0 1k\\n")
        >>> sweep_source(c, "V1", 1, 2, 2).probe("I(R1)").tolist()
        [0.001, 0.002]
        """
        kind, key = _parse_probe(name, self.circuit)
        if kind == "V":
            return self.results.voltage(key).copy()
        return self.results.current(key).copy()

    def regions(self, device: str) -> tuple[str, ...]:
        """Region of ``device`` at each point."""
        return tuple(str(r) for r in self.results.device(device).region)

    def to_dict(self, outputs: tuple[str, ...] = ()) -> dict:
        """Plain-dict form for JSON: the swept values, node voltages, branch currents, regions, outputs."""
        results = self.results
        return {
            "variable": self.variable,
            "values": self.values.tolist(),
            "node_voltages": {n: v.tolist() for n, v in results.node_voltages.items()},
            "branch_currents": {n: v.tolist() for n, v in results.branch_currents.items()},
            "regions": {d: list(self.regions(d)) for d in results.devices},
            "outputs": {o: self.probe(o).tolist() for o in outputs},
        }


def _parse_probe(name: str, circuit: Circuit) -> tuple[str, str]:
    text = name.strip()
    low = text.lower()
    if low.startswith(("v(", "i(")) and low.endswith(")"):
        return low[0].upper(), text[2:-1].strip()
    if low in circuit.nodes or low == "gnd":
        return "V", low
    if circuit.has_element(text):
        return "I", text
    raise CircuitError(f"unknown output {name!r}: give V(node), I(element), a node or an element name",
                       path=circuit.path)


def _run(system: DcSystem, grid: np.ndarray, overrides: Mapping[str, np.ndarray] | None, variable: str,
         circuit: Circuit, process, temperature, system_values, guess, options: DcOptions,
         progress: Progress | None) -> Sweep:
    solution = solve_sweep(system, grid, overrides, guess=guess, options=options, progress=progress,
                           variable=variable)
    results = report_batch(system, solution, overrides)
    if results.errors:
        raise results.errors[0][1]
    return Sweep(variable, grid, results, circuit, process, temperature, MappingProxyType(dict(system_values or {})))


def sweep_source(circuit: Circuit, source: str, start: float, stop: float, points: int = 201, *,
                 process: Process | None = None, temperature: float = 27.0,
                 values: Mapping[str, float] | None = None, guess: Mapping[str, float] | None = None,
                 options: DcOptions = DcOptions(), progress: Progress | None = None) -> Sweep:
    """Sweep the DC value of an independent source (``Vout`` for compliance, ``VDD`` for line sensitivity).

    Every point is solved in a few batches, each point starting from solved
    neighbours (:mod:`symbias.dc.continuation`).

    Raises
    ------
    CircuitError
        Unknown source, empty range.
    ConvergenceError
        A point that does not converge, naming the swept value.
    """
    grid = sweep_points(start, stop, points)
    system = build_system(circuit, process, temperature, values)
    system.source_value(source)
    name = circuit.element(source).name
    return _run(system, grid, {source: grid}, name, circuit, process, temperature, values, guess, options,
                progress)


def sweep_temperature(circuit: Circuit, start: float, stop: float, points: int = 201, *,
                      process: Process | None = None, values: Mapping[str, float] | None = None,
                      guess: Mapping[str, float] | None = None, options: DcOptions = DcOptions(),
                      progress: Progress | None = None) -> Sweep:
    """Sweep the temperature (degC): every model and resistor is evaluated at each point (one batched system)."""
    grid = sweep_points(start, stop, points)
    system = build_system(circuit, process, grid, values)
    return _run(system, grid, None, "temp", circuit, process, float(start), values, guess, options, progress)


# -- compliance --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Compliance:
    """Output-voltage limits of a current source from an output sweep.

    ``*_low`` is the lowest output voltage at which it still works (a sink's
    compliance), ``*_high`` the highest (a source's); None when the sweep
    never leaves the working range on that side.

    Attributes
    ----------
    reference_voltage, reference_current : float
        The point the others are measured from (default: middle of the sweep).
    fraction : float
        The departure of the output current that counts as failure.
    basis : str
        ``"tangent"``: departure from the straight line through the reference
        point with the slope there (the Early/output-resistance slope is not
        counted as failure); ``"level"``: departure from the reference value.
    by_current_low, by_current_high : float or None
    by_region_low, by_region_high : float or None
    device_low, device_high : str or None
        The first device to leave its region on each side, and the region it enters.
    """

    reference_voltage: float
    reference_current: float
    fraction: float
    basis: str
    by_current_low: float | None
    by_current_high: float | None
    by_region_low: float | None
    by_region_high: float | None
    device_low: str | None
    device_high: str | None

    def to_dict(self) -> dict:
        """Plain-dict form for JSON."""
        return dict(self.__dict__)


def _first_bad(bad: np.ndarray, ref: int, step: int) -> int | None:
    """Index of the first True in ``bad`` walking from ``ref`` by ``step``."""
    i = ref + step
    while 0 <= i < len(bad):
        if bad[i]:
            return i
        i += step
    return None


def compliance(sweep: Sweep, output: str | None = None, *, fraction: float = 0.01,
               reference: float | None = None, basis: str = "tangent",
               options: DcOptions = DcOptions()) -> Compliance:
    """Compliance voltage(s) of an output sweep, by output current and by device regions.

    Parameters
    ----------
    sweep : Sweep
        From :func:`sweep_source` on the output voltage source.
    output : str, optional
        The current to watch; default ``I(<swept source>)``.
    fraction : float, default 0.01
    reference : float, optional
        Output voltage of the reference point; default the middle of the sweep.
    basis : {"tangent", "level"}

    Raises
    ------
    CircuitError
        For a temperature sweep, a bad fraction or basis, or a reference outside the sweep.
    """
    if sweep.variable == "temp":
        raise CircuitError("compliance needs an output-voltage sweep, not a temperature sweep", path=sweep.circuit.path)
    if not 0 < fraction < 1:
        raise CircuitError(f"compliance fraction must be between 0 and 1, got {fraction}", path=sweep.circuit.path)
    if basis not in ("tangent", "level"):
        raise CircuitError(f"compliance basis must be 'tangent' or 'level', got {basis!r}", path=sweep.circuit.path)
    x = sweep.values
    lo, hi = float(min(x[0], x[-1])), float(max(x[0], x[-1]))
    vref = 0.5 * (lo + hi) if reference is None else float(reference)
    if not lo <= vref <= hi:
        raise CircuitError(f"compliance reference {vref:g} is outside the sweep {lo:g}..{hi:g}", path=sweep.circuit.path)
    current = np.abs(sweep.probe(output or f"I({sweep.variable})"))
    ref = int(np.argmin(np.abs(x - vref)))
    iref = float(current[ref])
    if basis == "tangent":
        k0, k1 = max(ref - 1, 0), min(ref + 1, len(x) - 1)
        slope = (current[k1] - current[k0]) / (x[k1] - x[k0])
        expected = iref + slope * (x - x[ref])
    else:
        expected = np.full_like(current, iref)
    shortfall = (expected - current) / abs(iref) if iref else np.zeros_like(current)
    probe = output or f"I({sweep.variable})"
    slope_line = (lambda v: iref + slope * (v - x[ref])) if basis == "tangent" else (lambda v: iref)

    def current_fails(point: OperatingPoint, v: float) -> bool:
        return (slope_line(v) - abs(_probe_point(point, probe, sweep.circuit))) / abs(iref) > fraction

    reference_point = sweep.point(ref)

    def region_fails(point: OperatingPoint, v: float) -> bool:
        return _changed(point, reference_point) is not None

    down, up = (-1, 1) if x[-1] > x[0] else (1, -1)
    edges = {}
    for side, step in (("low", down), ("high", up)):
        j = _first_bad(shortfall > fraction, ref, step)
        edges[f"current_{side}"] = None if j is None else _bisect(sweep, j - step, j, current_fails, options)
        k = _first_bad(_region_changes(sweep, reference_point), ref, step)
        edges[f"region_{side}"] = None if k is None else _bisect(sweep, k - step, k, region_fails, options)
        edges[f"device_{side}"] = None if k is None else _changed(sweep.point(k), reference_point)
    by_low, by_high = edges["current_low"], edges["current_high"]
    region_low, region_high = edges["region_low"], edges["region_high"]
    device_low, device_high = edges["device_low"], edges["device_high"]
    return Compliance(float(x[ref]), iref, fraction, basis, by_low, by_high, region_low, region_high,
                      device_low, device_high)


def _changed(point: OperatingPoint, reference: OperatingPoint) -> str | None:
    for name, dev in reference.devices.items():
        if dev.working and point.devices[name].region != dev.region:
            return f"{name} ({point.devices[name].region})"
    return None


def _region_changes(sweep: Sweep, reference: OperatingPoint) -> np.ndarray:
    """At each point: has a device that works as a current source at the reference left its region?"""
    flags = np.zeros(len(sweep.values), dtype=bool)
    for name, dev in reference.devices.items():
        if dev.working:
            flags |= sweep.results.devices[name].region != dev.region
    return flags


def _probe_point(point: OperatingPoint, name: str, circuit: Circuit) -> float:
    kind, key = _parse_probe(name, circuit)
    return point.voltage(key) if kind == "V" else point.current(key)


def _bisect(sweep: Sweep, good: int, bad: int, fails, options: DcOptions, tol: float = 1e-5) -> float:
    """Refine by bisection, warm-starting each solve, the swept value where ``fails(point, value)`` turns true."""
    system = build_system(sweep.circuit, sweep.process, sweep.temperature, sweep.system_values)
    start = sweep.point(good)
    x_good, x_bad = float(sweep.values[good]), float(sweep.values[bad])
    for _ in range(40):
        if abs(x_bad - x_good) <= tol:
            break
        mid = 0.5 * (x_good + x_bad)
        try:
            point = report(system, solve(system, overrides={sweep.variable: mid}, start=start.solution,
                                         options=options))
        except SymbiasError:
            break
        if fails(point, mid):
            x_bad = mid
        else:
            start, x_good = point, mid
    return float(0.5 * (x_good + x_bad))


# -- temperature -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class TemperatureMetrics:
    """Temperature behaviour of one output over a temperature sweep.

    Attributes
    ----------
    output : str
    nominal_temperature, nominal_value : float
        degC and the output there (interpolated).
    minimum, maximum : float
        Extremes of the output over the sweep.
    box_tc_ppm : float
        ``(max - min) / (|nominal value| * (T_max - T_min)) * 1e6`` (ppm/degC).
    slope_ppm : float
        ``dX/dT / |nominal value| * 1e6`` at the nominal temperature.
    zero_slope_temperature : float or None
        Where ``dX/dT = 0`` inside the sweep (nearest the nominal one).
    curvature : float
        ``d2X/dT2`` (output units per degC^2) at the zero-slope temperature, or
        at the nominal one when there is none.
    curvature_ppm : float
        The same divided by ``|nominal value|`` (ppm/degC^2).
    """

    output: str
    nominal_temperature: float
    nominal_value: float
    minimum: float
    maximum: float
    box_tc_ppm: float
    slope_ppm: float
    zero_slope_temperature: float | None
    curvature: float
    curvature_ppm: float

    def to_dict(self) -> dict:
        """Plain-dict form for JSON."""
        return dict(self.__dict__)


def temperature_metrics(sweep: Sweep, output: str, nominal: float = 27.0) -> TemperatureMetrics:
    """Box-method TC, zero-slope temperature and curvature of ``output`` over a temperature sweep.

    Raises
    ------
    CircuitError
        If the sweep is not over temperature, has fewer than 5 points, or
        the output is zero at the nominal temperature.
    """
    if sweep.variable != "temp":
        raise CircuitError("temperature metrics need a temperature sweep", path=sweep.circuit.path)
    t = sweep.values
    y = sweep.probe(output)
    if len(t) < 5:
        raise CircuitError("temperature metrics need at least 5 points", path=sweep.circuit.path)
    order = np.argsort(t)
    t, y = t[order], y[order]
    tn = float(np.clip(nominal, t[0], t[-1]))
    yn = float(np.interp(tn, t, y))
    if yn == 0:
        raise CircuitError(f"{output} is zero at {tn:g} degC: no relative coefficient", path=sweep.circuit.path)
    slope = np.gradient(y, t)
    second = np.gradient(slope, t)
    zero = _zero_slope(t, slope, tn)
    at = zero if zero is not None else tn
    curvature = float(np.interp(at, t, second))
    return TemperatureMetrics(
        output=output,
        nominal_temperature=tn,
        nominal_value=yn,
        minimum=float(y.min()),
        maximum=float(y.max()),
        box_tc_ppm=float((y.max() - y.min()) / (abs(yn) * (t[-1] - t[0])) * 1e6),
        slope_ppm=float(np.interp(tn, t, slope) / abs(yn) * 1e6),
        zero_slope_temperature=zero,
        curvature=curvature,
        curvature_ppm=curvature / abs(yn) * 1e6,
    )


def _zero_slope(t: np.ndarray, slope: np.ndarray, nominal: float) -> float | None:
    sign = np.sign(slope)
    found = []
    for i in range(len(t) - 1):
        if sign[i] == 0:
            found.append(float(t[i]))
        elif sign[i] * sign[i + 1] < 0:
            found.append(float(t[i] - slope[i] * (t[i + 1] - t[i]) / (slope[i + 1] - slope[i])))
    if not found:
        return None
    return min(found, key=lambda v: abs(v - nominal))


# -- supply ----------------------------------------------------------------------------------------


@dataclass(frozen=True)
class LineMetrics:
    """Supply (line) sensitivity of one output over a supply sweep.

    Attributes
    ----------
    output : str
    nominal_supply, nominal_value : float
        The supply's netlist value (clipped into the sweep) and the output there.
    percent_per_volt : float
        ``(X(end) - X(start)) / (X nominal * (V end - V start)) * 100``: the
        change of the output relative to itself (positive when its magnitude
        grows with the supply).
    normalized_db : float
        ``20 log10 |(dX/X) / (dV/V)|`` over the same span, at the nominal point
        (a dimensionless sensitivity; -40 dB means 1% of output change per 100%
        of supply change).
    rejection_db : float or None
        For a voltage output, ``20 log10 |dV / dX|`` over the span (DC supply rejection).
    """

    output: str
    nominal_supply: float
    nominal_value: float
    percent_per_volt: float
    normalized_db: float
    rejection_db: float | None

    def to_dict(self) -> dict:
        """Plain-dict form for JSON."""
        return dict(self.__dict__)


def line_sensitivity(sweep: Sweep, output: str, nominal: float | None = None) -> LineMetrics:
    """Line sensitivity of ``output`` over a supply sweep (%/V and dB).

    Raises
    ------
    CircuitError
        For a temperature sweep or an output that is zero at the nominal supply.
    """
    if sweep.variable == "temp":
        raise CircuitError("line sensitivity needs a supply sweep, not a temperature sweep", path=sweep.circuit.path)
    v = sweep.values
    y = sweep.probe(output)
    order = np.argsort(v)
    v, y = v[order], y[order]
    if nominal is None:
        nominal = build_system(sweep.circuit, sweep.process, sweep.temperature, sweep.system_values).source_value(
            sweep.variable)
    vn = float(np.clip(nominal, v[0], v[-1]))
    yn = float(np.interp(vn, v, y))
    if yn == 0:
        raise CircuitError(f"{output} is zero at the nominal supply {vn:g}", path=sweep.circuit.path)
    dy, dv = float(y[-1] - y[0]), float(v[-1] - v[0])
    relative = abs(dy / yn) / abs(dv / vn) if vn else math.inf
    is_voltage = _parse_probe(output, sweep.circuit)[0] == "V"
    return LineMetrics(
        output=output,
        nominal_supply=vn,
        nominal_value=yn,
        percent_per_volt=dy / (yn * dv) * 100.0,
        normalized_db=20.0 * math.log10(relative) if relative > 0 else -math.inf,
        rejection_db=(20.0 * math.log10(abs(dv / dy)) if dy else math.inf) if is_voltage else None,
    )
