"""The block specification: what the bias block must do, read from a TOML file (``docs/spec-format.md``).

First step of the design layer (spec file -> frozen :class:`Spec`).  Values
are numbers, or text with a SPICE scale suffix and the key's unit
(``"5uA"``, ``"20meg"``, ``"1%"``, ``"50ppm"``); a wrong unit, an unknown
key, a value of the wrong type or an impossible range is a one-line
:class:`~symbias.errors.SpecError` naming the file and the line.

Examples
--------
>>> spec = parse_spec('''
... [block]
... family = "current-mirror"
... technology = "mos"
... current = "5uA"
... outputs = 12
... [supply]
... min = 1.62
... max = 1.98
... [limits]
... headroom_max = "0.35V"
... rout_min = "20meg"
... random_error_max = "1%"
... temperature = [-40, 125]
... ''', "sink.toml")
>>> spec.block.current, spec.limits.rout_min, spec.limits.random_error_max, spec.limits.temperature
(5e-06, 20000000.0, 0.01, (-40.0, 125.0))
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field, fields, replace
from pathlib import Path
from types import MappingProxyType
from typing import Any, Mapping

from ..errors import SpecError
from ..tomlfile import KeyLines, read_toml

__all__ = ["Block", "Supply", "Limits", "Spec", "parse_spec", "load_spec", "METRICS", "FAMILIES", "TECHNOLOGIES",
           "TEMPERATURE_RANGE", "DIRECTIONS", "CHOICES", "DEMO_PROCESS"]

FAMILIES = ("current-source", "current-mirror", "reference")
TECHNOLOGIES = ("bjt", "mos", "any")
#: Which way the output current flows: into the block (a sink), out of it (a source), or either.
DIRECTIONS = ("sink", "source", "any")
#: The ``process`` value that names the shipped (invented) demo process.
DEMO_PROCESS = "demo"
#: Design choices of the ``[sizing]`` table: name -> (default, unit).  They are the free choices the
#: library's sizing rules name (``docs/library-format.md``); the designer may set each.
CHOICES: dict[str, tuple[float, str]] = {
    "VBG": (1.2, "V"), "VOV": (0.2, "V"), "VOVP": (0.2, "V"), "VRE": (0.2, "V"), "VRS": (0.2, "V"),
    "VRC": (0.3, "V"), "k": (0.2, ""),
}
#: Temperatures a spec may name, degC (above absolute zero; beyond what silicon survives is refused too).
TEMPERATURE_RANGE = (-273.15, 500.0)

#: Metric name -> (unit, "min" or "max": which way is better is the other way).
METRICS: dict[str, tuple[str, str]] = {
    "headroom": ("V", "max"),
    "rout": ("ohm", "min"),
    "ratio_error": ("1", "max"),
    "random_error": ("1", "max"),
    "tc": ("ppm/degC", "max"),
    "line_sensitivity": ("%/V", "max"),
    "devices": ("1", "max"),
    "area": ("um^2", "max"),
    "supply_current": ("A", "max"),
    "voltage_error": ("1", "max"),
    "noise": ("A/sqrt(Hz)", "max"),
    "rout_at_frequency": ("ohm", "min"),
}

_NUMBER = re.compile(r"\s*([+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?)\s*(\S*)\s*", re.ASCII)


@dataclass(frozen=True)
class Block:
    """What the block is: family, technology, target current or voltage, ratio, outputs, process.

    ``process`` is the process file's path as resolved (relative to the spec file's folder), or
    None for the demo process; ``output_voltage`` the voltage across the output at the operating
    point (None: half the lowest supply); ``direction`` which way the output current flows.
    """

    family: str
    technology: str = "any"
    current: float | None = None
    ratio: float = 1.0
    outputs: int = 1
    voltage: float | None = None
    process: str | None = None
    direction: str = "any"
    output_voltage: float | None = None


@dataclass(frozen=True)
class Supply:
    """The supply range (V), its nominal value and the least drop a current source feeding the block needs."""

    min: float
    max: float
    nominal: float | None = None
    source_drop: float = 0.2

    def __post_init__(self) -> None:
        if self.nominal is None:
            object.__setattr__(self, "nominal", 0.5 * (self.min + self.max))


@dataclass(frozen=True)
class Limits:
    """The requirements, each optional (None: not required).  Units as in ``docs/spec-format.md``."""

    headroom_max: float | None = None
    rout_min: float | None = None
    ratio_error_max: float | None = None
    random_error_max: float | None = None
    sigma: float = 3.0
    temperature: tuple[float, float] | None = None
    tc_max: float | None = None
    line_sensitivity_max: float | None = None
    devices_max: int | None = None
    area_max: float | None = None
    supply_current_max: float | None = None
    voltage_error_max: float | None = None
    noise_max: float | None = None
    noise_frequency: float | None = None
    rout_min_frequency: float | None = None


@dataclass(frozen=True)
class Spec:
    """A block specification: block, supply, limits and the weights of the score among feasible candidates."""

    block: Block
    supply: Supply
    limits: Limits = field(default_factory=Limits)
    weights: Mapping[str, float] = field(default_factory=dict)
    path: str | None = None
    text_hash: str = ""
    choices: Mapping[str, float] = field(default_factory=dict)

    def __post_init__(self) -> None:
        object.__setattr__(self, "weights", MappingProxyType(dict(self.weights)))
        object.__setattr__(self, "choices", MappingProxyType({**{k: v for k, (v, _) in CHOICES.items()},
                                                              **dict(self.choices)}))

    def __reduce__(self):
        return (Spec, (self.block, self.supply, self.limits, dict(self.weights), self.path, self.text_hash,
                       dict(self.choices)))

    @property
    def output_voltage(self) -> float:
        """Voltage across the output at the operating point (V): the spec's, else half the lowest supply."""
        return self.block.output_voltage if self.block.output_voltage is not None else 0.5 * self.supply.min

    def to_dict(self) -> dict[str, Any]:
        """Plain data (the ``spec`` field of a ranking's JSON)."""
        return {
            "block": {f.name: getattr(self.block, f.name) for f in fields(self.block)},
            "supply": {f.name: getattr(self.supply, f.name) for f in fields(self.supply)},
            "limits": {f.name: (list(v) if isinstance(v := getattr(self.limits, f.name), tuple) else v)
                       for f in fields(self.limits) if getattr(self.limits, f.name) is not None},
            "weights": dict(self.weights),
            "sizing": dict(self.choices),
            "path": self.path,
        }


