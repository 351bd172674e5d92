"""The element-kind registry: one entry per SPICE element letter, read by every step that handles elements.

Second level of the package (it imports only :mod:`symbias.errors`).  Each
:class:`ElementKind` declares, once:

* its letter, name and terminals (and how many of them are optional);
* its netlist fields: a primary value (with unit) or a model of given types,
  a controlling source, the instance parameters it accepts;
* its topology as the checks see it: which terminal pairs conduct in small
  signal and at DC, whether it fixes a voltage (loops of those are an error)
  or forces a current (cut sets of those are an error);
* where its behaviour lives: the small-signal expansion, the DC stamp and
  the SPICE deck line, as ``"module:function"`` references resolved on first
  use (:meth:`ElementKind.hook`), so this table stays at the bottom of the
  import graph while the functions live with the device models they belong
  to.

The parser (:mod:`symbias.netlist`), the circuit checks
(:mod:`symbias.circuit`), the small-signal expansion
(:mod:`symbias.linear.network`), the DC stamper (:mod:`symbias.dc.system`) and
the deck writer (:mod:`symbias.simulator.deck`) read this table.  Adding an
element kind is one entry here plus its device model.

The linear primitives that small-signal models expand into are listed here
too (:data:`PRIMITIVE_KINDS`), with the :class:`Primitive` record.

Examples
--------
>>> KINDS["Q"].terminals, KINDS["Q"].model_types
(('c', 'b', 'e', 's'), ('npn', 'pnp'))
>>> kind_of_model("nmos"), KINDS["R"].value_unit
('M', 'ohm')
>>> [k.letter for k in KINDS.values() if k.forces_current]
['I', 'G', 'F']
"""

from __future__ import annotations

import importlib
from dataclasses import dataclass
from typing import Any, Callable

from .errors import CircuitError

__all__ = [
    "ElementKind",
    "KINDS",
    "DEVICE_LETTERS",
    "kind_of_model",
    "terminal_counts",
    "Primitive",
    "PRIMITIVE_KINDS",
    "BRANCH_PRIMITIVES",
]


@dataclass(frozen=True)
class ElementKind:
    """One element kind of the netlist language.

    Parameters
    ----------
    letter : str
        SPICE element letter.
    name : str
        What it is, in words.
    terminals : tuple of str
        Terminal names in netlist order.
    optional : int
        How many trailing terminals may be left out (the BJT substrate).
    value_unit : str or None
        Unit of the primary value; None for a device that takes a model.
    model_types : tuple of str
        ``.model`` types the element accepts (devices only).
    controlled_by_source : bool
        The element names a controlling voltage source (F, H).
    parameters : tuple of str
        Instance parameters it accepts (lower case).
    small_signal_pairs, dc_pairs : tuple of (int, int)
        Terminal index pairs that conduct in the small-signal network and at DC.
    fixes_voltage : bool
        It sets a voltage between its first two terminals at DC (a loop of
        such elements is an error).
    forces_current : bool
        It forces a current (a node reached only through such elements is an error).
    small_signal, dc, deck : str
        ``"module:function"`` of the small-signal expansion, the DC stamp and
        the deck-line writer (see the modules named).
    """

    letter: str
    name: str
    terminals: tuple[str, ...]
    optional: int = 0
    value_unit: str | None = None
    model_types: tuple[str, ...] = ()
    controlled_by_source: bool = False
    parameters: tuple[str, ...] = ()
    small_signal_pairs: tuple[tuple[int, int], ...] = ((0, 1),)
    dc_pairs: tuple[tuple[int, int], ...] = ((0, 1),)
    fixes_voltage: bool = False
    forces_current: bool = False
    small_signal: str = ""
    dc: str = ""
    deck: str = ""

    @property
    def is_device(self) -> bool:
        """True for kinds that take a ``.model`` (transistors, diodes)."""
        return bool(self.model_types)

    @property
    def node_counts(self) -> tuple[int, ...]:
        """Accepted numbers of nodes, e.g. ``(3, 4)`` for a BJT."""
        full = len(self.terminals)
        return tuple(range(full - self.optional, full + 1))

    def hook(self, which: str) -> Callable[..., Any]:
        """The function behind ``small_signal``, ``dc`` or ``deck``, imported on first use.

        Examples
        --------
        >>> KINDS["R"].hook("small_signal").__name__
        'resistor_small_signal'
        """
        reference = getattr(self, which)
        module, _, function = reference.partition(":")
        return getattr(importlib.import_module(module), function)


_PASSIVES = "symbias.devices.linear"
_DECK = "symbias.simulator.deck"

