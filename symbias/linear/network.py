"""Expanded linear network: the circuit with every element replaced by its small-signal primitives.

First step of the linear side (:class:`~symbias.circuit.Circuit` ->
:class:`LinearNetwork`).  Each element is expanded by the ``small_signal``
hook of its kind in :mod:`symbias.elements` (linear elements in
:mod:`symbias.devices.linear`, transistors and diodes in
:mod:`symbias.devices.small_signal`).  Independent sources stay as
zero-valued sources (a V source is a short, an I source is open) so that an
analysis can drive the one it names.  Primitive kinds are listed in
:data:`symbias.elements.PRIMITIVE_KINDS`.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist("t\\nI1 0 a 1m\\nR1 a 0 RL\\n")
>>> [(p.kind, str(p.value)) for p in expand(c).primitives]
[('I', '1'), ('Y', '1/RL')]
"""

from __future__ import annotations

from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Mapping

from ..circuit import Circuit, Element
from ..devices.options import ExpansionContext, SmallSignalOptions, device_symbols
from ..elements import KINDS, Primitive
from ..errors import CircuitError
from ..expressions import Symbol
from ..symbols import LAPLACE, Meaning, device_symbol

__all__ = ["LinearNetwork", "expand", "bias_values", "matched_spread", "MATCH_TOLERANCE"]

#: Relative difference of matched devices' small-signal values above which a shared symbol is a poor fit.
MATCH_TOLERANCE = 0.01


@dataclass(frozen=True)
class LinearNetwork:
    """A linear(ised) network ready for stamping.

    Parameters
    ----------
    primitives : tuple of Primitive
    nodes : tuple of str
        Node names, ground ``"0"`` first.
    meanings : mapping of str to Meaning
        For every symbol: what it stands for and its unit.
    path : str, optional
        Source netlist file.
    """

    primitives: tuple[Primitive, ...]
    nodes: tuple[str, ...]
    meanings: Mapping[str, Meaning] = field(default_factory=dict)
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
    def symbols(self) -> tuple[Symbol, ...]:
        """Free symbols of all primitive values, sorted by name."""
        found: set[Symbol] = set()
        for p in self.primitives:
            found |= p.value.free_symbols
        return tuple(sorted(found, key=lambda s: s.name))


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
        For a zero resistor, or device names that would share symbols.
    """
    options = options or SmallSignalOptions()
    context = ExpansionContext(circuit, options, device_symbols(circuit, options))
    primitives: list[Primitive] = []
    meanings: dict[str, Meaning] = {}
    made: dict[str, tuple[str, Element]] = {}  # symbol the expansion named -> (owner, element)
    written = _written_symbols(circuit)
    for element in circuit.elements:
        parts, element_meanings = KINDS[element.kind].hook("small_signal")(element, context)
        _check_new_symbols(element, parts, context, written, made)
        primitives.extend(parts)
        for key, meaning in element_meanings.items():
            meanings.setdefault(key, meaning)
    nodes = list(circuit.nodes)
    for p in primitives:
        for node in p.nodes:
            if node not in nodes:
                nodes.append(node)
    return LinearNetwork(tuple(primitives), tuple(nodes), meanings, circuit.path)


def _values_of(element: Element):
    return ([element.value] if element.value is not None else []) + list(element.params.values())


def _written_symbols(circuit: Circuit) -> dict[str, Element]:
    """Every symbol written in the netlist -> the first element that uses it."""
    found: dict[str, Element] = {}
    for element in circuit.elements:
        for value in _values_of(element):
            for name in value.names:
                found.setdefault(name, element)
    return found


def _check_new_symbols(element: Element, parts, context: ExpansionContext, written: Mapping[str, Element],
                       made: dict[str, tuple[str, Element]]) -> None:
    """Symbols an expansion names must be one-to-one with their owners and apart from the netlist's own.

    A symbolic resistor ``ro_Q2`` beside a device ``Q2``, two resistors ``Ra+``
    and ``Ra-`` (both ``Ra_``), or a netlist symbol ``s`` beside a capacitor
    (the Laplace variable) would otherwise merge two quantities into one.
    """
    own = set().union(*(v.names for v in _values_of(element)))
    device = context.symbols.get(element.key)
    owner = element.name if device is None else (device.group or device.owner or element.name)
    for part in parts:
        for name in part.value.names - own:
            mine = "the Laplace variable" if name == LAPLACE else owner
            other = written.get(name)
            if other is not None:
                what = mine if name == LAPLACE else (f"a small-signal parameter of {element.name}" if device
                                                     else f"the value of {element.name} (--symbolic)")
                raise CircuitError(f"{other.name}: the symbol {name} is also the name given to {what}; rename it",
                                   path=context.circuit.path, line=other.line)
            first = made.setdefault(name, (mine, element))
            if first[0] != mine:
                raise CircuitError(f"{first[1].name} and {element.name} would share the symbol {name}: "
                                   "rename one of them", path=context.circuit.path, line=element.line)


def bias_values(
    circuit: Circuit,
    per_device: Mapping[str, Mapping[str, float]],
    options: SmallSignalOptions | None = None,
    numbers: Mapping[str, float] | None = None,
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
    numbers : mapping, optional
        Values of free symbols in the multipliers (``Q2 out in 0 QN {N}``).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn\\n")
    >>> bias_values(c, {"Q1": {"gm": 0.04, "rpi": 2500.0, "ro": 1e5}})
    {'gm_Q1': 0.04, 'rpi_Q1': 2500.0, 'ro_Q1': 100000.0}
    """
    from ..symbols import PARAMETERS

    options = options or SmallSignalOptions()
    symbols = device_symbols(circuit, options)
    values: dict[str, float] = {}
    lookup = {k.lower(): v for k, v in per_device.items()}
    for device in circuit.devices:
        data = lookup.get(device.key)
        if data is None:
            continue
        info = symbols[device.key]
        m = _multiplier(info, numbers)
        for parameter, number in data.items():
            scaling = PARAMETERS[parameter].scaling if parameter in PARAMETERS else "none"
            scaled = number * m if scaling == "down" else number / m if scaling == "up" else number
            values.setdefault(info.name(parameter), float(scaled))
        if options.beta and "gm" in data and "rpi" in data:
            values.setdefault(device_symbol("beta", info.owner), float(data["gm"] * data["rpi"]))
    return values


