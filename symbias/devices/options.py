"""How devices are modelled and named in a small-signal expansion: options, matching, per-device symbols.

Device layer.  :class:`SmallSignalOptions` says which parts of each model
are kept; :func:`device_symbols` decides, for a circuit, which devices share
symbols (matched groups) and gives each device its :class:`DeviceSymbols`,
which the expansions in :mod:`symbias.devices.small_signal` use to build
values.  Names follow :mod:`symbias.symbols`.

Naming is checked to be one-to-one: two devices whose names become the same
identifier (``Qa+`` and ``Qa-`` both give ``Qa_``), or a netlist symbol that
is also a device symbol (a resistor of value ``ro_Q1`` beside a device
``Q1``), are a :class:`~symbias.errors.CircuitError` naming both, never a
silent merge.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN\\nQ2 b a 0 QN 2\\nV1 b 0 1\\n.model QN npn\\n")
>>> s = device_symbols(c, SmallSignalOptions(match=True))
>>> str(s["q2"].conductance_like("gm")), str(s["q2"].resistance_like("ro"))
('2*gm', 'ro/2')
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

from ..circuit import Circuit
from ..errors import CircuitError
from ..expressions import ONE, Expr, Symbol
from ..symbols import device_symbol, identifier, parse_symbol

__all__ = ["SmallSignalOptions", "DeviceSymbols", "ExpansionContext", "device_symbols", "PARASITICS", "LEVELS"]

#: BJT parasitic resistances a user may ask for one by one.
PARASITICS = ("rb", "re", "rmu")

#: Named model levels: ``simple`` (no ro, no gmb), ``default``, ``full`` (every parasitic and capacitance).
LEVELS: dict[str, dict] = {
    "simple": dict(ro=False, gmb=False),
    "default": {},
    "full": dict(parasitics=PARASITICS, capacitances=True),
}


@dataclass(frozen=True)
class SmallSignalOptions:
    """How devices and values are modelled in a small-signal expansion.

    Parameters
    ----------
    ro : bool, default True
        Include the output resistance (Early effect / channel-length modulation).
    gmb : bool, default True
        Include the MOS body transconductance (only where source and bulk differ).
    parasitics : tuple of str, default ()
        BJT parasitic resistances to include, any of ``rb`` (base), ``re``
        (emitter), ``rmu`` (base-collector).
    capacitances : bool, default False
        Add device capacitances (BJT cpi, cmu, ccs; MOS cgs, cgd, cdb, csb; diode cj).
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
    extras : bool, default False
        Shorthand for every parasitic (``parasitics=("rb", "re", "rmu")``).

    Examples
    --------
    >>> SmallSignalOptions(parasitics=("rb",)).parasitics, SmallSignalOptions(extras=True).parasitics
    (('rb',), ('rb', 're', 'rmu'))
    """

    ro: bool = True
    gmb: bool = True
    parasitics: tuple[str, ...] = ()
    capacitances: bool = False
    match: bool | tuple[str, ...] = False
    beta: bool = False
    symbolic_passives: bool = False
    extras: bool = False

    def __post_init__(self) -> None:
        if isinstance(self.match, (list, set, frozenset)):
            object.__setattr__(self, "match", tuple(self.match))
        parts = set(self.parasitics) | (set(PARASITICS) if self.extras else set())
        unknown = sorted(parts - set(PARASITICS))
        if unknown:
            raise CircuitError(f"unknown parasitic {unknown[0]!r} (choose from {', '.join(PARASITICS)})",
                               path="--parasitics")
        object.__setattr__(self, "parasitics", tuple(p for p in PARASITICS if p in parts))
        object.__setattr__(self, "extras", set(self.parasitics) == set(PARASITICS))

    @classmethod
    def level(cls, name: str, **overrides) -> "SmallSignalOptions":
        """Options for a named model level (:data:`LEVELS`) with some fields overridden.

        Raises
        ------
        CircuitError
            For an unknown level.

        Examples
        --------
        >>> SmallSignalOptions.level("simple").ro
        False
        """
        if name not in LEVELS:
            raise CircuitError(f"unknown model level {name!r} (choose from {', '.join(LEVELS)})", path="--level")
        return cls(**{**LEVELS[name], **overrides})


@dataclass(frozen=True)
class DeviceSymbols:
    """Symbols of one device after matching, with the multiplier applied.

    ``conductance_like(param)`` and ``resistance_like(param)`` give the value
    the device's model uses (e.g. ``2*gm`` and ``ro/2`` for a device of
    multiplier 2 in a matched group).

    Parameters
    ----------
    device : str
        Device name as written.
    owner : str or None
        Whose symbols these are: the device, its matched group, or None when
        every matched device shares one group (unsuffixed symbols).
    group : str or None
        The matched group, or None for an unmatched device.
    multiplier : Expr
        The device's ``m`` (times ``area``) when matched, else 1.
    beta : bool
        ``rpi`` is written ``beta/gm``.
    """

    device: str
    owner: str | None
    group: str | None
    multiplier: Expr
    beta: bool

    def name(self, parameter: str) -> str:
        """The symbol name of a parameter (``gm_Q1``)."""
        return device_symbol(parameter, self.owner)

    def symbol(self, parameter: str) -> Symbol:
        """The symbol of a parameter."""
        return Symbol(self.name(parameter))

    def conductance_like(self, parameter: str) -> Expr:
        """A transconductance or capacitance: scales up with the multiplier."""
        return self.symbol(parameter) * self.multiplier

    def resistance_like(self, parameter: str) -> Expr:
        """A resistance: scales down with the multiplier."""
        return self.symbol(parameter) / self.multiplier

    def rpi(self) -> Expr:
        """Base-emitter resistance, or ``beta/gm`` with the beta option."""
        if self.beta:
            return self.symbol("beta") / (self.symbol("gm") * self.multiplier)
        return self.resistance_like("rpi")

    @property
    def whose(self) -> str:
        """Who the symbols describe, for symbol tables."""
        return self.device if self.group is None else f"the matched {self.group} devices (per unit size)"


def _matched_groups(circuit: Circuit, options: SmallSignalOptions) -> dict[str, str]:
    """Map device key -> group label for matched devices."""
    if not options.match:
        return {}
    wanted = None if options.match is True else {m.lower() for m in options.match}
    if wanted is not None:
        known = {g.lower() for g in circuit.groups} | {m.lower() for m in circuit.models}
        unknown = sorted(wanted - known)
        if unknown:
            raise CircuitError(f"--match names {unknown[0]!r}, which is neither a .model nor a .match group "
                               f"(known: {', '.join(sorted(known)) or 'none'})", path=circuit.path)
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


def device_symbols(circuit: Circuit, options: SmallSignalOptions) -> dict[str, DeviceSymbols]:
    """The symbols of every device of ``circuit``, keyed by device key (lower-case name).

    Raises
    ------
    CircuitError
        When two owners would share one symbol name, or a netlist symbol
        would be taken for a device symbol.
    """
    groups = _matched_groups(circuit, options)
    single = len(set(groups.values())) == 1
    out: dict[str, DeviceSymbols] = {}
    owners: dict[str, str] = {}  # identifier -> owner as written
    for device in circuit.devices:
        group = groups.get(device.key)
        owner = None if group is not None and single else (group or device.name)
        if owner is not None:
            ident = identifier(owner)
            seen = owners.setdefault(ident, owner)
            if seen != owner:
                raise CircuitError(f"{seen} and {owner} would share the symbols *_{ident}: rename one of them",
                                   path=circuit.path, line=device.line)
        out[device.key] = DeviceSymbols(
            device=device.name,
            owner=owner,
            group=group,
            multiplier=device.multiplier if group else ONE,
            beta=options.beta,
        )
    _check_netlist_symbols(circuit, out)
    return out


def _check_netlist_symbols(circuit: Circuit, symbols: Mapping[str, DeviceSymbols]) -> None:
    """A netlist symbol must not read as a device symbol of this circuit."""
    owners = {s.owner for s in symbols.values()}
    for element in circuit.elements:
        values = [element.value] if element.value is not None else []
        values += list(element.params.values())
        for value in values:
            for name in getattr(value, "names", ()):
                parsed = parse_symbol(name)
                if parsed.parameter is not None and parsed.owner in {identifier(o) if o else None for o in owners}:
                    raise CircuitError(f"{element.name}: the symbol {name} also names a small-signal parameter of a "
                                       "device here; rename it", path=circuit.path, line=element.line)


@dataclass(frozen=True)
class ExpansionContext:
    """What a small-signal expansion hook needs besides its element.

    Parameters
    ----------
    circuit : Circuit
    options : SmallSignalOptions
    symbols : mapping of device key to DeviceSymbols
        From :func:`device_symbols`.
    """

    circuit: Circuit
    options: SmallSignalOptions
    symbols: Mapping[str, DeviceSymbols]
