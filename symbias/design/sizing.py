"""Sizing a candidate for the spec: its design variables from their rules, then solved on the DC model.

Design layer, the step after :mod:`~symbias.design.candidates` (a prepared
:class:`~symbias.design.candidates.Candidate`, the spec and the process ->
:class:`Sizing`).  In three moves:

1. every variable's rule (``expr`` in the library file) is evaluated with the
   restricted expression parser (never ``eval``) over the known quantities of
   :func:`known_quantities` (the target current, ``VT``, ``beta`` and ``IS`` of
   the process's bipolar model, ``VBE`` at the target current, ``KP``, the
   design choices of the spec's ``[sizing]`` table, ...; the list is
   ``symbias.library.fields.RULE_QUANTITIES``), in the order the rules depend
   on each other; a variable without a rule keeps its default;
2. the variable the library marks ``sizes = "output-current"`` is solved so
   that the DC output current equals the target (at the nominal supply,
   27 degC, the spec's output voltage), or ``sizes = "zero-tc"`` so that the
   output voltage has zero temperature slope at 27 degC: a secant search in
   the logarithm of the variable on the DC model, started at the rule's value
   and each solve started from the previous solution (so a self-biased cell
   stays on its conducting state); every variable whose rule names it follows
   it;
3. with a random-error limit, the variable marked ``sizes = "matching"`` (a
   gate length) is raised from its rule's value until the first-order random
   error (:func:`symbias.design.montecarlo.first_order_random`) meets the
   limit, and step 2 is repeated.

A candidate that cannot be sized says why: a rule that gives no positive
value, a target out of reach of the variable (``RE would have to be below
...``), no conducting state at the spec's supply (``needs about 3 V of
supply``).

Examples
--------
>>> from symbias.design.spec import parse_spec
>>> from symbias.design.candidates import candidates, spec_process
>>> spec = parse_spec('[block]\\nfamily = "current-source"\\ncurrent = "10uA"\\n[supply]\\nmin = 4.5\\nmax = 5.5\\n')
>>> widlar, = candidates(spec, only=["bjt-widlar-source"])
>>> sizing = size(widlar, spec, spec_process(spec))
>>> sizing.failure, round(sizing.values["IREF"] * 1e6, 3), round(sizing.values["RE"])
(None, 100.0, 5947)
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any, Callable, Mapping

from ..errors import SymbiasError
from ..symbols import engineering
from .candidates import Candidate, output_value, with_values

__all__ = ["Sizing", "size", "known_quantities", "rule_values", "solve_point", "REFERENCE_CURRENT",
           "SIZING_TEMPERATURE", "MATCHING_LIMIT"]

#: Branch current of a reference whose spec gives none (A).
REFERENCE_CURRENT = 10e-6
#: Temperature the sizing and the nominal metrics use (degC).
SIZING_TEMPERATURE = 27.0
#: Largest value the matching variable (a gate length, m) is raised to.
MATCHING_LIMIT = 200e-6
#: Relative accuracy of a solved output current; slope accuracy of a zero-TC sizing (1/degC).
_CURRENT_TOLERANCE, _SLOPE_TOLERANCE = 1e-7, 1e-9
#: The farthest a sized variable may move from its rule's value (a factor each way), and the steps allowed.
_REACH, _STEPS = 1e6, 60


@dataclass(frozen=True)
class Sizing:
    """The values of a candidate's design variables and how each was found.

    Attributes
    ----------
    values : mapping of str to float
        Every design variable, in SI units.
    how : mapping of str to str
        Variable -> how it got its value (its rule, its default, solved on the DC model, raised for matching).
    context : mapping of str to float
        The known quantities the rules were evaluated with.
    failure : str or None
        Why the candidate could not be sized (then ``values`` holds what was reached).
    solves : int
        DC solves spent.
    point : OperatingPoint or None
        The operating point at the sized values (the conducting state), when sizing succeeded.
    """

    values: Mapping[str, float]
    how: Mapping[str, str]
    context: Mapping[str, float] = field(default_factory=dict)
    failure: str | None = None
    solves: int = 0
    point: Any = None

    def __post_init__(self) -> None:
        for key in ("values", "how", "context"):
            object.__setattr__(self, key, MappingProxyType(dict(getattr(self, key))))

    def __reduce__(self):
        return (Sizing, (dict(self.values), dict(self.how), dict(self.context), self.failure, self.solves,
                         self.point))


class _Unsized(Exception):
    """Internal: sizing stops, with the reason (turned into ``Sizing.failure`` before it leaves the module)."""


def known_quantities(candidate: Candidate, spec, process) -> dict[str, float]:
    """The numbers a sizing rule may name (``docs/library-format.md``), for this spec and process.

    Examples
    --------
    >>> from symbias.design.spec import parse_spec
    >>> from symbias.design.candidates import candidates, spec_process
    >>> spec = parse_spec('[block]\\nfamily = "current-mirror"\\ncurrent = "5uA"\\n[supply]\\nmin = 1.6\\nmax = 2\\n')
    >>> mirror, = candidates(spec, only=["bjt-simple-mirror"])
    >>> q = known_quantities(mirror, spec, spec_process(spec))
    >>> q["beta"], round(q["VBE"], 3), q["IIN"], q["VCC"]
    (120.0, 0.679, 5e-06, 1.8)
    """
    from ..devices.temperature import thermal_voltage

    block = spec.block
    branch = block.current if block.current is not None else REFERENCE_CURRENT
    target = branch if candidate.family == "reference" or block.current is None else block.current
    vt = float(thermal_voltage(process.tnom))
    out = {"IOUT": target, "RATIO": block.ratio, "IIN": target / block.ratio, "I": branch, "IC": branch,
           "I1": branch, "I2": branch / 10.0, "I3": branch, "VT": vt, "VCC": spec.supply.nominal,
           **dict(spec.choices)}
    out["VREF"] = block.voltage if block.voltage is not None else out["VBG"]
    models = _first_models(candidate)
    bipolar = models.get("output") or models.get("npn") or models.get("pnp")
    if bipolar is not None:
        params = _parameters(candidate, bipolar, process)
        out.update(beta=params["BF"], IS=params["IS"], VBE=vt * math.log(target / params["IS"]),
                   VCEsat=vt * math.log(100.0 * (1.0 + 1.0 / params["BR"])))
    if models.get("pnp") is not None:
        out["VEB"] = vt * math.log(branch / _parameters(candidate, models["pnp"], process)["IS"])
    if models.get("nmos") is not None:
        params = _parameters(candidate, models["nmos"], process)
        out.update(KP=params["KP"], VTH=params["VTO"])
    if models.get("pmos") is not None:
        out["KPP"] = abs(_parameters(candidate, models["pmos"], process)["KP"])
    return out


def _first_models(candidate: Candidate) -> dict[str, Any]:
    """The first device of each model type, and the output device when it is bipolar."""
    circuit = candidate.circuit
    found: dict[str, Any] = {}
    for element in circuit.devices:
        found.setdefault(circuit.model_of(element).type, element)
    if candidate.family != "reference":
        from ..conventions import output_current

        device = output_current(circuit, candidate.output).device
        if device is not None and circuit.element(device).kind == "Q":
            found["output"] = circuit.element(device)
    return found


def _parameters(candidate: Candidate, element, process) -> dict[str, float]:
    from ..devices.bjt import BJT_DEFAULTS
    from ..devices.dc_context import resolved_model_parameters
    from ..devices.mos import MOS_DEFAULTS

    _, params, _ = resolved_model_parameters(candidate.circuit, element, process, None)
    defaults = BJT_DEFAULTS if element.kind == "Q" else MOS_DEFAULTS
    return {**defaults, **{k: float(v) for k, v in params.items()}}


def rule_values(topology, context: Mapping[str, float], fixed: Mapping[str, float] | None = None
                ) -> tuple[dict[str, float], dict[str, str]]:
    """Every design variable from its rule (in dependency order) or its default; ``fixed`` ones as given.

    Returns the values and, per variable, ``"rule"``, ``"default"`` or ``"fixed"``.

    Raises
    ------
    SymbiasError
        When a rule names a quantity the context lacks (e.g. ``KP`` without an nmos model).

    Examples
    --------
    >>> from symbias.library import find_topology
    >>> values, how = rule_values(find_topology("bjt-widlar-source"), {"IOUT": 1e-5, "VT": 0.025})
    >>> round(values["IREF"], 9), round(values["RE"], 1), how
    (0.0001, 5756.5, {'IREF': 'rule', 'RE': 'rule'})
    """
    from ..expressions import parse_expression

    fixed = dict(fixed or {})
    rules = {v.name: parse_expression(v.expr) for v in topology.variables if v.expr and v.name not in fixed}
    values = {v.name: v.value for v in topology.variables if v.name not in rules}
    values.update(fixed)
    how = {v.name: "fixed" if v.name in fixed else ("rule" if v.name in rules else "default")
           for v in topology.variables}
    pending = dict(rules)
    while pending:
        ready = [name for name, rule in pending.items() if not (rule.names & set(pending))]
        for name in ready:
            values[name] = float(pending.pop(name).evaluate({**context, **values}))
    return values, how


def size(candidate: Candidate, spec, process, random_error: Callable | None = None) -> Sizing:
    """Size a candidate for the spec (see the module docstring).

    Parameters
    ----------
    random_error : callable, optional
        ``(values, point) -> relative sigma`` for a matching variable; default
        :func:`symbias.design.montecarlo.first_order_random`.
    """
    counter = [0]
    context: dict[str, float] = {}
    values: dict[str, float] = {v.name: v.value for v in candidate.topology.variables}
    how: dict[str, str] = {}
    try:
        context = known_quantities(candidate, spec, process)
        values, how = rule_values(candidate.topology, context)  # what a failure reports: the rules' start
        values, how, point = _size_target(candidate, spec, process, context, {}, counter)
        matching = _marked(candidate.topology, "matching")
        limit = spec.limits.random_error_max
        if matching is not None and limit is not None:
            values, how, point = _size_matching(candidate, spec, process, context, values, how, point, counter,
                                                random_error)
        point = _surveyed(candidate, process, values, point)
        counter[0] += 1
        _check_sources(candidate, spec, point)
    except _Unsized as err:
        return Sizing(values, how, context, str(err), counter[0])
    except SymbiasError as err:
        return Sizing(values, how, context, err.reason, counter[0])
    return Sizing(values, how, context, None, counter[0], point)


def _surveyed(candidate: Candidate, process, values: Mapping[str, float], point):
    """The sized point with its survey of DC states, so that every sweep from it stays on the conducting branch.

    The survey's conducting state is the sized point itself whenever the
    sizing ended on it; otherwise (a solve from the previous step landed on a
    state that carries less) the sized point is kept as it is.
    """
    from ..dc.states import conducting_point

    surveyed = conducting_point(candidate.circuit, process, SIZING_TEMPERATURE, values)
    found, sized = output_value(candidate, surveyed), output_value(candidate, point)
    return surveyed if abs(found - sized) <= 1e-6 * max(abs(sized), 1e-30) else point


def _check_sources(candidate: Candidate, spec, point) -> None:
    """A current source feeding the block must have a positive drop: else the supply cannot feed it.

    When the output transistor has also left its working region at the spec's output voltage, that
    is the cause (an input node forced far up is its consequence), and it is named alone.
    """
    nominal = spec.supply.nominal
    for source in candidate.circuit.elements_of("I"):
        plus, minus = source.nodes[:2]
        across = point.voltage(plus) - point.voltage(minus)
        if across >= 0:
            continue
        device = _output_device(candidate, point)
        node = minus if plus in _fixed_nodes(candidate) else plus
        needed = nominal - across + spec.supply.source_drop
        if device is not None:
            # a supply need far beyond the spec's is the forced input node's consequence, not a figure to quote
            supply = f"; its input needs about {needed:.2g} V of supply" if needed < 2 * spec.supply.max else ""
            raise _Unsized(f"does not work at the output voltage {spec.output_voltage:g} V: {device[0]} is in "
                           f"{device[1]} there{supply}")
        raise _Unsized(f"needs about {needed:.2g} V of supply: {source.name} would have {across:.2g} V across it "
                       f"(node {node} at {point.voltage(node):.3g} V)")


def _fixed_nodes(candidate: Candidate) -> set[str]:
    return {n for e in candidate.circuit.elements_of("V") for n in e.nodes}


def _output_device(candidate: Candidate, point) -> tuple[str, str] | None:
    """The output transistor and its region, when it is out of the region where it acts as a current source."""
    if candidate.family == "reference":
        return None
    from ..conventions import output_current
    from ..dc.sweep import ACTIVE_REGIONS

    name = output_current(candidate.circuit, candidate.output).device
    region = point.devices[name].region if name is not None else None
    return (name, region) if region is not None and region not in ACTIVE_REGIONS else None


def _marked(topology, kind: str):
    return next((v for v in topology.variables if v.sizes == kind), None)


def _size_target(candidate, spec, process, context, fixed, counter):
    """Rules, then the output-current or zero-TC variable solved; returns (values, how, operating point)."""
    topology = candidate.topology
    values, how = rule_values(topology, context, fixed)
    _check_positive(topology, values, how)
    variable = _marked(topology, "zero-tc" if candidate.family == "reference" else "output-current")
    measure = _slope if candidate.family == "reference" else _current_error
    target = None if candidate.family == "reference" else context["IOUT"]
    state = {"point": None}

    def residual(log_x: float) -> float:
        trial, _ = rule_values(topology, context, {**fixed, variable.name: math.exp(log_x)})
        return measure(candidate, process, trial, state, counter, target)

    log_x = _root(residual, math.log(values[variable.name]), variable, candidate, target,
                  _SLOPE_TOLERANCE if target is None else _CURRENT_TOLERANCE)
    values, how = rule_values(topology, context, {**fixed, variable.name: math.exp(log_x)})
    how = {**how, variable.name: f"solved for {_purpose(variable.sizes, target)} on the DC model"}
    _check_positive(topology, values, how)
    point = solve_point(candidate, process, values, state["point"])
    counter[0] += 1
    return values, how, point


def _purpose(kind: str, target: float | None) -> str:
    if kind == "zero-tc":
        return "zero temperature slope at 27 degC"
    return f"the output current {engineering(target, 'A')}"


def _check_positive(topology, values: Mapping[str, float], how: Mapping[str, str]) -> None:
    for variable in topology.variables:
        value = values[variable.name]
        if not math.isfinite(value) or value <= 0:
            source = f"its rule {variable.expr}" if how.get(variable.name) == "rule" else "the sizing"
            word = "negative" if value < 0 else "zero" if value == 0 else "undefined"
            raise _Unsized(f"{variable.name} would be {word} ({engineering(value, variable.unit)}) from {source}")


def solve_point(candidate: Candidate, process, values: Mapping[str, float], start=None,
                temperature: float = SIZING_TEMPERATURE):
    """The operating point at ``values``: from ``start`` when given, else the conducting state.

    A solve from ``start`` that lands on a state carrying under 1e-3 of the
    start's output is repeated as a conducting-state search.
    """
    from ..dc.operating_point import operating_point
    from ..dc.states import conducting_point

    if start is not None:
        point = operating_point(candidate.circuit, process, temperature, values, start=start)
        if abs(output_value(candidate, point)) >= 1e-3 * abs(output_value(candidate, start)):
            return point
    point = conducting_point(candidate.circuit, process, temperature, values)
    if point.states is not None and point.states.chosen_state.zero_current:
        raise _Unsized(_no_conducting_state(candidate, process, values))
    return point


def _no_conducting_state(candidate: Candidate, process, values) -> str:
    """Why a cell has no working state: at the spec's supply it does not start; how much supply it needs."""
    from ..dc.states import conducting_point

    supplies = candidate.topology.roles.get("supply", ())
    if not supplies:
        return "no conducting state"
    nominal = float(candidate.circuit.element(supplies[0]).value)
    for volts in (2.0, 2.5, 3.0, 4.0, 5.0, 8.0, 12.0):
        if volts <= nominal:
            continue
        circuit = with_values(candidate.circuit, supplies, volts)
        try:
            point = conducting_point(circuit, process, SIZING_TEMPERATURE, values)
        except SymbiasError:
            continue
        if not point.states.chosen_state.zero_current:
            return f"no conducting state at the {nominal:g} V supply: needs about {volts:g} V of supply"
    return f"no conducting state at the {nominal:g} V supply"