def _multiplier(info, numbers: Mapping[str, float] | None) -> float:
    """A device's multiplier as a number, its free symbols (a symbolic area or ``m``) taken from ``numbers``."""
    multiplier = info.multiplier
    if numbers and getattr(multiplier, "names", None):
        return float(multiplier.evaluate(dict(numbers)))
    return float(multiplier)


def matched_spread(
    circuit: Circuit,
    per_device: Mapping[str, Mapping[str, float]],
    options: SmallSignalOptions | None = None,
    tolerance: float = MATCH_TOLERANCE,
    numbers: Mapping[str, float] | None = None,
) -> list[str]:
    """Where devices that share symbols differ at the operating point by more than ``tolerance``.

    Values are compared per unit size (``gm/m``, ``ro*m``), which is what a
    shared symbol means.  Each note names the group, the parameter, the device
    that differs most and whose values the shared symbols take (the group's
    first device, as :func:`bias_values` does).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN\\nQ2 b a 0 QN\\nV1 b 0 5\\n.model QN npn\\n")
    >>> matched_spread(c, {"Q1": {"gm": 0.04, "ro": 1e5}, "Q2": {"gm": 0.04, "ro": 1.3e5}}, SmallSignalOptions(match=True))
    ['matched QN devices: ro of Q2 differs by 30% from Q1, whose values the shared symbols take']
    """
    from ..symbols import PARAMETERS

    options = options or SmallSignalOptions()
    symbols = device_symbols(circuit, options)
    lookup = {k.lower(): v for k, v in per_device.items()}
    first: dict[str, tuple[str, dict[str, float]]] = {}
    worst: dict[tuple[str, str], tuple[float, str]] = {}
    for device in circuit.devices:
        info, data = symbols[device.key], lookup.get(device.key)
        if info.group is None or data is None:
            continue
        m = _multiplier(info, numbers)
        scaled = {}
        for parameter, number in data.items():
            scaling = PARAMETERS[parameter].scaling if parameter in PARAMETERS else "none"
            scaled[parameter] = number * m if scaling == "down" else number / m if scaling == "up" else number
        if info.group not in first:
            first[info.group] = (device.name, scaled)
            continue
        reference = first[info.group][1]
        for parameter, number in scaled.items():
            base = reference.get(parameter)
            if base and abs(number / base - 1.0) > tolerance and abs(number / base - 1.0) > worst.get(
                    (info.group, parameter), (0.0, ""))[0]:
                worst[(info.group, parameter)] = (abs(number / base - 1.0), device.name)
    return [f"matched {group} devices: {parameter} of {name} differs by {100 * spread:.2g}% from "
            f"{first[group][0]}, whose values the shared symbols take"
            for (group, parameter), (spread, name) in sorted(worst.items())]
