"""Schematics with schemdraw: a circuit and its placement description -> a drawing, saved as SVG and PNG.

Renderer (:class:`~symbias.circuit.Circuit` + :class:`~symbias.library.schematic.Schematic`
-> files).  Each element is drawn at its grid place with the symbol of its
kind; the pins of one node are joined by right-angled wires along a shortest
spanning tree (a dot where three or more meet), ground pins get a ground
symbol, rail nodes a supply label and label nodes a named tag.  schemdraw and
matplotlib are imported only here, only when a drawing is asked for; files are
written with :mod:`symbias.render.figures`'s fixed metadata so the same input
gives the same bytes.

Examples
--------
>>> from symbias.library import find_topology
>>> top = find_topology("bjt-simple-mirror")
>>> lines = schematic_lines(top.circuit(), top.schematic)
>>> lines.pins["q1"]["base"], len(lines.wires) > 0
((0.75, -3.0), True)
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

__all__ = ["GRID", "SchematicLines", "schematic_lines", "draw_schematic", "save_schematic"]

#: Grid step in schemdraw units (a resistor is 3 long).
GRID = 2.5
_LENGTH = 2.0  # drawn length of a two-terminal element
_VECTORS = {"down": (0.0, -1.0), "up": (0.0, 1.0), "right": (1.0, 0.0), "left": (-1.0, 0.0)}
_CONTROL_PINS = ("base", "gate", "in1", "in2")


@dataclass(frozen=True)
class SchematicLines:
    """The geometry of a drawing before any symbol is drawn: pin places and wires.

    Attributes
    ----------
    pins : dict
        Element key -> pin name -> (x, y).
    nets : dict
        Node -> list of (x, y, pin name) of the pins on it.
    wires : tuple of ((x, y), (x, y))
        Straight segments.
    dots : tuple of (x, y)
        Junctions of three or more connections.
    hidden : tuple of str
        Rail sources left out.
    sides : dict
        Pin place -> ``left`` or ``right``: which side of its element a pin sits (for label text).
    """

    pins: dict
    nets: dict
    wires: tuple = ()
    dots: tuple = ()
    hidden: tuple = field(default=())
    sides: dict = field(default_factory=dict)


def _centre(placement) -> tuple[float, float]:
    return placement.column * GRID, -placement.row * GRID


def _rounded(point) -> tuple[float, float]:
    return round(float(point[0]), 4), round(float(point[1]), 4)


def _pin_offsets(element, placement, polarity: str) -> dict[str, tuple[float, float]]:
    """Pin name -> offset from the element's centre, as the symbol drawn for it places them."""
    side = -1.0 if placement.direction == "right" else 1.0  # transistors drawn with the control pin facing right
    kind = element.kind
    if kind == "Q":
        pnp = polarity == "pnp"
        return {"collector": (0.0, -0.7 if pnp else 0.7), "base": (-0.75 * side, 0.0),
                "emitter": (0.0, 0.7 if pnp else -0.7)}
    if kind == "M":
        pmos = polarity == "pmos"
        return {"drain": (0.0, -0.75 if pmos else 0.75), "gate": (-1.37 * side, 0.0),
                "source": (0.0, 0.75 if pmos else -0.75)}
    if kind == "E":
        flip = -1.0 if placement.direction == "left" else 1.0
        return {"out": (1.08 * flip, 0.0), "in1": (-1.08 * flip, 0.62), "in2": (-1.08 * flip, -0.62),
                "vs": (0.36 * flip, -0.84)}
    dx, dy = _VECTORS[placement.direction]
    half = _LENGTH / 2
    return {"start": (-dx * half, -dy * half), "end": (dx * half, dy * half)}


def _pin_nodes(element) -> dict[str, str]:
    """Pin name -> node, in the order of the element's terminals."""
    n = element.nodes
    if element.kind == "Q":
        return {"collector": n[0], "base": n[1], "emitter": n[2]}
    if element.kind == "M":
        return {"drain": n[0], "gate": n[1], "source": n[2]}  # the note names a bulk not at its source
    if element.kind == "E":
        return {"out": n[0], "vs": n[1], "in2": n[2], "in1": n[3]}
    return {"start": n[0], "end": n[1]}