def _current_error(candidate, process, values, state, counter, target) -> float:
    """log(output current / target) at these values (the state is carried from solve to solve)."""
    point = solve_point(candidate, process, values, state["point"])
    counter[0] += 1
    state["point"] = point
    current = output_value(candidate, point)
    if current <= 0:
        return -50.0  # no output at all: far below any target, and the search moves on
    return math.log(current / target)


def _slope(candidate, process, values, state, counter, target) -> float:
    """Relative temperature slope of the output voltage at 27 degC (1/degC), by a central difference."""
    from ..dc.operating_point import operating_points

    point = solve_point(candidate, process, values, state["point"])
    state["point"] = point
    counter[0] += 2
    step = 0.5
    both = operating_points(candidate.circuit, process, None, [SIZING_TEMPERATURE - step, SIZING_TEMPERATURE + step],
                            values, start=point)
    if both.errors:
        raise _Unsized(f"no operating point near 27 degC ({both.errors[0][1].reason})")
    low, high = (float(v) for v in output_value(candidate, both))
    return (high - low) / (2 * step) / output_value(candidate, point)


def _root(residual: Callable[[float], float], u0: float, variable, candidate, target, tolerance: float) -> float:
    """A root of ``residual`` in the log of the variable: secant steps (at most a factor 10 each), then regula
    falsi (Illinois) once the root is bracketed."""
    points = [(u0, residual(u0))]
    if abs(points[0][1]) < tolerance:
        return u0
    u1 = u0 + 0.05
    points.append((u1, residual(u1)))
    bracket = None
    for _ in range(_STEPS):
        (ua, ha), (ub, hb) = points[-2], points[-1]
        if abs(hb) < tolerance:
            return ub
        if ha * hb < 0:
            bracket = (ua, ha, ub, hb)
            break
        step = -hb * (ub - ua) / (hb - ha) if hb != ha else (-1.0 if abs(hb) > abs(ha) else 1.0)
        step = max(-math.log(10.0), min(math.log(10.0), step))
        if abs(ub + step - u0) > math.log(_REACH):
            raise _Unsized(_out_of_reach(variable, u0, ub + step, hb, target))
        points.append((ub + step, residual(ub + step)))
    if bracket is None:
        raise _Unsized(_no_root(variable, points, target))
    return _illinois(residual, bracket, tolerance)


