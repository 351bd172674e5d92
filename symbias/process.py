"""Process files: named device parameter sets and resistor layers (TOML).

First step of the numeric side: a process file is read into a frozen
:class:`Process`, which the DC solver combines with a circuit's ``.model``
cards (the card's own parameters win).  The grammar is documented once, in
``docs/process-format.md``; in short::

    [process]
    name = "..."
    tnom = 27                  # degC at which the parameters hold

    [devices.QN]               # referred to as '.model QN npn' in a netlist
    type = "npn"               # npn | pnp | nmos | pmos | d (diode)
    IS = 1e-16 ...             # BJT: IS BF VAF NF XTI EG XTB (BR, NR optional)
                               # MOS: VTO KP LAMBDA GAMMA PHI TCV BEX
                               # diode: IS N XTI EG (RS, BV, IBV, CJO, ... optional)
                               # mismatch: AVT ABETA (MOS), AIS (BJT, diode), optional

    [resistors.RPOLY]
    sheet = 50                 # ohm per square
    TC1 = -1e-3                # 1/K
    TC2 = 1e-6                 # 1/K^2

    [layout]                   # optional: what a ranking counts as area
    emitter_area = 10          # um^2 of a unit-area bipolar emitter
    resistor_width = 1         # um: a resistor of n squares takes n * width^2
    resistor_layer = "RPOLY"   # the layer of resistors that name none

Examples
--------
>>> p = parse_process('''
... [process]
... name = "toy"
... tnom = 27
... [resistors.rp]
... sheet = 50
... TC1 = 1e-3
... TC2 = 0
... ''', "toy.toml")
>>> p.tnom, p.resistor("RP").tc1
(27.0, 0.001)
"""

from __future__ import annotations

import math
import re
import tomllib
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from types import MappingProxyType
from typing import Mapping

from .errors import ProcessError
from .limits import temperature_problem

__all__ = [
    "Process",
    "DeviceParameters",
    "ResistorLayer",
    "load_process",
    "parse_process",
    "demo_process_path",
    "REQUIRED",
    "SIGNED",
    "TYPE_ALIASES",
    "LAYOUT_KEYS",
]

#: Parameters every device entry of a type must give.
REQUIRED: dict[str, tuple[str, ...]] = {
    "npn": ("IS", "BF", "VAF", "NF", "XTI", "EG", "XTB"),
    "pnp": ("IS", "BF", "VAF", "NF", "XTI", "EG", "XTB"),
    "nmos": ("VTO", "KP", "LAMBDA", "GAMMA", "PHI", "TCV", "BEX"),
    "pmos": ("VTO", "KP", "LAMBDA", "GAMMA", "PHI", "TCV", "BEX"),
    "d": ("IS", "N", "XTI", "EG"),
}

#: Other names accepted for a device type.
TYPE_ALIASES = {"diode": "d"}

#: Parameters that may be negative (all others must be >= 0).
SIGNED = frozenset({"VTO", "TCV", "BEX", "XTB", "TC1", "TC2", "XTI", "TNOM"})

_RESISTOR_KEYS = ("sheet", "TC1", "TC2")


@dataclass(frozen=True)
class DeviceParameters:
    """One named device of a process: its type and its parameters (SI, upper-case keys).

    Examples
    --------
    >>> DeviceParameters("QN", "npn", {"BF": 100.0}).params["BF"]
    100.0
    """

    name: str
    type: str
    params: Mapping[str, float] = field(default_factory=dict)
    line: int = 0

    def __post_init__(self) -> None:
        object.__setattr__(self, "params", MappingProxyType(dict(self.params)))

    def __reduce__(self):
        return (DeviceParameters, (self.name, self.type, dict(self.params), self.line))


@dataclass(frozen=True)
class ResistorLayer:
    """A resistor layer: sheet resistance (ohm/square) and temperature coefficients.

    ``R(T) = R(tnom) * (1 + TC1*dT + TC2*dT**2)`` with ``dT = T - tnom``.

    Examples
    --------
    >>> layer = ResistorLayer("rp", 50.0, 1e-3, 0.0)
    >>> layer.factor(37.0, 27.0), layer.squares(1e3)
    (1.01, 20.0)
    """

    name: str
    sheet: float
    tc1: float
    tc2: float
    line: int = 0

    def factor(self, temperature: float, tnom: float) -> float:
        """Resistance at ``temperature`` divided by its value at ``tnom`` (both degC)."""
        dt = temperature - tnom
        return 1.0 + self.tc1 * dt + self.tc2 * dt * dt

    def squares(self, resistance: float) -> float:
        """Number of squares a resistor of ``resistance`` ohm takes in this layer."""
        return resistance / self.sheet


