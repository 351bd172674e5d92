"""Expanded linear network: the circuit with every device replaced by its model.

Third step of the symbolic side (:class:`~symbias.circuit.Circuit` ->
:class:`LinearNetwork`).  Each transistor is replaced by its small-signal
equivalent (see :mod:`symbias.devices.small_signal`), passives become
admittances, independent sources stay as zero-valued sources (a V source is a
short, an I source is open) so that an analysis can drive the one it names.

Primitive kinds:

====  ==========================================================
Y     admittance between two nodes (``1/R``, ``s*C``, ``1/ro``)
Z     impedance branch with its own current unknown (``s*L``)
G     VCCS, current ``g*v(c+,c-)`` from n+ through the element to n-
E     VCVS, ``v(n+,n-) = mu*v(c+,c-)``
F     CCCS, current ``f*i(control)`` from n+ through the element to n-
H     CCVS, ``v(n+,n-) = r*i(control)``
V     independent voltage source (value 0 unless driven)
I     independent current source (open unless driven)
====  ==========================================================

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist("t\\nI1 0 a 1m\\nR1 a 0 RL\\n")
>>> [(p.kind, p.value) for p in expand(c).primitives]
[('I', 1), ('Y', 1/RL)]
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Mapping

import sympy

from .circuit import Circuit, Element
from .errors import CircuitError

__all__ = [
    "SmallSignalOptions",
    "Primitive",
    "LinearNetwork",
    "expand",
    "LAPLACE",
    "device_symbol_name",
    "identifier",
    "bias_values",
]

#: The Laplace variable.
LAPLACE = sympy.Symbol("s")


@dataclass(frozen=True)
class SmallSignalOptions:
    """How devices and values are modelled in a small-signal expansion.

    Parameters
    ----------
    ro : bool, default True
        Include the output resistance (Early effect / channel-length modulation).
    gmb : bool, default True
        Include the MOS body transconductance (only where source and bulk differ).
    extras : bool, default False
        BJT: add rmu (base-collector), rb (base) and re (emitter) resistances.
    capacitances : bool, default False
        Add device capacitances (BJT cpi, cmu, ccs; MOS cgs, cgd, cdb, csb).
    match : bool or tuple of str, default False
        True: devices of one ``.model`` or of one ``.match`` group share
        unsuffixed symbols (``gm``, ``ro``); a tuple names the models or groups
        to match.  A device's multiplier (``m``, BJT ``area``) scales the shared
        values: ``gm -> m*gm``, ``ro -> ro/m``, ``rpi -> rpi/m``, which assumes
        the devices of a group carry currents in proportion to their size.
    beta : bool, default False
        Write ``rpi`` as ``beta/gm``.
    symbolic_passives : bool, default False
        Replace every numeric R, C, L value by a symbol named after the element.
    """

    ro: bool = True
    gmb: bool = True
    extras: bool = False
    capacitances: bool = False
    match: bool | tuple[str, ...] = False
    beta: bool = False
    symbolic_passives: bool = False

    def __post_init__(self) -> None:
        if isinstance(self.match, list):
            object.__setattr__(self, "match", tuple(self.match))

    @classmethod
    def level(cls, name: str, **overrides) -> "SmallSignalOptions":
        """Options for a named model level: ``simple`` (no ro, no gmb), ``default``, ``full``.

        Examples
        --------
        >>> SmallSignalOptions.level("simple").ro
        False
        """
        levels = {
            "simple": dict(ro=False, gmb=False),
            "default": {},
            "full": dict(extras=True, capacitances=True),
        }
        if name not in levels:
            raise ValueError(f"unknown model level {name!r} (choose from {', '.join(levels)})")
        return cls(**{**levels[name], **overrides})


@dataclass(frozen=True)
class Primitive:
    """One linear element of the expanded network.

    Parameters
    ----------
    kind : str
        One of ``Y Z G E F H V I`` (see the module table).
    name : str
        Unique name; device parts are named ``<part>_<device>`` (``ro_Q1``).
    nodes : tuple of str
        ``(n+, n-)`` or ``(n+, n-, c+, c-)`` for G and E.
    value : sympy.Expr
        Admittance, impedance, gain or source value.
    control : str, optional
        Name of the controlling V primitive of F and H.
    origin : str
        Name of the circuit element it comes from.
    line : int
        Netlist line of that element.
    """

    kind: str
    name: str
    nodes: tuple[str, ...]
    value: sympy.Expr
    control: str | None = None
    origin: str = ""
    line: int = 0


@dataclass(frozen=True)
class LinearNetwork:
    """A linear(ised) network ready for stamping.

    Parameters
    ----------
    primitives : tuple of Primitive
    nodes : tuple of str
        Node names, ground ``"0"`` first.
    meanings : mapping of str to str
        For every symbol: what it stands for and its unit.
    path : str, optional
        Source netlist file.
    """

    primitives: tuple[Primitive, ...]
    nodes: tuple[str, ...]
    meanings: Mapping[str, str] = field(default_factory=dict)
    path: str | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "meanings", MappingProxyType(dict(self.meanings)))

    def __reduce__(self):
        return (LinearNetwork, (self.primitives, self.nodes, dict(self.meanings), self.path))

    def primitive(self, name: str) -> Primitive:
        """The primitive called ``name`` (case-insensitive)."""
        for p in self.primitives:
            if p.name.lower() == name.lower():
                return p
        raise CircuitError(f"no source or element named {name!r} in the network", path=self.path)

    @property
    def symbols(self) -> tuple[sympy.Symbol, ...]:
        """Free symbols of all primitive values, sorted by name."""
        found: set[sympy.Symbol] = set()
        for p in self.primitives:
            found |= p.value.free_symbols
        return tuple(sorted(found, key=lambda s: s.name))


def _matched_groups(circuit: Circuit, options: SmallSignalOptions) -> dict[str, str]:
    """Map device key -> group label for matched devices."""
    if not options.match:
        return {}
    wanted = None if options.match is True else {m.lower() for m in options.match}
    groups: dict[str, str] = {}
    for label, members in circuit.groups.items():
        if wanted is None or label.lower() in wanted:
            for member in members:
                groups[member.lower()] = label
    for device in circuit.devices:
        if device.key in groups:
            continue
        model = (device.model or "").lower()
        if wanted is None or model in wanted:
            groups[device.key] = circuit.model_of(device).name
    return groups


def device_symbol_name(parameter: str, device: str, group: str | None, single_group: bool) -> str:
    """Symbol name of a device parameter under the naming convention.

    Examples
    --------
    >>> device_symbol_name("gm", "Q1", None, False)
    'gm_Q1'
    >>> device_symbol_name("gm", "Q1", "QN", True)
    'gm'
    >>> device_symbol_name("gm", "Q1", "QN", False)
    'gm_QN'
    >>> device_symbol_name("ro", "X1.Q2", None, False)  # flattened subcircuit names
    'ro_X1_Q2'
    """
    if group is None:
        return f"{parameter}_{identifier(device)}"
    return parameter if single_group else f"{parameter}_{identifier(group)}"


def identifier(name: str) -> str:
    """``name`` as a plain identifier: characters other than letters, digits and _ become _.

    Symbols must read back as plain names (the JSON ``exact`` string), while
    flattened subcircuit elements are named like ``X1.Q2``.

    Examples
    --------
    >>> identifier("X1.Xa.R1")
    'X1_Xa_R1'
    """
    text = re.sub(r"\W", "_", name)
    return text if text and not text[0].isdigit() else f"_{text}"


@dataclass(frozen=True)
class DeviceSymbols:
    """Symbols of one device after matching, with the multiplier applied.

    ``conductance_like(param)`` and ``resistance_like(param)`` give the sympy
    value the device's model uses (e.g. ``2*gm`` and ``ro/2`` for a device of
    multiplier 2 in a matched group).
    """

    device: str
    group: str | None
    single_group: bool
    multiplier: sympy.Expr
    beta: bool

    def symbol(self, parameter: str) -> sympy.Symbol:
        return sympy.Symbol(device_symbol_name(parameter, self.device, self.group, self.single_group))

    def conductance_like(self, parameter: str) -> sympy.Expr:
        """A transconductance or capacitance: scales up with the multiplier."""
        base = self.symbol(parameter)
        return base * self.multiplier if self.group else base

    def resistance_like(self, parameter: str) -> sympy.Expr:
        """A resistance: scales down with the multiplier."""
        base = self.symbol(parameter)
        return base / self.multiplier if self.group else base

    def rpi(self) -> sympy.Expr:
        """Base-emitter resistance, or ``beta/gm`` with the beta option."""
        if self.beta:
            scale = self.multiplier if self.group else 1
            return self.symbol("beta") / (self.symbol("gm") * scale)
        return self.resistance_like("rpi")


def _device_symbols(circuit: Circuit, options: SmallSignalOptions) -> dict[str, DeviceSymbols]:
    groups = _matched_groups(circuit, options)
    single = len(set(groups.values())) == 1
    out = {}
    for device in circuit.devices:
        group = groups.get(device.key)
        out[device.key] = DeviceSymbols(
            device=device.name,
            group=group,
            single_group=single,
            multiplier=device.multiplier if group else sympy.Integer(1),
            beta=options.beta,
        )
    return out


_PASSIVE_MEANING = {"R": "resistance of {name} [ohm]", "C": "capacitance of {name} [F]", "L": "inductance of {name} [H]"}
_SOURCE_MEANING = {
    "G": "transconductance of {name} [A/V]",
    "E": "voltage gain of {name} [V/V]",
    "F": "current gain of {name} [A/A]",
    "H": "transresistance of {name} [ohm]",
}


def _passive_value(element: Element, options: SmallSignalOptions) -> sympy.Expr:
    value = element.value
    if options.symbolic_passives and value.is_Number:
        return sympy.Symbol(identifier(element.name))
    return value


def expand(circuit: Circuit, options: SmallSignalOptions | None = None) -> LinearNetwork:
    """Replace every element by its linear small-signal primitives.

    Parameters
    ----------
    circuit : Circuit
    options : SmallSignalOptions, optional

    Returns
    -------
    LinearNetwork
        Independent sources are kept as primitives of kind V and I; an analysis
        decides which one it drives (all others are zero).

    Raises
    ------
    CircuitError
        For a zero or symbolic-zero resistor, or a device whose model type has no
        small-signal model.
    """
    from .devices.small_signal import EXPANSIONS

    options = options or SmallSignalOptions()
    symbols = _device_symbols(circuit, options)
    primitives: list[Primitive] = []
    meanings: dict[str, str] = {}
    for element in circuit.elements:
        kind = element.kind
        if kind in ("R", "C", "L"):
            value = _passive_value(element, options)
            if value == 0:
                if kind == "R":
                    raise CircuitError(f"{element.name}: zero resistance (use a 0 V source for a short)",
                                       path=circuit.path, line=element.line)
                if kind == "C":
                    continue  # an absent capacitor
            for sym in value.free_symbols:
                meanings.setdefault(sym.name, _PASSIVE_MEANING[kind].format(name=element.name))
            if kind == "R":
                primitives.append(Primitive("Y", element.name, element.nodes, 1 / value, None, element.name, element.line))
            elif kind == "C":
                primitives.append(Primitive("Y", element.name, element.nodes, LAPLACE * value, None, element.name, element.line))
                meanings.setdefault("s", "Laplace variable [1/s]")
            else:
                primitives.append(Primitive("Z", element.name, element.nodes, LAPLACE * value, None, element.name, element.line))
                meanings.setdefault("s", "Laplace variable [1/s]")
        elif kind in ("V", "I"):
            primitives.append(Primitive(kind, element.name, element.nodes, sympy.Integer(1), None, element.name, element.line))
        elif kind in ("G", "E", "F", "H"):
            for sym in element.value.free_symbols:
                meanings.setdefault(sym.name, _SOURCE_MEANING[kind].format(name=element.name))
            control = None
            if kind in ("F", "H"):
                control = circuit.element(element.control).name
            primitives.append(Primitive(kind, element.name, element.nodes, element.value, control, element.name, element.line))
        elif kind in EXPANSIONS:
            model = circuit.model_of(element)
            expansion = EXPANSIONS[kind]
            parts, device_meanings = expansion(element, model, symbols[element.key], options)
            primitives.extend(parts)
            for key, text in device_meanings.items():
                meanings.setdefault(key, text)
        else:  # pragma: no cover - every kind of TERMINALS is handled above
            raise CircuitError(f"{element.name}: no small-signal model for kind {kind}", path=circuit.path,
                               line=element.line)
    nodes = list(circuit.nodes)
    for p in primitives:
        for node in p.nodes:
            if node not in nodes:
                nodes.append(node)
    return LinearNetwork(tuple(primitives), tuple(nodes), meanings, circuit.path)


def bias_values(
    circuit: Circuit,
    per_device: Mapping[str, Mapping[str, float]],
    options: SmallSignalOptions | None = None,
) -> dict[str, float]:
    """Map per-device small-signal values to the symbol names of an expansion.

    Parameters
    ----------
    circuit : Circuit
    per_device : mapping
        ``{device name: {"gm": ..., "rpi": ..., "ro": ..., "gmb": ...}}`` in SI
        units, e.g. from an operating point.
    options : SmallSignalOptions, optional
        The same options used for the expansion.  For matched devices the
        shared symbol takes the value of the group's first device normalised by
        its multiplier (``gm/m``, ``ro*m``), which is what the shared symbol
        means; with ``beta`` the value of ``beta`` is ``gm*rpi``.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn\\n")
    >>> bias_values(c, {"Q1": {"gm": 0.04, "rpi": 2500.0, "ro": 1e5}})
    {'gm_Q1': 0.04, 'rpi_Q1': 2500.0, 'ro_Q1': 100000.0}
    """
    options = options or SmallSignalOptions()
    symbols = _device_symbols(circuit, options)
    values: dict[str, float] = {}
    lookup = {k.lower(): v for k, v in per_device.items()}
    for device in circuit.devices:
        data = lookup.get(device.key)
        if data is None:
            continue
        info = symbols[device.key]
        m = float(info.multiplier) if info.group else 1.0
        for parameter, number in data.items():
            name = device_symbol_name(parameter, info.device, info.group, info.single_group)
            scaled = number
            if info.group:
                scaled = number * m if parameter.startswith("r") else number / m
            values.setdefault(name, float(scaled))
        if options.beta and "gm" in data and "rpi" in data:
            values.setdefault(
                device_symbol_name("beta", info.device, info.group, info.single_group), float(data["gm"] * data["rpi"])
            )
    return values