def _no_root(variable, points: list[tuple[float, float]], target) -> str:
    """Why the search found no root: the range it tried and what the residual did there."""
    tried = sorted(points)
    span = f"{engineering(math.exp(tried[0][0]), variable.unit or '')} to " \
           f"{engineering(math.exp(tried[-1][0]), variable.unit or '')}"
    low, high = min(h for _, h in points), max(h for _, h in points)
    if target is None:
        return f"{variable.name}: no zero temperature slope for {variable.name} from {span} (the slope stays " \
               f"between {low * 1e6:.3g} and {high * 1e6:.3g} ppm/degC)"
    return f"{variable.name}: the output current does not reach the target for {variable.name} from {span} " \
           f"(it stays between {math.exp(low):.3g} and {math.exp(high):.3g} times the target)"


def _illinois(residual, bracket, tolerance: float) -> float:
    ua, ha, ub, hb = bracket
    side = 0
    for _ in range(_STEPS):
        u = ub - hb * (ub - ua) / (hb - ha)
        h = residual(u)
        if abs(h) < tolerance or abs(ub - ua) < 1e-12:
            return u
        if h * hb < 0:
            ua, ha = ub, hb
            side = 0
        else:
            ha = ha / 2 if side == -1 else ha
            side = -1
        ub, hb = u, h
    return ub


