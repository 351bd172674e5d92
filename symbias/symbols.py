"""The symbol-naming convention, both ways: device parameters, owners, units, display and LaTeX names.

Lowest level of the symbolic vocabulary; it imports nothing heavy (no sympy)
and every module that reads or writes a symbol name goes through it.

A small-signal symbol is named ``<parameter>_<owner>``: the owner is the
device (``gm_Q1``, ``ro_M2``) or, for matched devices, the matched group
(``gm_QN``); when every matched device belongs to one group the owner is left
out (``gm``, ``ro``).  Owners are element or group names made into plain
identifiers (:func:`identifier`: ``X1.Q2`` -> ``X1_Q2``).  A name whose part
before the first ``_`` is not a known parameter (``RE``, ``Vb``) is a plain
netlist symbol.

:data:`PARAMETERS` lists every device parameter with its unit, what it is,
how a device multiplier scales it and its LaTeX form.  Symbol descriptions are
carried as :class:`Meaning` (text and unit); ``str(meaning)`` is the
``"transconductance of Q1 [A/V]"`` form shown to users.

Examples
--------
>>> device_symbol("gm", "Q1"), device_symbol("ro", None), device_symbol("rpi", "X1.Q2")
('gm_Q1', 'ro', 'rpi_X1_Q2')
>>> parse_symbol("gm_Q1"), parse_symbol("beta"), parse_symbol("RE")
(SymbolName(parameter='gm', owner='Q1'), SymbolName(parameter='beta', owner=None), SymbolName(parameter=None, owner=None))
>>> latex_name("rpi_Q1"), latex_name("beta"), latex_name("RE")
('r_{\\\\pi,Q1}', '\\\\beta', 'R_{E}')
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Iterable, Mapping

__all__ = [
    "engineering",
    "Parameter",
    "PARAMETERS",
    "BJT_PARAMETERS",
    "MOS_PARAMETERS",
    "DIODE_PARAMETERS",
    "LAPLACE",
    "THERMAL_ENERGY",
    "CHANNEL_NOISE_FACTOR",
    "FREQUENCY",
    "NOISE_MEANINGS",
    "flicker_symbol",
    "SymbolName",
    "Meaning",
    "identifier",
    "device_symbol",
    "parse_symbol",
    "parameter_of",
    "symbols_of",
    "owners",
    "ohm_power",
    "unit_of",
    "latex_name",
    "QUANTITY_LATEX",
    "passive_meaning",
    "controlled_meaning",
    "device_meaning",
]

#: Name of the Laplace variable.
LAPLACE = "s"
#: Symbols noise densities are written in: thermal energy k*T, the MOS channel-noise factor, frequency.
THERMAL_ENERGY = "kT"
CHANNEL_NOISE_FACTOR = "gamma_n"
FREQUENCY = "f"


@dataclass(frozen=True)
class Parameter:
    """One small-signal device parameter.

    Parameters
    ----------
    name : str
        As used in symbol names (``gm``).
    description : str
        What it is, for symbol tables.
    unit : str
        SI unit (``A/V``, ``ohm``, ``F``, ``A/A``).
    scaling : {"up", "down", "none"}
        How a device multiplier ``m`` acts on a matched symbol: conductances
        and capacitances scale up (``m*gm``), resistances down (``ro/m``).
    latex : str
        LaTeX body; the owner is added as a subscript.
    """

    name: str
    description: str
    unit: str
    scaling: str
    latex: str


_TABLE = (
    Parameter("gm", "transconductance", "A/V", "up", "g_{m}"),
    Parameter("gmb", "body (back-gate) transconductance", "A/V", "up", "g_{mb}"),
    Parameter("rpi", "base-emitter (input) resistance", "ohm", "down", r"r_{\pi}"),
    Parameter("ro", "output resistance", "ohm", "down", "r_{o}"),
    Parameter("beta", "small-signal current gain gm*rpi", "A/A", "none", r"\beta"),
    Parameter("rmu", "base-collector feedback resistance", "ohm", "down", r"r_{\mu}"),
    Parameter("rb", "base spreading resistance", "ohm", "down", "r_{b}"),
    Parameter("re", "emitter resistance", "ohm", "down", "r_{e}"),
    Parameter("rd", "small-signal resistance", "ohm", "down", "r_{d}"),
    Parameter("cpi", "base-emitter capacitance", "F", "up", r"C_{\pi}"),
    Parameter("cmu", "base-collector capacitance", "F", "up", r"C_{\mu}"),
    Parameter("ccs", "collector-substrate capacitance", "F", "up", "C_{cs}"),
    Parameter("cgs", "gate-source capacitance", "F", "up", "C_{gs}"),
    Parameter("cgd", "gate-drain capacitance", "F", "up", "C_{gd}"),
    Parameter("cdb", "drain-bulk capacitance", "F", "up", "C_{db}"),
    Parameter("csb", "source-bulk capacitance", "F", "up", "C_{sb}"),
    Parameter("cj", "junction and diffusion capacitance", "F", "up", "C_{j}"),
)

#: Every device parameter by name.
PARAMETERS: dict[str, Parameter] = {p.name: p for p in _TABLE}
#: Parameters of each device family, in the order tables list them.
BJT_PARAMETERS = ("gm", "rpi", "ro", "beta", "rmu", "rb", "re", "cpi", "cmu", "ccs")
MOS_PARAMETERS = ("gm", "gmb", "ro", "cgs", "cgd", "cdb", "csb")
DIODE_PARAMETERS = ("rd", "cj")

_UNIT_OHM_POWER = {"ohm": 1, "A/V": -1, "S": -1, "A/A": 0, "V/V": 0, "": 0}
_GREEK = ("alpha", "beta", "gamma", "delta", "epsilon", "zeta", "eta", "theta", "kappa", "lambda", "mu", "nu",
          "xi", "pi", "rho", "sigma", "tau", "phi", "chi", "psi", "omega")
_NON_WORD = re.compile(r"[^0-9A-Za-z_]")


@dataclass(frozen=True)
class SymbolName:
    """A symbol name read back: its device parameter and owner (both None for a plain symbol)."""

    parameter: str | None
    owner: str | None


@dataclass(frozen=True)
class Meaning:
    """What a symbol stands for: a description and its unit.

    Examples
    --------
    >>> str(Meaning("transconductance of Q1", "A/V"))
    'transconductance of Q1 [A/V]'
    """

    description: str
    unit: str

    def __str__(self) -> str:
        return f"{self.description} [{self.unit}]"


def identifier(name: str) -> str:
    """``name`` as a plain identifier: characters other than letters, digits and ``_`` become ``_``.

    Symbols must read back as plain names (the JSON ``exact`` string), while
    flattened subcircuit elements are named like ``X1.Q2``.  The mapping is not
    one-to-one (``Qa+`` and ``Qa-`` both give ``Qa_``): the network that names
    symbols checks that no two owners collide (see
    :func:`symbias.linear.network.expand`).

    Examples
    --------
    >>> identifier("X1.Xa.R1"), identifier("1k")
    ('X1_Xa_R1', '_1k')
    """
    text = _NON_WORD.sub("_", name)
    return text if text and not text[0].isdigit() else f"_{text}"


def device_symbol(parameter: str, owner: str | None) -> str:
    """Symbol name of a device parameter: ``gm_Q1``, or ``gm`` when the owner is left out.

    Examples
    --------
    >>> device_symbol("gm", "Q1"), device_symbol("gm", None)
    ('gm_Q1', 'gm')
    """
    return parameter if owner is None else f"{parameter}_{identifier(owner)}"


def parse_symbol(name: str) -> SymbolName:
    """Read a symbol name under the convention.

    Examples
    --------
    >>> parse_symbol("ro_X1_Q2")
    SymbolName(parameter='ro', owner='X1_Q2')
    """
    head, _, owner = name.partition("_")
    if head in PARAMETERS:
        return SymbolName(head, owner or None)
    return SymbolName(None, None)


def parameter_of(name: str) -> str | None:
    """The device parameter a symbol stands for, or None.

    Examples
    --------
    >>> parameter_of("gmb_M2"), parameter_of("Vov")
    ('gmb', None)
    """
    return parse_symbol(name).parameter


def symbols_of(names: Iterable[str], *parameters: str) -> tuple[str, ...]:
    """The names among ``names`` that stand for one of ``parameters`` (any owner), in the given order.

    Examples
    --------
    >>> symbols_of(["ro_Q1", "RB", "ro_Q2", "rpi_Q1"], "ro")
    ('ro_Q1', 'ro_Q2')
    """
    wanted = set(parameters)
    return tuple(n for n in names if parameter_of(n) in wanted)


def owners(names: Iterable[str]) -> dict[str, dict[str, str]]:
    """Device symbols grouped by owner: ``{owner or "": {parameter: symbol name}}``.

    Examples
    --------
    >>> owners(["gm_Q1", "ro_Q1", "gm", "RE"])
    {'': {'gm': 'gm'}, 'Q1': {'gm': 'gm_Q1', 'ro': 'ro_Q1'}}
    """
    out: dict[str, dict[str, str]] = {}
    for name in sorted(names):
        parsed = parse_symbol(name)
        if parsed.parameter is not None:
            out.setdefault(parsed.owner or "", {})[parsed.parameter] = name
    return out


def unit_of(name: str, meanings: Mapping[str, object] | None = None) -> str | None:
    """Unit of a symbol: from its meaning where known, else from the naming convention.

    Examples
    --------
    >>> unit_of("gm_Q1"), unit_of("RE", {"RE": Meaning("resistance of R2", "ohm")}), unit_of("x")
    ('A/V', 'ohm', None)
    """
    meaning = (meanings or {}).get(name)
    if isinstance(meaning, Meaning):
        return meaning.unit
    if isinstance(meaning, str) and meaning.endswith("]") and "[" in meaning:
        return meaning[meaning.rfind("[") + 1 : -1].strip()
    parameter = parameter_of(name)
    return PARAMETERS[parameter].unit if parameter else None


def ohm_power(name: str, meanings: Mapping[str, object] | None = None) -> int | None:
    """Power of ohm in a symbol's unit: resistance 1, conductance -1, ratio 0, None for other units.

    A symbol of unknown unit is read by its first letter (``g``: conductance,
    ``r``/``R``: resistance), as hand analysis does.

    Examples
    --------
    >>> ohm_power("ro_Q1"), ohm_power("gm"), ohm_power("beta"), ohm_power("cpi"), ohm_power("RE")
    (1, -1, 0, None, 1)
    """
    unit = unit_of(name, meanings)
    if unit is not None:
        return _UNIT_OHM_POWER.get(unit)
    lowered = name.lower()
    if lowered.startswith("g"):
        return -1
    if lowered.startswith("r"):
        return 1
    return 0


def _subscript(text: str) -> str:
    return text.replace("_", r"\_")


#: LaTeX symbol of each small-signal quantity (exact results, approximations, design notes).
QUANTITY_LATEX = {
    "output_resistance": r"R_{\mathrm{out}}",
    "current_gain": r"A_i",
    "voltage_gain": r"A_v",
    "transconductance": r"G_m",
    "transimpedance": r"Z_t",
    "transfer_error": r"\varepsilon",
}


def latex_name(name: str) -> str:
    """LaTeX of a symbol name (the one namer every renderer uses).

    Device symbols get their textbook form with the owner as subscript; a
    Greek name its letter; a plain name its first letter with the rest as
    subscript (``RE`` -> ``R_{E}``, ``Vout`` -> ``V_{out}``).

    Examples
    --------
    >>> latex_name("gm_Q1"), latex_name("gm"), latex_name("beta_Q3"), latex_name("cpi_X1_Q2")
    ('g_{m,Q1}', 'g_{m}', '\\\\beta_{Q3}', 'C_{\\\\pi,X1\\\\_Q2}')
    >>> latex_name("lambda"), latex_name("R1"), latex_name("A_b"), latex_name("s")
    ('\\\\lambda', 'R_{1}', 'A_{b}', 's')
    """
    if name == THERMAL_ENERGY:
        return "kT"
    parsed = parse_symbol(name)
    if parsed.parameter is not None:
        body = PARAMETERS[parsed.parameter].latex
        if parsed.owner is None:
            return body
        owner = _subscript(parsed.owner)
        if body.endswith("}"):
            return body[:-1] + "," + owner + "}"
        return f"{body}_{{{owner}}}"
    if name in _GREEK:
        return "\\" + name
    head, sep, rest = name.partition("_")
    if sep and head and rest:
        base = "\\" + head if head in _GREEK else head
        return f"{base}_{{{_subscript(rest)}}}"
    if len(name) > 1 and name[0].isalpha() and name[1:].isalnum():
        return f"{name[0]}_{{{name[1:]}}}"
    return _subscript(name)


def flicker_symbol(owner: str) -> str:
    """Name of a device's flicker-noise coefficient (its 1/f density times f, A^2).

    Examples
    --------
    >>> flicker_symbol("X1.M2")
    'Kf_X1_M2'
    """
    return f"Kf_{identifier(owner)}"


#: What the noise symbols stand for.
NOISE_MEANINGS = {
    THERMAL_ENERGY: Meaning("thermal energy k*T (Boltzmann constant times temperature)", "J"),
    CHANNEL_NOISE_FACTOR: Meaning("MOS channel thermal-noise factor (2/3 long-channel)", "1"),
    FREQUENCY: Meaning("frequency", "Hz"),
}


def passive_meaning(kind: str, element: str) -> Meaning:
    """Meaning of a symbol used as the value of a passive element.

    Examples
    --------
    >>> str(passive_meaning("R", "R2"))
    'resistance of R2 [ohm]'
    """
    description, unit = {"R": ("resistance", "ohm"), "C": ("capacitance", "F"), "L": ("inductance", "H")}[kind]
    return Meaning(f"{description} of {element}", unit)


def controlled_meaning(kind: str, element: str) -> Meaning:
    """Meaning of a symbol used as the gain of a controlled source (G, E, F, H).

    Examples
    --------
    >>> str(controlled_meaning("G", "G1"))
    'transconductance of G1 [A/V]'
    """
    description, unit = {"G": ("transconductance", "A/V"), "E": ("voltage gain", "V/V"),
                         "F": ("current gain", "A/A"), "H": ("transresistance", "ohm")}[kind]
    return Meaning(f"{description} of {element}", unit)


def device_meaning(parameter: str, owner: str, description: str | None = None) -> Meaning:
    """Meaning of a device symbol; ``owner`` says whose it is (``Q1``, ``the matched QN devices``).

    Examples
    --------
    >>> str(device_meaning("ro", "M1", "output resistance (channel-length modulation)"))
    'output resistance (channel-length modulation) of M1 [ohm]'
    """
    entry = PARAMETERS[parameter]
    return Meaning(f"{description or entry.description} of {owner}", entry.unit)


_PREFIXES = [(1e12, "T"), (1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "u"),
             (1e-9, "n"), (1e-12, "p"), (1e-15, "f")]


def engineering(value: float, unit: str = "") -> str:
    """A number in engineering notation with an SI prefix, e.g. ``1.224M`` + unit (every renderer's form).

    Examples
    --------
    >>> engineering(float("inf"), "ohm"), engineering(-2.5e-9, "A")
    ('inf', '-2.5nA')
    """
    if value is None or value != value:  # None or nan
        return "-"
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    if value == 0:
        return f"0{unit}"
    for scale, prefix in _PREFIXES:
        if abs(value) >= scale:
            return f"{value / scale:.4g}{prefix}{unit}"
    return f"{value:.3g}{unit}"