def _device_types(circuit) -> dict[str, str]:
    """Element key -> ``npn``/``pnp``/``nmos``/``pmos`` from its model card."""
    out = {}
    for element in circuit.devices:
        if element.kind in ("Q", "M"):
            out[element.key] = circuit.model_of(element).type.lower()
    return out


def schematic_lines(circuit, schematic) -> SchematicLines:
    """Pin places, wires and junction dots of a placed circuit (no drawing library needed)."""
    types = _device_types(circuit)
    pins: dict[str, dict[str, tuple[float, float]]] = {}
    nets: dict[str, list] = {}
    boxes = []
    sides: dict = {}
    for element in circuit.elements:
        placement = schematic.placement(element.name)
        if placement is None:
            continue
        cx, cy = _centre(placement)
        offsets = _pin_offsets(element, placement, types.get(element.key, ""))
        nodes = _pin_nodes(element)
        boxes.append(_box((cx, cy), offsets, element.kind not in ("Q", "M", "E")))
        pins[element.key] = {}
        for pin, (dx, dy) in offsets.items():
            point = _rounded((cx + dx, cy + dy))
            pins[element.key][pin] = point
            sides[point] = "left" if dx < -1e-9 else "right"
            nets.setdefault(nodes[pin], []).append((*point, pin))
    wires: list = []
    dots: set = set()
    for node, points in nets.items():
        if node == "0" or node in schematic.rails or node in schematic.labels:
            continue
        segments = [segment for a, b in _spanning_tree(points) for segment in _route(a, b, boxes)]
        wires += segments
        dots |= _junctions([p[:2] for p in points], segments)
    return SchematicLines(pins, nets, tuple(wires), tuple(sorted(dots)), schematic.hidden(circuit),
                          sides)


def _junctions(pins: list, segments: list) -> set:
    """Points of one net where three or more connections meet (a wire ending on another wire counts two)."""
    candidates = set(pins) | {end for segment in segments for end in segment}
    out = set()
    for point in candidates:
        count = pins.count(point)
        for a, b in segments:
            if point in (a, b):
                count += a != b
            elif _inside(point, a, b):
                count += 2
        if count >= 3:
            out.add(point)
    return out


def _inside(point, a, b) -> bool:
    """True when ``point`` lies strictly inside the axis-parallel segment ``a``-``b``."""
    (x, y), (x1, y1), (x2, y2) = point, a, b
    if x1 == x2 == x:
        return min(y1, y2) < y < max(y1, y2)
    if y1 == y2 == y:
        return min(x1, x2) < x < max(x1, x2)
    return False


def _spanning_tree(points: list) -> list:
    """Prim's tree over the pins of one net by right-angle (Manhattan) distance, in a fixed order."""
    if len(points) < 2:
        return []
    inside, edges = [points[0]], []
    rest = list(points[1:])
    while rest:
        best = min(((abs(a[0] - b[0]) + abs(a[1] - b[1]), i, j) for i, a in enumerate(inside)
                    for j, b in enumerate(rest)))
        _, i, j = best
        edges.append((inside[i], rest[j]))
        inside.append(rest.pop(j))
    return edges


def _route(a, b, boxes) -> list:
    """One or two straight segments from pin ``a`` to pin ``b``, around the element bodies where it can.

    Of the two right-angle routes, the one crossing fewer bodies wins; on a
    tie a control pin (base, gate, amplifier input) is left sideways and other
    pins vertically.
    """
    (ax, ay, apin), (bx, by, bpin) = a, b
    if ax == bx or ay == by:
        return [((ax, ay), (bx, by))]
    sideways = [((ax, ay), (bx, ay)), ((bx, ay), (bx, by))]
    upright = [((ax, ay), (ax, by)), ((ax, by), (bx, by))]
    preferred = sideways if apin in _CONTROL_PINS or (bpin not in _CONTROL_PINS and abs(ay - by) < abs(ax - bx)) \
        else upright
    other = upright if preferred is sideways else sideways
    return min((preferred, other), key=lambda route: sum(_crossings(segment, boxes) for segment in route))


def _crossings(segment, boxes) -> int:
    """How many element bodies (open boxes) an axis-parallel segment passes through."""
    (x1, y1), (x2, y2) = segment
    xl, xh, yl, yh = min(x1, x2), max(x1, x2), min(y1, y2), max(y1, y2)
    return sum(1 for bx0, bx1, by0, by1 in boxes if xl < bx1 and xh > bx0 and yl < by1 and yh > by0)