@dataclass(frozen=True)
class Process:
    """A process: nominal temperature, named devices and resistor layers.

    Parameters
    ----------
    name : str
        Human-readable name.
    tnom : float
        Nominal temperature in degC at which the parameters hold.
    devices : mapping of str to DeviceParameters
        Keyed by lower-case device (model) name.
    resistors : mapping of str to ResistorLayer
        Keyed by lower-case layer name.
    path : str or None
        File it came from.
    layout : mapping of str to float or str
        The optional ``[layout]`` table: ``emitter_area`` (um^2), ``resistor_width`` (um),
        ``resistor_layer`` (a layer name).

    Examples
    --------
    >>> p = load_process(demo_process_path())
    >>> p.tnom, p.device("QN", "npn").type
    (27.0, 'npn')
    """

    name: str
    tnom: float
    devices: Mapping[str, DeviceParameters] = field(default_factory=dict)
    resistors: Mapping[str, ResistorLayer] = field(default_factory=dict)
    path: str | None = None
    layout: Mapping[str, float | str] = field(default_factory=dict)

    def __post_init__(self) -> None:
        object.__setattr__(self, "devices", MappingProxyType(dict(self.devices)))
        object.__setattr__(self, "resistors", MappingProxyType(dict(self.resistors)))
        object.__setattr__(self, "layout", MappingProxyType(dict(self.layout)))

    def __reduce__(self):
        return (Process, (self.name, self.tnom, dict(self.devices), dict(self.resistors), self.path,
                          dict(self.layout)))

    def device(self, name: str, type_: str | None = None) -> DeviceParameters | None:
        """The device called ``name``; failing that the only device of ``type_``; else None.

        Examples
        --------
        >>> p = load_process(demo_process_path())
        >>> p.device("no-such-name", "pnp").name
        'QP'
        """
        found = self.devices.get(name.lower())
        if found is not None:
            return found
        if type_ is None:
            return None
        same = [d for d in self.devices.values() if d.type == type_]
        return same[0] if len(same) == 1 else None

    def resistor(self, name: str) -> ResistorLayer:
        """The resistor layer called ``name`` (any case).

        Raises
        ------
        ProcessError
            If the process has no such layer.
        """
        layer = self.resistors.get(name.lower())
        if layer is None:
            known = ", ".join(sorted(self.resistors)) or "none"
            raise ProcessError(f"no resistor layer {name!r} in process (known: {known})", path=self.path)
        return layer


def demo_process_path() -> Path:
    """Path of the invented demo process shipped with symbias.

    Examples
    --------
    >>> demo_process_path().name
    'demo_process.toml'
    """
    return Path(str(resources.files("symbias") / "data" / "demo_process.toml"))