#: Key -> unit of the value ("" for plain numbers, "1" for fractions that take "%").
_UNITS = {
    ("block", "current"): "A", ("block", "ratio"): "", ("block", "outputs"): "int", ("block", "voltage"): "V",
    ("block", "output_voltage"): "V",
    ("supply", "min"): "V", ("supply", "max"): "V", ("supply", "nominal"): "V", ("supply", "source_drop"): "V",
    ("limits", "headroom_max"): "V", ("limits", "rout_min"): "ohm", ("limits", "ratio_error_max"): "1",
    ("limits", "random_error_max"): "1", ("limits", "sigma"): "", ("limits", "tc_max"): "ppm",
    ("limits", "line_sensitivity_max"): "%/V", ("limits", "devices_max"): "int", ("limits", "area_max"): "um^2",
    ("limits", "supply_current_max"): "A", ("limits", "voltage_error_max"): "1",
    ("limits", "noise_max"): "/sqrt(Hz)", ("limits", "noise_frequency"): "Hz", ("limits", "rout_min_frequency"): "Hz",
    **{("sizing", name): unit for name, (_, unit) in CHOICES.items()},
}
_TEXT_KEYS = {("block", "family"), ("block", "technology"), ("block", "process"), ("block", "direction")}
_TABLES = ("block", "supply", "limits", "weights", "sizing")