def _box(centre, offsets: dict, two_terminal: bool) -> tuple[float, float, float, float]:
    """The body of an element: the extent of its pins around its centre, a little inside the pins."""
    xs = [centre[0] + dx for dx, _ in offsets.values()] + [centre[0]]
    ys = [centre[1] + dy for _, dy in offsets.values()] + [centre[1]]
    pad = 0.4 if two_terminal else 0.0
    x0, x1 = min(xs) - (pad if max(xs) == min(xs) else 0), max(xs) + (pad if max(xs) == min(xs) else 0)
    y0, y1 = min(ys) - (pad if max(ys) == min(ys) else 0), max(ys) + (pad if max(ys) == min(ys) else 0)
    inset = 0.05
    return x0 + inset, x1 - inset, y0 + inset, y1 - inset


def draw_schematic(circuit, schematic, values=None):
    """A schemdraw ``Drawing`` of the circuit (not shown); ``values`` labels passives with numbers."""
    import schemdraw
    import schemdraw.elements as elm

    lines = schematic_lines(circuit, schematic)
    types = _device_types(circuit)
    drawing = schemdraw.Drawing(canvas="matplotlib", show=False)
    drawing.config(fontsize=11, unit=_LENGTH)
    for element in circuit.elements:
        placement = schematic.placement(element.name)
        if placement is not None:
            drawing.add(_symbol(elm, element, placement, types.get(element.key, ""), lines.pins[element.key]))
    for start, end in lines.wires:
        drawing.add(elm.Line().at(start).to(end))
    for point in lines.dots:
        drawing.add(elm.Dot(radius=0.1).at(point))
    for node, points in sorted(lines.nets.items()):
        for x, y, pin in points:
            if node == "0":
                drawing.add(elm.Ground(lead=False).theta(0).at((x, y)))
            elif node in schematic.rails:
                drawing.add(elm.Vdd(lead=False).theta(0).at((x, y)).label(node, fontsize=10))
            elif node in schematic.labels:
                drawing.add(elm.Dot(radius=0.1).at((x, y)).label(node, loc=lines.sides[(x, y)], fontsize=10))
    return drawing


def _symbol(elm, element, placement, polarity: str, pins: dict):
    """The schemdraw element of one circuit element, placed on its pins."""
    kind, label = element.kind, element.name
    if kind == "Q":
        symbol = (elm.BjtPnp if polarity == "pnp" else elm.BjtNpn)(circle=True).right()
        symbol = symbol.reverse() if placement.direction == "right" else symbol
        return symbol.anchor("base").at(pins["base"]).label(label, loc="left" if placement.direction == "right"
                                                            else "right", fontsize=10)
    if kind == "M":
        symbol = (elm.PFet if polarity == "pmos" else elm.NFet)().right()
        symbol = symbol if placement.direction == "right" else symbol.reverse()
        side = "left" if placement.direction == "right" else "right"  # the name opposite the gate
        return symbol.anchor("gate").at(pins["gate"]).label(label, loc=side, fontsize=10)
    if kind == "E":
        symbol = elm.Opamp(leads=False).right()
        symbol = symbol.reverse() if placement.direction == "left" else symbol
        return symbol.anchor("out").at(pins["out"]).label(label, loc="center", fontsize=10)
    factory = {"R": elm.Resistor, "C": elm.Capacitor, "L": elm.Inductor2, "D": elm.Diode, "V": elm.SourceV,
               "I": elm.SourceI, "G": elm.SourceControlledI, "F": elm.SourceControlledI,
               "H": elm.SourceControlledV}[kind]
    symbol = factory().endpoints(pins["start"], pins["end"])
    if kind in ("V", "H"):
        symbol = symbol.reverse()  # the symbol's + sits at its end; SPICE's first node is the + one
    return symbol.label(label, fontsize=10)


def save_schematic(drawing, path: str | Path, kind: str | None = None) -> None:
    """Write a drawing as SVG or PNG through matplotlib with fixed metadata (see :func:`symbias.render.figures.save_figure`)."""
    from .figures import save_figure

    import matplotlib.pyplot as plt

    figure = drawing.draw(show=False)
    try:
        save_figure(figure.fig, path, kind)
    finally:
        plt.close(figure.fig)