def load_process(path: str | Path) -> Process:
    """Read a process file.

    Raises
    ------
    ProcessError
        With the file and, where it can be found, the line of the problem.

    Examples
    --------
    >>> load_process(demo_process_path()).device("QN").params["BF"]
    120.0
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as err:
        raise ProcessError(f"cannot read process file: {getattr(err, 'strerror', None) or err}", path=str(path)) from None
    return parse_process(text, str(path))


def parse_process(text: str, path: str | None = None) -> Process:
    """Parse process-file text (TOML) into a :class:`Process`.

    Raises
    ------
    ProcessError
        On TOML syntax errors, a missing section or parameter, a negative
        value where only non-negative ones make sense, an unknown device type.
    """
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        line = _toml_error_line(str(err))
        raise ProcessError(f"not valid TOML: {str(err).split(' (at')[0]}", path=path, line=line) from None
    locate = _Locator(text)
    header = data.get("process")
    if not isinstance(header, dict):
        raise ProcessError("missing [process] section (name, tnom)", path=path, line=1)
    if "tnom" not in header:
        raise ProcessError("[process] has no 'tnom' (nominal temperature, degC)", path=path,
                           line=locate.section("process"))
    tnom = _parameter("TNOM", header["tnom"], path, locate.key("process", "tnom"))
    devices = {}
    for name, body in _table(data, "devices", path, locate).items():
        devices[name.lower()] = _device(name, body, path, locate)
    resistors = {}
    for name, body in _table(data, "resistors", path, locate).items():
        resistors[name.lower()] = _resistor(name, body, path, locate)
    unknown = set(data) - {"process", "devices", "resistors", "layout"}
    if unknown:
        section = sorted(unknown)[0]
        raise ProcessError(f"unknown section [{section}] (expected process, devices, resistors, layout)", path=path,
                           line=locate.section(section))
    layout = _layout(data.get("layout", {}), resistors, path, locate)
    return Process(str(header.get("name", "")), tnom, devices, resistors, path, layout)


#: Keys of the optional ``[layout]`` table: what a ranking counts as area.
LAYOUT_KEYS = ("emitter_area", "resistor_width", "resistor_layer")


def _layout(body, resistors: dict, path: str | None, locate: "_Locator") -> dict[str, float | str]:
    if not isinstance(body, dict):
        raise ProcessError("[layout] must be a table", path=path, line=locate.section("layout"))
    out: dict[str, float | str] = {}
    for key, value in body.items():
        line = locate.key("layout", key) or locate.section("layout")
        if key not in LAYOUT_KEYS:
            raise ProcessError(f"[layout] unknown key {key!r} (expected {', '.join(LAYOUT_KEYS)})", path=path,
                               line=line)
        if key == "resistor_layer":
            if not isinstance(value, str) or value.lower() not in resistors:
                known = ", ".join(sorted(resistors)) or "none"
                raise ProcessError(f"[layout] resistor_layer {value!r} names no resistor layer (known: {known})",
                                   path=path, line=line)
            out[key] = value.lower()
            continue
        number = _number(value, key, path, line)
        if not (number > 0 and math.isfinite(number)):
            raise ProcessError(f"[layout] {key} must be a positive number, got {value!r}", path=path, line=line)
        out[key] = number
    return out


def _table(data: dict, key: str, path: str | None, locate: "_Locator") -> dict:
    table = data.get(key, {})
    if not isinstance(table, dict) or not all(isinstance(v, dict) for v in table.values()):
        raise ProcessError(f"[{key}] must hold sub-tables like [{key}.NAME]", path=path, line=locate.section(key))
    return table


def _device(name: str, body: dict, path: str | None, locate: "_Locator") -> DeviceParameters:
    section = f"devices.{name}"
    line = locate.section(section)
    type_ = str(body.get("type", "")).lower()
    type_ = TYPE_ALIASES.get(type_, type_)
    if type_ not in REQUIRED:
        raise ProcessError(f"[{section}] type must be one of {', '.join(REQUIRED)}, got {body.get('type')!r}",
                           path=path, line=locate.key(section, "type") or line)
    params = {}
    for key, value in body.items():
        if key == "type":
            continue
        params[key.upper()] = _parameter(key.upper(), value, path, locate.key(section, key) or line)
    for key in REQUIRED[type_]:
        if key not in params:
            raise ProcessError(f"[{section}] ({type_}) is missing parameter {key}", path=path, line=line)
    return DeviceParameters(name, type_, params, line)


def _resistor(name: str, body: dict, path: str | None, locate: "_Locator") -> ResistorLayer:
    section = f"resistors.{name}"
    line = locate.section(section)
    lookup = {k.lower(): k for k in body}
    values = {}
    for key in _RESISTOR_KEYS:
        if key.lower() not in lookup:
            raise ProcessError(f"[{section}] is missing parameter {key}", path=path, line=line)
        raw = lookup[key.lower()]
        values[key] = _parameter(key.upper(), body[raw], path, locate.key(section, raw) or line)
    if values["sheet"] == 0:
        raise ProcessError(f"[{section}] sheet must be positive", path=path, line=locate.key(section, "sheet") or line)
    return ResistorLayer(name, values["sheet"], values["TC1"], values["TC2"], line)


def _parameter(key: str, value, path: str | None, line: int | None) -> float:
    number = _number(value, key, path, line)
    if key == "TNOM" and temperature_problem(number) is not None:
        raise ProcessError(f"TNOM: {temperature_problem(number)}", path=path, line=line)
    if number < 0 and key not in SIGNED:
        raise ProcessError(f"parameter {key} must not be negative, got {value}", path=path, line=line)
    return number


def _number(value, key: str, path: str | None, line: int | None) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ProcessError(f"parameter {key} must be a number, got {value!r}", path=path, line=line)
    number = float(value)
    if not math.isfinite(number):
        raise ProcessError(f"parameter {key} is not a finite number ({number})", path=path, line=line)
    return number


def _toml_error_line(message: str) -> int | None:
    match = re.search(r"line (\d+)", message)
    return int(match.group(1)) if match else None


class _Locator:
    """Finds the line of a section header or of a key inside a section (tomllib keeps no positions)."""

    _HEADER = re.compile(r"^\s*\[\s*([^\]]+?)\s*\]\s*(#.*)?$")

    def __init__(self, text: str):
        self.lines = text.splitlines()

    def section(self, name: str) -> int | None:
        for number, text in enumerate(self.lines, start=1):
            match = self._HEADER.match(text)
            if match and _same_key(match.group(1), name):
                return number
        return None

    def key(self, section: str, key: str) -> int | None:
        start = self.section(section)
        if start is None:
            return None
        pattern = re.compile(rf"^\s*\"?{re.escape(key)}\"?\s*=", re.IGNORECASE)
        for number in range(start, len(self.lines)):
            text = self.lines[number]
            if self._HEADER.match(text):
                return None
            if pattern.match(text):
                return number + 1
        return None


def _same_key(written: str, wanted: str) -> bool:
    parts = [p.strip().strip('"') for p in written.split(".")]
    return [p.lower() for p in parts] == [p.lower() for p in wanted.split(".")]