def _out_of_reach(variable, u0: float, u: float, residual: float, target) -> str:
    """Why the search left the variable's reach: which way the value would have to go."""
    lower = u < u0
    bound = math.exp(u0) * (1.0 / _REACH if lower else _REACH)
    what = engineering(bound, variable.unit or "")
    if target is None:
        return f"{variable.name} would have to be {'below' if lower else 'above'} {what}: no zero temperature slope"
    reached = "above" if residual > 0 else "below"
    if lower:
        return f"{variable.name} would have to be negative: the output stays {reached} the target even as " \
               f"{variable.name} goes to zero"
    return f"{variable.name} would have to exceed {what}: the output stays {reached} the target"


def _size_matching(candidate, spec, process, context, values, how, point, counter, random_error):
    """Raise the matching variable until the first-order random error meets the spec's limit."""
    from .montecarlo import first_order_random

    topology = candidate.topology
    variable = _marked(topology, "matching")
    limit = spec.limits.random_error_max
    estimate = random_error or (lambda v, p: first_order_random(candidate, process, v, p).relative)
    start = values[variable.name]
    for _ in range(6):
        error = spec.limits.sigma * estimate(values, point)
        counter[0] += 1
        if error <= limit:
            break
        grown = min(values[variable.name] * error / limit * 1.02, MATCHING_LIMIT)
        if grown <= values[variable.name]:
            break  # at the limit of the search: the random error is checked and reported as it is
        values, how, point = _size_target(candidate, spec, process, context, {variable.name: grown}, counter)
    if values[variable.name] > start:
        how = {**how, variable.name: f"raised from {engineering(start, variable.unit)} to meet the random "
                                     f"error limit (Pelgrom)"}
    return values, how, point
