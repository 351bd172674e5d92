"""Small-signal models of transistors, registered by element letter.

Each expansion takes a device element, its model and its symbols and returns
the linear primitives that replace it plus a description of every symbol.  A
new device kind plugs in by adding a function to :data:`EXPANSIONS`; the
solver never needs to change.

BJT (npn and pnp share one model; nodes c b e [s]), hybrid-pi:
``rpi`` b'-e', ``gm*v(b',e')`` from c to e', ``ro`` c-e'; with ``extras``
also ``rb`` b-b', ``re`` e-e', ``rmu`` b'-c; with ``capacitances`` ``cpi``
b'-e', ``cmu`` b'-c, ``ccs`` c-substrate (ground when no 4th node).

MOS (n and p; nodes d g s b): ``gm*v(g,s)`` and ``gmb*v(b,s)`` from d to s,
``ro`` d-s; with ``capacitances`` ``cgs``, ``cgd``, ``cdb``, ``csb``.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.network import expand
>>> c = parse_netlist("t\\nV1 c 0 1\\nI1 0 b 1m\\nQ1 c b 0 QN\\n.model QN npn\\n")
>>> sorted(str(p.value) for p in expand(c).primitives if p.origin == "Q1")
['1/ro_Q1', '1/rpi_Q1', 'gm_Q1']
"""

from __future__ import annotations

from typing import Callable

import sympy

from ..circuit import GROUND, Element, Model
from ..network import LAPLACE, DeviceSymbols, Primitive, SmallSignalOptions

__all__ = ["EXPANSIONS", "expand_bjt", "expand_mos"]

_MEANINGS = {
    "gm": "transconductance [A/V]",
    "rpi": "base-emitter (input) resistance [ohm]",
    "ro": "output resistance (Early effect) [ohm]",
    "beta": "small-signal current gain gm*rpi [A/A]",
    "rmu": "base-collector feedback resistance [ohm]",
    "rb": "base spreading resistance [ohm]",
    "re": "emitter resistance [ohm]",
    "cpi": "base-emitter capacitance [F]",
    "cmu": "base-collector capacitance [F]",
    "ccs": "collector-substrate capacitance [F]",
    "gmb": "body (back-gate) transconductance [A/V]",
    "cgs": "gate-source capacitance [F]",
    "cgd": "gate-drain capacitance [F]",
    "cdb": "drain-bulk capacitance [F]",
    "csb": "source-bulk capacitance [F]",
}

_MOS_RO = "output resistance (channel-length modulation) [ohm]"


def _describe(symbols: DeviceSymbols, parameters: list[str], overrides: dict[str, str] | None = None) -> dict[str, str]:
    out = {}
    for parameter in parameters:
        who = symbols.device if symbols.group is None else f"the matched {symbols.group} devices (per unit size)"
        text = (overrides or {}).get(parameter, _MEANINGS[parameter])
        out[symbols.symbol(parameter).name] = f"{text.split(' [')[0]} of {who} [{text.split(' [')[1]}"
    return out


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


def expand_bjt(device: Element, model: Model, symbols: DeviceSymbols, options: SmallSignalOptions):
    """Hybrid-pi expansion of a bipolar transistor; see the module docstring."""
    c, b, e = device.nodes[:3]
    substrate = device.nodes[3] if len(device.nodes) == 4 else GROUND
    key = device.name.lower()
    bi, ei = b, e
    parts: list[Primitive] = []
    used = ["gm"]
    if options.extras:
        bi, ei = f"{key}#b", f"{key}#e"
        parts.append(_part("Y", device, "rb", (b, bi), 1 / symbols.resistance_like("rb")))
        parts.append(_part("Y", device, "re", (e, ei), 1 / symbols.resistance_like("re")))
        parts.append(_part("Y", device, "rmu", (bi, c), 1 / symbols.resistance_like("rmu")))
        used += ["rb", "re", "rmu"]
    parts.append(_part("Y", device, "rpi", (bi, ei), 1 / symbols.rpi()))
    used += ["beta"] if options.beta else ["rpi"]
    parts.append(_part("G", device, "gm", (c, ei, bi, ei), symbols.conductance_like("gm")))
    if options.ro:
        parts.append(_part("Y", device, "ro", (c, ei), 1 / symbols.resistance_like("ro")))
        used.append("ro")
    if options.capacitances:
        parts.append(_part("Y", device, "cpi", (bi, ei), LAPLACE * symbols.conductance_like("cpi")))
        parts.append(_part("Y", device, "cmu", (bi, c), LAPLACE * symbols.conductance_like("cmu")))
        if c != substrate:
            parts.append(_part("Y", device, "ccs", (c, substrate), LAPLACE * symbols.conductance_like("ccs")))
            used.append("ccs")
        used += ["cpi", "cmu"]
    meanings = _describe(symbols, used)
    if options.capacitances:
        meanings["s"] = "Laplace variable [1/s]"
    return _effective(parts), meanings


def expand_mos(device: Element, model: Model, symbols: DeviceSymbols, options: SmallSignalOptions):
    """Small-signal expansion of a MOS transistor; see the module docstring."""
    d, g, s, b = device.nodes
    parts: list[Primitive] = [_part("G", device, "gm", (d, s, g, s), symbols.conductance_like("gm"))]
    used = ["gm"]
    if options.gmb and b != s:
        parts.append(_part("G", device, "gmb", (d, s, b, s), symbols.conductance_like("gmb")))
        used.append("gmb")
    if options.ro:
        parts.append(_part("Y", device, "ro", (d, s), 1 / symbols.resistance_like("ro")))
        used.append("ro")
    if options.capacitances:
        for part, (n1, n2) in {"cgs": (g, s), "cgd": (g, d), "cdb": (d, b), "csb": (s, b)}.items():
            if n1 != n2:
                parts.append(_part("Y", device, part, (n1, n2), LAPLACE * symbols.conductance_like(part)))
                used.append(part)
    meanings = _describe(symbols, used, {"ro": _MOS_RO})
    if options.capacitances:
        meanings["s"] = "Laplace variable [1/s]"
    return _effective(parts), meanings


#: Small-signal expansion by element letter.
EXPANSIONS: dict[str, Callable] = {"Q": expand_bjt, "M": expand_mos}