def load_spec(path: str | Path) -> Spec:
    """Read a spec file.

    Raises
    ------
    SpecError
        When the file cannot be read or is not a valid spec (file and line named).

    Examples
    --------
    >>> load_spec("examples/sensor_bias_spec.toml").block.family
    'current-mirror'
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as err:
        raise SpecError(f"cannot read spec: {getattr(err, 'strerror', None) or err}", str(path)) from None
    return parse_spec(text, str(path))


def parse_spec(text: str, path: str | None = None) -> Spec:
    """Read spec text (see the module docstring and ``docs/spec-format.md``)."""
    import hashlib

    where = path or "<spec>"
    data, lines = read_toml(text, where, SpecError)
    for table in data:
        if table not in _TABLES or not isinstance(data[table], dict):
            raise SpecError(f"unknown table [{table}] (tables: {', '.join(_TABLES)})", where, lines.of("", table))
    for table in ("block", "supply"):
        if table not in data:
            raise SpecError(f"missing table [{table}]", where, 1)
    values = {table: _read_table(table, data.get(table, {}), lines, where) for table in ("block", "supply", "limits")}
    weights = _read_weights(data.get("weights", {}), lines, where)
    choices = _read_table("sizing", data.get("sizing", {}), lines, where)
    block, supply, limits = _build(values, lines, where)
    if block.process is not None:
        block = replace(block, process=_process_path(block.process, path, where, lines.of("process", "block")))
    return Spec(block, supply, limits, weights, path, hashlib.sha256(text.encode()).hexdigest(), choices)


def _process_path(value: str, path: str | None, where: str, line: int) -> str | None:
    """The process file's path, relative to the spec file's folder (None: the demo process)."""
    if value == DEMO_PROCESS:
        return None
    found = Path(value).expanduser()
    if not found.is_absolute() and path is not None:
        found = Path(path).parent / found
    if not found.is_file():
        raise SpecError(f"[block] process: no process file {str(found)!r} (give a path relative to the spec "
                        f"file, or \"{DEMO_PROCESS}\")", where, line)
    return str(found)


def _read_table(table: str, body: dict, lines: KeyLines, where: str) -> dict[str, Any]:
    known = {key for t, key in _UNITS if t == table} | {key for t, key in _TEXT_KEYS if t == table}
    if table == "limits":
        known.add("temperature")
    out: dict[str, Any] = {}
    for key, value in body.items():
        line = lines.of(key, table)
        if key not in known:
            raise SpecError(f"[{table}] {key}: unknown key (keys: {', '.join(sorted(known))})", where, line)
        if (table, key) in _TEXT_KEYS:
            if not isinstance(value, str) or not value.strip():
                raise SpecError(f"[{table}] {key}: expected text, got {value!r}", where, line)
            out[key] = value.strip()
        elif key == "temperature":
            out[key] = _temperature_range(value, where, line)
        else:
            out[key] = _quantity(value, _UNITS[(table, key)], f"[{table}] {key}", where, line)
    return out


def _quantity(value: Any, unit: str, what: str, where: str, line: int) -> float | int:
    """A number from a TOML number or from text with a SPICE suffix and this key's unit."""
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise SpecError(f"{what}: expected a number, got {value!r}", where, line)
    if isinstance(value, str):
        value = _from_text(value, unit, what, where, line)
    number = float(value)
    if not math.isfinite(number):
        raise SpecError(f"{what}: {value!r} is not a finite number", where, line)
    if unit == "int":
        if number != int(number) or number < 1:
            raise SpecError(f"{what}: expected a whole number of at least 1, got {value!r}", where, line)
        return int(number)
    if number <= 0:
        raise SpecError(f"{what}: must be positive, got {value!r}", where, line)
    return number


def _from_text(text: str, unit: str, what: str, where: str, line: int) -> float:
    match = _NUMBER.fullmatch(text)
    if not match:
        raise SpecError(f"{what}: expected a number such as '5u' or '5uA', got {text!r}", where, line)
    from fractions import Fraction

    from ..expressions import SUFFIXES

    number, tail = Fraction(match.group(1)), match.group(2).lower()
    if unit == "1" and tail == "%":
        return float(number / 100)
    expected = {"1": ("",), "int": ("",), "ppm": ("ppm",), "%/V": ("%/v",),
                "/sqrt(Hz)": ("a/sqrt(hz)", "v/sqrt(hz)")}.get(unit, (unit.lower(),))
    if tail in (*expected, ""):
        return float(number)
    for prefix, scale in sorted(SUFFIXES.items(), key=lambda kv: -len(kv[0])):
        if prefix != "mil" and tail.startswith(prefix) and tail[len(prefix):] in (*expected, ""):
            return float(number * scale)
    shown = {"1": "a plain number or %", "int": "a whole number", "": "a plain number"}.get(unit, unit)
    raise SpecError(f"{what}: wrong unit in {text!r} (expected {shown})", where, line)


