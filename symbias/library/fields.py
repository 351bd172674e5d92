"""What a library file may hold: the allowed values of its fields and the checks of single fields.

Lowest level of the library package after the errors.  Each ``check_*``
function validates one value and raises a :class:`~symbias.errors.LibraryError`
without a location; the domain objects (:mod:`symbias.library.topology`) call
them on construction and the file reader (:mod:`symbias.library.reading`) calls
them field by field, adding the file and line.

Examples
--------
>>> check_choice("mos", TECHNOLOGIES, "technology")
'mos'
>>> check_year(1899.5)
Traceback (most recent call last):
...
symbias.errors.LibraryError: <input>: 'year' must be an integer
"""

from __future__ import annotations

import math
import re
from typing import Any, Mapping

from ..devices.options import PARASITICS
from ..errors import LibraryError, SymbiasError
from ..expressions import parse_expression, try_parse_number
from ..symbols import identifier

__all__ = [
    "check_identifier",
    "check_choice",
    "check_text",
    "check_year",
    "check_symbol_name",
    "check_default",
    "check_expression",
    "check_options",
    "check_strings",
    "check_rule_names",
    "FAMILIES",
    "TECHNOLOGIES",
    "FORMS",
    "FORMULA_QUANTITIES",
    "OPTION_KEYS",
    "ROLE_KEYS",
    "LIST_ROLES",
    "HEADROOM_KEYS",
    "YEARS",
    "SIZES",
    "RULE_QUANTITIES",
]

FAMILIES = ("current-source", "current-mirror", "reference")
TECHNOLOGIES = ("bjt", "mos")
FORMS = ("exact", "leading-order")

#: Quantities a published formula may describe; the first five are small-signal
#: analyses of :mod:`symbias.analyses`, ``dc_output`` a large-signal output value.
FORMULA_QUANTITIES = (
    "output_resistance",
    "current_gain",
    "voltage_gain",
    "transconductance",
    "transimpedance",
    "dc_output",
)

#: Small-signal options a library file may set (fields of ``SmallSignalOptions``).
OPTION_KEYS = ("ro", "gmb", "parasitics", "extras", "capacitances", "match", "beta", "symbolic_passives")
ROLE_KEYS = ("input", "output", "outputs", "supply", "bias", "transfer")
HEADROOM_KEYS = ("output", "input", "supply")
#: Publication years accepted in a reference (inclusive).
YEARS = (1800, 2100)

#: What a design variable marked ``sizes`` is solved for by a ranking run (``symbias.design.sizing``):
#: the target output current, a zero temperature slope of the output (bandgaps), or the gate
#: length that meets a random-error limit (Pelgrom's area law).
SIZES = ("output-current", "zero-tc", "matching")

#: Quantities a sizing rule (``expr``) may name besides the topology's own variables, with their
#: meaning; :mod:`symbias.design.sizing` gives each a number for a spec and a process.
RULE_QUANTITIES: dict[str, str] = {
    "IOUT": "target current of one output (A): the spec's current",
    "IIN": "input current of a mirror (A): IOUT/RATIO",
    "RATIO": "output/input current ratio of a mirror: the spec's ratio",
    "I": "branch current of a reference (A): the spec's current, else 10 uA",
    "IC": "collector current per side of a bandgap cell (A): I",
    "I1": "current of the first branch of a Widlar bandgap (A): I",
    "I2": "current of the second branch of a Widlar bandgap (A): I/10",
    "I3": "current of the output transistor of a Widlar bandgap (A): I",
    "VT": "thermal voltage kT/q at the process's nominal temperature (V)",
    "beta": "forward current gain BF of the output device's bipolar model (else the first bipolar model)",
    "IS": "saturation current of that model (A)",
    "VBE": "VT*log(IOUT/IS), at I for a reference (V)",
    "VEB": "VT*log(I/IS) of the first pnp model (V)",
    "VCEsat": "VT*log(100*(1 + 1/BR)): where the bipolar model leaves the active region by 1 % (V)",
    "KP": "KP of the first nmos model (A/V^2)",
    "KPP": "KP of the first pmos model (A/V^2)",
    "VTH": "VTO of the first nmos model (V)",
    "VCC": "the nominal supply (V)",
    "VREF": "the spec's reference voltage, else VBG (V)",
    "VBG": "design choice: bandgap voltage to start a zero-TC sizing from (V, default 1.2)",
    "VOV": "design choice: nmos overdrive (V, default 0.2)",
    "VOVP": "design choice: pmos overdrive (V, default 0.2)",
    "VRE": "design choice: emitter-degeneration drop (V, default 0.2)",
    "VRS": "design choice: source-degeneration drop (V, default 0.2)",
    "VRC": "design choice: collector-resistor drop (V, default 0.3)",
    "k": "design choice: helper current as a fraction of IOUT (default 0.2)",
}

_ID = re.compile(r"[a-z0-9][a-z0-9-]*", re.ASCII)
#: Roles that hold a list of element names.
LIST_ROLES = ("outputs", "supply", "bias")


def check_identifier(value: Any) -> str:
    """A topology identifier: lower-case ASCII letters, digits and ``-``.

    Examples
    --------
    >>> check_identifier("bjt-simple-mirror")
    'bjt-simple-mirror'
    >>> check_identifier("x\\n")
    Traceback (most recent call last):
    ...
    symbias.errors.LibraryError: <input>: id 'x\\n' must be lower-case letters, digits and '-', starting with a letter or digit
    """
    if not isinstance(value, str) or not _ID.fullmatch(value):
        raise LibraryError(f"id {value!r} must be lower-case letters, digits and '-', starting with a letter or digit")
    return value


