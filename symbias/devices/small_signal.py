"""Small-signal models of transistors and diodes: the ``small_signal`` hooks of the device kinds.

Device layer.  Each expansion takes a device element and an
:class:`~symbias.devices.options.ExpansionContext` and returns the linear
primitives that replace the device plus the meaning of every symbol.  A new
device kind plugs in by naming its function in its entry of
:mod:`symbias.elements`; the solver never needs to change.

BJT (npn and pnp share one model; nodes c b e [s]), hybrid-pi:
``rpi`` b'-e', ``gm*v(b',e')`` from c to e', ``ro`` c-e'; with ``extras``
also ``rb`` b-b', ``re`` e-e', ``rmu`` b'-c; with ``capacitances`` ``cpi``
b'-e', ``cmu`` b'-c, ``ccs`` c-substrate (ground when no 4th node).

MOS (n and p; nodes d g s b): ``gm*v(g,s)`` and ``gmb*v(b,s)`` from d to s,
``ro`` d-s; with ``capacitances`` ``cgs``, ``cgd``, ``cdb``, ``csb``.

Diode (nodes a k): ``rd`` a-k; with ``capacitances`` ``cj`` a-k.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.linear.network import expand
>>> c = parse_netlist("t\\nV1 c 0 1\\nI1 0 b 1m\\nQ1 c b 0 QN\\n.model QN npn\\n")
>>> sorted(str(p.value) for p in expand(c).primitives if p.origin == "Q1")
['1/ro_Q1', '1/rpi_Q1', 'gm_Q1']
"""

from __future__ import annotations

from ..circuit import GROUND, Element
from ..elements import Primitive
from ..expressions import ONE, Symbol
from ..symbols import LAPLACE, Meaning, device_meaning
from .options import DeviceSymbols, ExpansionContext

__all__ = ["expand_bjt", "expand_mos", "expand_diode"]

_DESCRIPTIONS = {"Q": {"ro": "output resistance (Early effect)"},
                 "M": {"ro": "output resistance (channel-length modulation)"},
                 "D": {"rd": "small-signal resistance (dI/dV)^-1"}}
_LAPLACE_MEANING = Meaning("Laplace variable", "1/s")


def _describe(symbols: DeviceSymbols, kind: str, parameters: list[str]) -> dict[str, Meaning]:
    own = _DESCRIPTIONS.get(kind, {})
    return {symbols.name(p): device_meaning(p, symbols.whose, own.get(p)) for p in parameters}


def _part(kind, device: Element, part: str, nodes, value, control=None) -> Primitive:
    return Primitive(kind, f"{device.name}.{part}", tuple(nodes), value, control, device.name, device.line)


def _effective(parts: list[Primitive]) -> list[Primitive]:
    """Drop parts that a shorted terminal pair makes inert (e.g. ro of a shorted device)."""
    kept = []
    for part in parts:
        if part.nodes[0] == part.nodes[1]:
            continue
        if part.kind == "G" and part.nodes[2] == part.nodes[3]:
            continue
        kept.append(part)
    return kept


def expand_bjt(device: Element, context: ExpansionContext):
    """Hybrid-pi expansion of a bipolar transistor; see the module docstring."""
    symbols, options = context.symbols[device.key], context.options
    laplace = Symbol(LAPLACE)
    c, b, e = device.nodes[:3]
    substrate = device.nodes[3] if len(device.nodes) == 4 else GROUND
    key = device.name.lower()
    bi, ei = b, e
    parts: list[Primitive] = []
    used = ["gm"]
    if "rb" in options.parasitics:
        bi = f"{key}#b"
        parts.append(_part("Y", device, "rb", (b, bi), ONE / symbols.resistance_like("rb")))
        used.append("rb")
    if "re" in options.parasitics:
        ei = f"{key}#e"
        parts.append(_part("Y", device, "re", (e, ei), ONE / symbols.resistance_like("re")))
        used.append("re")
    if "rmu" in options.parasitics:
        parts.append(_part("Y", device, "rmu", (bi, c), ONE / symbols.resistance_like("rmu")))
        used.append("rmu")
    parts.append(_part("Y", device, "rpi", (bi, ei), ONE / symbols.rpi()))
    used += ["beta"] if options.beta else ["rpi"]
    parts.append(_part("G", device, "gm", (c, ei, bi, ei), symbols.conductance_like("gm")))
    if options.ro:
        parts.append(_part("Y", device, "ro", (c, ei), ONE / symbols.resistance_like("ro")))
        used.append("ro")
    if options.capacitances:
        parts.append(_part("Y", device, "cpi", (bi, ei), laplace * symbols.conductance_like("cpi")))
        parts.append(_part("Y", device, "cmu", (bi, c), laplace * symbols.conductance_like("cmu")))
        if c != substrate:
            parts.append(_part("Y", device, "ccs", (c, substrate), laplace * symbols.conductance_like("ccs")))
            used.append("ccs")
        used += ["cpi", "cmu"]
    meanings = _describe(symbols, "Q", used)
    if options.capacitances:
        meanings[LAPLACE] = _LAPLACE_MEANING
    return _effective(parts), meanings


def expand_mos(device: Element, context: ExpansionContext):
    """Small-signal expansion of a MOS transistor; see the module docstring."""
    symbols, options = context.symbols[device.key], context.options
    laplace = Symbol(LAPLACE)
    d, g, s, b = device.nodes
    parts: list[Primitive] = [_part("G", device, "gm", (d, s, g, s), symbols.conductance_like("gm"))]
    used = ["gm"]
    if options.gmb and b != s:
        parts.append(_part("G", device, "gmb", (d, s, b, s), symbols.conductance_like("gmb")))
        used.append("gmb")
    if options.ro:
        parts.append(_part("Y", device, "ro", (d, s), ONE / symbols.resistance_like("ro")))
        used.append("ro")
    if options.capacitances:
        for part, (n1, n2) in {"cgs": (g, s), "cgd": (g, d), "cdb": (d, b), "csb": (s, b)}.items():
            if n1 != n2:
                parts.append(_part("Y", device, part, (n1, n2), laplace * symbols.conductance_like(part)))
                used.append(part)
    meanings = _describe(symbols, "M", used)
    if options.capacitances:
        meanings[LAPLACE] = _LAPLACE_MEANING
    return _effective(parts), meanings


def expand_diode(device: Element, context: ExpansionContext):
    """Small-signal expansion of a diode: ``rd`` anode-cathode, and ``cj`` with capacitances."""
    symbols, options = context.symbols[device.key], context.options
    a, k = device.nodes
    parts: list[Primitive] = [_part("Y", device, "rd", (a, k), ONE / symbols.resistance_like("rd"))]
    used = ["rd"]
    if options.capacitances:
        parts.append(_part("Y", device, "cj", (a, k), Symbol(LAPLACE) * symbols.conductance_like("cj")))
        used.append("cj")
    meanings = _describe(symbols, "D", used)
    if options.capacitances:
        meanings[LAPLACE] = _LAPLACE_MEANING
    return _effective(parts), meanings