def _temperature_range(value: Any, where: str, line: int) -> tuple[float, float]:
    low, high = TEMPERATURE_RANGE
    if (not isinstance(value, list) or len(value) != 2
            or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in value)):
        raise SpecError(f"[limits] temperature: expected [low, high] in degC, got {value!r}", where, line)
    first, last = float(value[0]), float(value[1])
    if not (low < first < last <= high):
        raise SpecError(f"[limits] temperature: need {low:g} < low < high <= {high:g} degC, got {value!r}",
                        where, line)
    return first, last


def _read_weights(body: dict, lines: KeyLines, where: str) -> dict[str, float]:
    out = {}
    for key, value in body.items():
        line = lines.of(key, "weights")
        if key not in METRICS:
            raise SpecError(f"[weights] {key}: not a metric (metrics: {', '.join(METRICS)})", where, line)
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) or value < 0:
            raise SpecError(f"[weights] {key}: expected a number >= 0, got {value!r}", where, line)
        out[key] = float(value)
    return out


def _build(values: dict[str, dict], lines: KeyLines, where: str) -> tuple[Block, Supply, Limits]:
    block, supply, limits = values["block"], values["supply"], values["limits"]
    if "family" not in block:
        raise SpecError("[block] family: missing (current-source, current-mirror or reference)", where,
                        lines.of("", "block"))
    if block["family"] not in FAMILIES:
        raise SpecError(f"[block] family: {block['family']!r} is not one of {', '.join(FAMILIES)}", where,
                        lines.of("family", "block"))
    if block.get("direction", "any") not in DIRECTIONS:
        raise SpecError(f"[block] direction: {block['direction']!r} is not one of {', '.join(DIRECTIONS)}",
                        where, lines.of("direction", "block"))
    if block.get("technology", "any") not in TECHNOLOGIES:
        raise SpecError(f"[block] technology: {block['technology']!r} is not one of {', '.join(TECHNOLOGIES)}",
                        where, lines.of("technology", "block"))
    wanted = "voltage" if block["family"] == "reference" else "current"
    if wanted not in block:
        raise SpecError(f"[block] {wanted}: missing (the target {wanted} of a {block['family']})", where,
                        lines.of("", "block"))
    for key in ("min", "max"):
        if key not in supply:
            raise SpecError(f"[supply] {key}: missing (V)", where, lines.of("", "supply"))
    if supply["min"] > supply["max"]:
        raise SpecError(f"[supply] min {supply['min']:g} V is above max {supply['max']:g} V", where,
                        lines.of("min", "supply"))
    if not supply["min"] <= supply.get("nominal", supply["min"]) <= supply["max"]:
        raise SpecError(f"[supply] nominal {supply['nominal']:g} V is outside min..max", where,
                        lines.of("nominal", "supply"))
    for key in ("output_voltage", "voltage"):
        if key in block and block[key] > supply["max"]:
            raise SpecError(f"[block] {key} {block[key]:g} V is above the highest supply {supply['max']:g} V",
                            where, lines.of(key, "block"))
    headroom = limits.get("headroom_max")
    if headroom is not None and headroom >= supply["min"] and block["family"] != "reference":
        raise SpecError(f"[limits] headroom_max {headroom:g} V leaves no room below the lowest supply "
                        f"{supply['min']:g} V", where, lines.of("headroom_max", "limits"))
    if ("noise_max" in limits) != ("noise_frequency" in limits):
        raise SpecError("[limits] noise_max and noise_frequency go together (a density at a frequency)", where,
                        lines.of("noise_max" if "noise_max" in limits else "noise_frequency", "limits"))
    return Block(**block), Supply(**supply), Limits(**limits)
