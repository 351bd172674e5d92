"""The placement of a topology's elements for its schematic: the ``[schematic]`` table of a library file.

Domain and reader of one optional part of a library file (plain TOML data ->
a frozen :class:`Schematic`).  The drawing itself is a renderer's job
(:mod:`symbias.render.schematic`); this module only says where each element
sits, which way it faces, and which nodes are drawn as labels instead of
wires.  The grammar (documented in ``docs/library-format.md``)::

    [schematic]
    rails = ["vcc"]        # supply nodes: a supply label at every pin, their source not drawn
    labels = []            # other nodes drawn as a name label at every pin instead of wires

    [schematic.place]      # ELEMENT = "COLUMN ROW [DIRECTION]"
    Iref = "0 0 down"      # two-terminal: first node at the start, drawn down/up/left/right
    Q1 = "0 2 right"       # transistor: its base (gate) faces right or left
    Q2 = "2 2 left"

Columns grow to the right and rows downwards, in grid steps; fractions are
allowed (``"1.5 2"``).  Ground (node ``0``) gets a ground symbol at each pin.
Every element must be placed, except a voltage source between a rail and
ground (the rail stands for it).

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist("m\\nVcc vcc 0 5\\nIref vcc in 1m\\nQ1 in in 0 QN\\nQ2 out in 0 QN\\nVout out 0 2\\n"
...                   ".model QN npn\\n")
>>> s = read_schematic({"rails": ["vcc"], "place": {"Iref": "0 0 down", "Q1": "0 2 right", "Q2": "2 2 left",
...                     "Vout": "3 3 down"}}, c)
>>> s.placement("q2").direction, s.hidden(c)
('left', ('Vcc',))
>>> read_schematic({"place": {"Q1": "0 x"}}, c)
Traceback (most recent call last):
...
symbias.errors.LibraryError: <input>: schematic.place.Q1: expects "COLUMN ROW [DIRECTION]", got '0 x'
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Mapping

from ..errors import LibraryError

__all__ = ["Placement", "Schematic", "read_schematic", "DIRECTIONS", "CONTROL_DIRECTIONS"]

#: Directions of a two-terminal element (from its first node to its second).
DIRECTIONS = ("down", "up", "right", "left")
#: Which way the control pin of a transistor (base, gate) or the inputs of an amplifier face.
CONTROL_DIRECTIONS = ("left", "right")
#: Element letters drawn as a transistor or an amplifier (their direction is a side, not a path).
_SIDED = ("Q", "M", "E")
#: Letters the drawing knows.
_DRAWN = ("R", "C", "L", "D", "V", "I", "Q", "M", "E", "G", "F", "H")
_KEYS = ("rails", "labels", "place")
_LIMIT = 100.0


@dataclass(frozen=True)
class Placement:
    """Where one element sits: grid column and row, and the way it faces.

    Attributes
    ----------
    name : str
        The element's name as written in the netlist.
    column, row : float
        Grid position of the element's centre (columns to the right, rows down).
    direction : str
        A path direction for two-terminal elements, a side for transistors and amplifiers.
    line : int
        Line of the entry in its file (0 when built in code).
    """

    name: str
    column: float
    row: float
    direction: str
    line: int = 0

    def __post_init__(self) -> None:
        for value in (self.column, self.row):
            if not isinstance(value, (int, float)) or not math.isfinite(value) or abs(value) > _LIMIT:
                raise LibraryError(f"schematic.place.{self.name}: position must be a number within +-{_LIMIT:g}")
        if self.direction not in DIRECTIONS:
            raise LibraryError(f"schematic.place.{self.name}: direction {self.direction!r} is not one of "
                               f"{', '.join(DIRECTIONS)}")


@dataclass(frozen=True)
class Schematic:
    """A topology's placement description (see the module docstring for its grammar).

    Attributes
    ----------
    placements : tuple of Placement
    rails : tuple of str
        Supply nodes, drawn as a supply label at every pin.
    labels : tuple of str
        Nodes drawn as a name label at every pin instead of wires.
    """

    placements: tuple[Placement, ...]
    rails: tuple[str, ...] = ()
    labels: tuple[str, ...] = ()

    def placement(self, name: str) -> Placement | None:
        """The placement of an element (any case), or None."""
        return next((p for p in self.placements if p.name.lower() == name.lower()), None)

    def hidden(self, circuit) -> tuple[str, ...]:
        """Voltage sources left out of the drawing: between a rail and ground, not placed."""
        return tuple(e.name for e in circuit.elements_of("V")
                     if self.placement(e.name) is None and _rail_source(e, self.rails))


def _rail_source(element, rails: tuple[str, ...]) -> bool:
    return set(element.nodes[:2]) <= {*rails, "0"} and any(n in rails for n in element.nodes[:2])


def read_schematic(data: Mapping[str, Any], circuit, lines=None) -> Schematic:
    """Check a ``[schematic]`` table against its circuit and build the :class:`Schematic`.

    Parameters
    ----------
    data : mapping
        The decoded table.
    circuit : Circuit
        The topology's circuit.
    lines : KeyLines, optional
        Where each key of the file sits (:class:`symbias.tomlfile.KeyLines`).

    Raises
    ------
    LibraryError
        The first problem, with the line of its key when ``line_of`` is given:
        an unknown key, a node or element that is not in the netlist, a
        position or direction that cannot be read, two elements in one place,
        an element left unplaced.
    """
    def at(key: str, table: str = "schematic") -> int | None:
        if lines is None:
            return None
        return lines.headers.get((f"{table}.{key}", None)) or lines.of(key, table)

    for key in data:
        if key not in _KEYS:
            raise LibraryError(f"unknown key {key!r} in [schematic] (expected one of: {', '.join(_KEYS)})",
                               line=at(key))
    rails = _nodes(data, "rails", circuit, at("rails"))
    labels = _nodes(data, "labels", circuit, at("labels"))
    place = data.get("place", {})
    if not isinstance(place, Mapping):
        raise LibraryError("'place' must be a table [schematic.place]", line=at("place"))
    placements = []
    for name, text in place.items():
        line = at(name, "schematic.place") or 0
        placements.append(_placement(name, text, circuit, line))
    _check_overlaps(placements)
    schematic = Schematic(tuple(placements), rails, labels)
    hidden = set(schematic.hidden(circuit))
    for element in circuit.elements:
        if element.kind not in _DRAWN:
            raise LibraryError(f"schematic: element {element.name} (kind {element.kind}) cannot be drawn",
                               line=element.line)
        if schematic.placement(element.name) is None and element.name not in hidden:
            raise LibraryError(f"schematic: element {element.name} has no place (add {element.name} = "
                               '"COLUMN ROW [DIRECTION]" under [schematic.place])', line=at("place"))
    return schematic


def _nodes(data: Mapping[str, Any], key: str, circuit, line: int | None) -> tuple[str, ...]:
    value = data.get(key, [])
    if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
        raise LibraryError(f"schematic.{key} must be a list of node names", line=line)
    for node in value:
        if node.lower() not in circuit.nodes or node == "0":
            raise LibraryError(f"schematic.{key}: no node {node!r} in the netlist (ground needs no entry)", line=line)
    return tuple(v.lower() for v in value)


def _placement(name: str, text: Any, circuit, line: int) -> Placement:
    if not circuit.has_element(name):
        raise LibraryError(f"schematic.place: no element named {name!r} in the netlist", line=line)
    element = circuit.element(name)
    parts = text.split() if isinstance(text, str) else []
    try:
        column, row = float(parts[0]), float(parts[1])
    except (IndexError, ValueError):
        parts = []
    if len(parts) not in (2, 3):
        raise LibraryError(f'schematic.place.{name}: expects "COLUMN ROW [DIRECTION]", got {text!r}', line=line)
    allowed = CONTROL_DIRECTIONS if element.kind in _SIDED else DIRECTIONS
    direction = parts[2] if len(parts) == 3 else allowed[0]
    if direction not in allowed:
        what = "a transistor's or amplifier's control side" if element.kind in _SIDED else "a direction"
        raise LibraryError(f"schematic.place.{name}: {direction!r} is not {what} ({', '.join(allowed)})", line=line)
    try:
        return Placement(element.name, column, row, direction, line)
    except LibraryError as err:
        raise err.located(line=line) from None


def _check_overlaps(placements: list[Placement]) -> None:
    seen: dict[tuple[float, float], str] = {}
    for p in placements:
        key = (p.column, p.row)
        if key in seen:
            raise LibraryError(f"schematic.place.{p.name}: {seen[key]} already sits at column {p.column:g}, "
                               f"row {p.row:g}", line=p.line)
        seen[key] = p.name