def check_choice(value: Any, choices: tuple[str, ...], key: str) -> str:
    """``value`` if it is one of ``choices``."""
    if value not in choices:
        raise LibraryError(f"{key} {value!r} is not one of: {', '.join(choices)}")
    return value


def check_text(value: Any, key: str) -> str:
    """A string that is not blank."""
    if not isinstance(value, str):
        raise LibraryError(f"{key!r} must be a string")
    if not value.strip():
        raise LibraryError(f"{key!r} must not be empty")
    return value


def check_year(value: Any) -> int:
    """A publication year: an integer within :data:`YEARS`."""
    if not isinstance(value, int) or isinstance(value, bool):
        raise LibraryError("'year' must be an integer")
    if not YEARS[0] <= value <= YEARS[1]:
        raise LibraryError(f"year {value} is out of range ({YEARS[0]} to {YEARS[1]})")
    return value


def check_symbol_name(value: Any, what: str) -> str:
    """A plain symbol name (letters, digits, ``_``; not starting with a digit), per :mod:`symbias.symbols`."""
    if not isinstance(value, str) or not value or identifier(value) != value:
        raise LibraryError(f"{what} {value!r} is not a valid symbol name")
    return value


def check_default(text: str, name: str) -> float:
    """The value of a variable's default (a SPICE number), a finite float.

    Examples
    --------
    >>> check_default("100u", "IREF")
    0.0001
    >>> check_default("1e400", "IREF")
    Traceback (most recent call last):
    ...
    symbias.errors.LibraryError: <input>: variable IREF: default: number '1e400' is out of range (exponent beyond +-308)
    """
    shown = text if len(text) <= 24 else text[:20] + "..."
    try:
        number = try_parse_number(text)
    except SymbiasError as err:  # beyond the reader's limits: the reason names the number
        raise LibraryError(f"variable {name}: default: {err.reason}") from None
    if number is None:
        raise LibraryError(f"variable {name}: default {shown!r} is not a number")
    try:
        value = float(number)
    except OverflowError:
        value = math.inf
    if not math.isfinite(value):
        raise LibraryError(f"variable {name}: default {shown!r} is out of range (beyond a double)")
    return value


def check_expression(text: str, what: str) -> None:
    """``text`` reads as an expression (syntax and limits of :func:`~symbias.expressions.parse_expression`)."""
    try:
        parse_expression(text)
    except SymbiasError as err:
        raise LibraryError(f"{what}: {err.reason}") from None


def check_options(data: Mapping[str, Any]) -> dict[str, Any]:
    """Small-signal options as written in a file, with lists made tuples.

    ``match`` is true, false or a list of model/group names; ``parasitics`` a
    list drawn from ``rb``, ``re``, ``rmu``; every other option true or false.

    Examples
    --------
    >>> check_options({"match": ["QN"], "parasitics": ["rmu", "rb"]})
    {'match': ('QN',), 'parasitics': ('rmu', 'rb')}
    """
    if not isinstance(data, Mapping):
        raise LibraryError("'options' must be a table")
    options = dict(data)
    for key, value in options.items():
        if key not in OPTION_KEYS:
            raise LibraryError(f"unknown small-signal option {key!r} (expected one of: {', '.join(OPTION_KEYS)})")
        is_names = isinstance(value, (list, tuple)) and all(isinstance(v, str) and v for v in value)
        if key == "parasitics":
            if not is_names:
                raise LibraryError(f"option 'parasitics' must be a list drawn from {', '.join(PARASITICS)}")
            unknown = [v for v in value if v not in PARASITICS]
            if unknown:
                raise LibraryError(f"unknown parasitic {unknown[0]!r} (choose from {', '.join(PARASITICS)})")
            options[key] = tuple(value)
        elif key == "match" and is_names:
            options[key] = tuple(value)
        elif not isinstance(value, bool):
            wanted = "true, false or a list of model names" if key == "match" else "true or false"
            raise LibraryError(f"option {key!r} must be {wanted}")
    return options


def check_rule_names(text: str, variables: Any, what: str) -> frozenset[str]:
    """The names a sizing rule uses; each must be a variable of the topology or one of :data:`RULE_QUANTITIES`.

    Examples
    --------
    >>> sorted(check_rule_names("VT*log(IREF/IOUT)/IOUT", {"IREF", "RE"}, "variable RE expr"))
    ['IOUT', 'IREF', 'VT']
    >>> check_rule_names("VRE/IE", {"RE"}, "variable RE expr")
    Traceback (most recent call last):
    ...
    symbias.errors.LibraryError: <input>: variable RE expr: IE is neither a variable of the topology nor a known quantity (IOUT, IIN, RATIO, I, IC, I1, I2, I3, VT, beta, IS, VBE, VEB, VCEsat, KP, KPP, VTH, VCC, VREF, VBG, VOV, VOVP, VRE, VRS, VRC, k)
    """
    names = parse_expression(text).names
    for name in sorted(names):
        if name not in variables and name not in RULE_QUANTITIES:
            raise LibraryError(f"{what}: {name} is neither a variable of the topology nor a known quantity "
                               f"({', '.join(RULE_QUANTITIES)})")
    return names


def check_strings(values: Any, key: str) -> tuple[str, ...]:
    """A list of strings, as a tuple."""
    if not isinstance(values, (list, tuple)) or not all(isinstance(v, str) for v in values):
        raise LibraryError(f"{key!r} must be a list of strings")
    return tuple(values)