#: Every element kind, by letter.
KINDS: dict[str, ElementKind] = {
    k.letter: k
    for k in (
        ElementKind("R", "resistor", ("node1", "node2"), value_unit="ohm", parameters=("tc1", "tc2", "layer", "m"),
                    small_signal=f"{_PASSIVES}:resistor_small_signal", dc=f"{_PASSIVES}:resistor_dc",
                    deck=f"{_DECK}:resistor_line"),
        ElementKind("C", "capacitor", ("node1", "node2"), value_unit="F", parameters=("m",), dc_pairs=(),
                    small_signal=f"{_PASSIVES}:capacitor_small_signal", dc=f"{_PASSIVES}:capacitor_dc",
                    deck=f"{_DECK}:value_line"),
        ElementKind("L", "inductor", ("node1", "node2"), value_unit="H", parameters=("m",), fixes_voltage=True,
                    small_signal=f"{_PASSIVES}:inductor_small_signal", dc=f"{_PASSIVES}:branch_dc",
                    deck=f"{_DECK}:value_line"),
        ElementKind("V", "voltage source", ("n+", "n-"), value_unit="V", parameters=("ac",), fixes_voltage=True,
                    small_signal=f"{_PASSIVES}:source_small_signal", dc=f"{_PASSIVES}:branch_dc",
                    deck=f"{_DECK}:source_line"),
        ElementKind("I", "current source", ("n+", "n-"), value_unit="A", parameters=("ac",), forces_current=True,
                    dc_pairs=(), small_signal=f"{_PASSIVES}:source_small_signal", dc=f"{_PASSIVES}:current_dc",
                    deck=f"{_DECK}:source_line"),
        ElementKind("G", "voltage-controlled current source", ("n+", "n-", "nc+", "nc-"), value_unit="A/V",
                    forces_current=True, dc_pairs=(), small_signal=f"{_PASSIVES}:controlled_small_signal",
                    dc=f"{_PASSIVES}:vccs_dc", deck=f"{_DECK}:value_line"),
        ElementKind("E", "voltage-controlled voltage source", ("n+", "n-", "nc+", "nc-"), value_unit="V/V",
                    fixes_voltage=True, small_signal=f"{_PASSIVES}:controlled_small_signal",
                    dc=f"{_PASSIVES}:branch_dc", deck=f"{_DECK}:value_line"),
        ElementKind("F", "current-controlled current source", ("n+", "n-"), value_unit="A/A",
                    controlled_by_source=True, forces_current=True, dc_pairs=(),
                    small_signal=f"{_PASSIVES}:controlled_small_signal", dc=f"{_PASSIVES}:cccs_dc",
                    deck=f"{_DECK}:controlled_line"),
        ElementKind("H", "current-controlled voltage source", ("n+", "n-"), value_unit="ohm",
                    controlled_by_source=True, fixes_voltage=True,
                    small_signal=f"{_PASSIVES}:controlled_small_signal", dc=f"{_PASSIVES}:branch_dc",
                    deck=f"{_DECK}:controlled_line"),
        ElementKind("D", "diode", ("a", "k"), model_types=("d",), parameters=("area", "m"),
                    small_signal="symbias.devices.small_signal:expand_diode", dc="symbias.devices.diode:diode_dc",
                    deck=f"{_DECK}:device_line"),
        ElementKind("Q", "bipolar transistor", ("c", "b", "e", "s"), optional=1, model_types=("npn", "pnp"),
                    parameters=("area", "m"), small_signal_pairs=((0, 1), (0, 2), (0, 3)),
                    dc_pairs=((0, 1), (1, 2)), small_signal="symbias.devices.small_signal:expand_bjt",
                    dc="symbias.devices.bjt:bjt_dc", deck=f"{_DECK}:device_line"),
        ElementKind("M", "MOS transistor", ("d", "g", "s", "b"), model_types=("nmos", "pmos"),
                    parameters=("w", "l", "m"), small_signal_pairs=((0, 1), (0, 2), (0, 3)),
                    dc_pairs=((0, 3), (2, 3)), small_signal="symbias.devices.small_signal:expand_mos",
                    dc="symbias.devices.mos:mos_dc", deck=f"{_DECK}:device_line"),
    )
}

#: Letters of the kinds that take a ``.model``.
DEVICE_LETTERS: tuple[str, ...] = tuple(k.letter for k in KINDS.values() if k.is_device)


def kind_of_model(model_type: str) -> str | None:
    """The element letter that uses a ``.model`` type (``npn`` -> ``Q``), or None.

    Examples
    --------
    >>> kind_of_model("pnp"), kind_of_model("vbic") is None
    ('Q', True)
    """
    for kind in KINDS.values():
        if model_type.lower() in kind.model_types:
            return kind.letter
    return None


def terminal_counts(letter: str) -> tuple[int, ...]:
    """Accepted node counts of an element letter.

    Raises
    ------
    CircuitError
        For a letter no kind has.

    Examples
    --------
    >>> terminal_counts("Q"), terminal_counts("R")
    ((3, 4), (2,))
    """
    kind = KINDS.get(letter.upper())
    if kind is None:
        raise CircuitError(f"unknown element letter {letter!r}")
    return kind.node_counts


@dataclass(frozen=True)
class Primitive:
    """One linear element of an expanded small-signal network.

    Parameters
    ----------
    kind : str
        One of :data:`PRIMITIVE_KINDS`.
    name : str
        Unique name; device parts are named ``<device>.<part>`` (``Q1.ro``).
    nodes : tuple of str
        ``(n+, n-)`` or ``(n+, n-, c+, c-)`` for G and E.
    value : Expr
        Admittance, impedance, gain or source value (:mod:`symbias.expressions`).
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
    value: Any
    control: str | None = None
    origin: str = ""
    line: int = 0


#: Linear primitive kinds and what they are.
PRIMITIVE_KINDS: dict[str, str] = {
    "Y": "admittance between two nodes (1/R, s*C, 1/ro)",
    "Z": "impedance branch with its own current unknown (s*L)",
    "G": "VCCS: current g*v(c+,c-) from n+ through the element to n-",
    "E": "VCVS: v(n+,n-) = mu*v(c+,c-)",
    "F": "CCCS: current f*i(control) from n+ through the element to n-",
    "H": "CCVS: v(n+,n-) = r*i(control)",
    "V": "independent voltage source (zero unless driven)",
    "I": "independent current source (open unless driven)",
}

#: Primitive kinds that add a branch-current unknown.
BRANCH_PRIMITIVES: tuple[str, ...] = ("V", "Z", "E", "H")
