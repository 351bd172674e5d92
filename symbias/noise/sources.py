"""Noise sources of a circuit: one current source across each noisy part of the small-signal network.

First step of :mod:`symbias.noise` (Circuit + expanded network -> :class:`NoiseSource`
tuple).  Each noisy element kind has a function in :data:`NOISE_MODELS`
(keyed by the element letters of :mod:`symbias.elements`); it finds the
element's primitives in the expanded network (parts are named
``<device>.<part>``, so internal nodes such as the inner base of ``rb`` are
found without guessing) and returns the sources with their published
densities in closed form, in A^2/Hz:

=====================  =================  ==========================================
element                source across      closed form (common practice)
=====================  =================  ==========================================
resistor R             its terminals      ``4 kT/R``
BJT collector shot     c - e'             ``2 q IC``, written ``2 kT gm`` (gm = IC/VT)
BJT base shot          b' - e'            ``2 q IB``, written ``2 kT/rpi``
BJT base resistance    b - b'             ``4 kT/rb``  (``re``: ``4 kT/re``)
BJT flicker            b' - e'            ``KF IB^AF / f``, written ``Kf_Q/f``
MOS channel thermal    d - s              ``4 kT gamma gm`` (gamma 2/3 long channel)
MOS flicker            d - s              ``KF ID^AF/(COX^2 W Leff f)``, ``Kf_M/f``
diode shot             a - k              ``2 q ID``, written ``2 kT/rd``
diode flicker          a - k              ``KF ID^AF / f``, ``Kf_D/f``
=====================  =================  ==========================================

The closed forms use the symbols of :mod:`symbias.symbols` (``kT``,
``gamma_n``, ``f``, ``Kf_<device>``) and the device's own small-signal
symbols, so the output noise reads in the same terms as the output
resistance (the written forms assume ``NF = N = 1``; the numbers of
:mod:`~symbias.noise.densities` use the bias currents themselves).  A flicker
source is listed only for the devices named in ``flicker`` (those whose
model gives ``KF > 0``).

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.linear.network import expand
>>> c = parse_netlist("t\\nI1 0 b 1u\\nQ1 c b 0 QN\\nRC vcc c 10k\\nV1 vcc 0 5\\n.model QN npn\\n")
>>> [(s.name, s.nodes, str(s.density)) for s in noise_sources(c, expand(c))]
[('Q1 collector shot', ('c', '0'), '2*gm_Q1*kT'), ('Q1 base shot', ('b', '0'), '2*kT/rpi_Q1'), \
('RC thermal', ('vcc', 'c'), 'kT/2500')]
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Iterable

from ..circuit import Circuit, Element
from ..elements import KINDS, Primitive
from ..errors import CircuitError
from ..expressions import Expr, Symbol
from ..linear.network import LinearNetwork
from ..symbols import CHANNEL_NOISE_FACTOR, FREQUENCY, THERMAL_ENERGY, flicker_symbol

__all__ = ["NoiseSource", "noise_sources", "NOISE_MODELS", "KINDS_OF_NOISE"]

#: The kinds of noise, in the order tables list them.
KINDS_OF_NOISE = ("thermal", "shot", "flicker")

_KT = Symbol(THERMAL_ENERGY)


@dataclass(frozen=True)
class NoiseSource:
    """One noise current source of the small-signal network.

    Parameters
    ----------
    name : str
        ``"Q2 collector shot"``.
    element : str
        The circuit element it belongs to, as written.
    part : str
        Which of its noises: ``thermal``, ``collector``, ``base``, ``rb``,
        ``re``, ``channel``, ``junction``, ``flicker``.
    kind : str
        One of :data:`KINDS_OF_NOISE`.
    nodes : (str, str)
        The network nodes it sits across.
    density : Expr
        Its power spectral density in A^2/Hz, closed form.
    line : int
        Netlist line of the element.
    """

    name: str
    element: str
    part: str
    kind: str
    nodes: tuple[str, str]
    density: Expr
    line: int = 0


def _parts(network: LinearNetwork, element: Element) -> dict[str, Primitive]:
    """The element's primitives by part name (``gm``, ``rpi``; the element's own name for a passive)."""
    out = {}
    for p in network.primitives:
        if p.origin == element.name:
            out[p.name.split(".", 1)[1] if "." in p.name else p.name] = p
    return out


def _source(element: Element, part: str, kind: str, what: str, nodes, density: Expr) -> NoiseSource:
    return NoiseSource(f"{element.name} {what}", element.name, part, kind, (nodes[0], nodes[1]), density,
                       element.line)


def _flicker(element: Element, nodes) -> NoiseSource:
    density = Symbol(flicker_symbol(element.name)) / Symbol(FREQUENCY)
    return _source(element, "flicker", "flicker", "flicker", nodes, density)


def resistor_noise(element: Element, parts: dict[str, Primitive], flicker: bool) -> list[NoiseSource]:
    """Thermal noise ``4 kT/R`` across a resistor."""
    admittance = parts.get(element.name)
    if admittance is None:
        return []
    return [_source(element, "thermal", "thermal", "thermal", admittance.nodes, 4 * _KT * admittance.value)]


def bjt_noise(element: Element, parts: dict[str, Primitive], flicker: bool) -> list[NoiseSource]:
    """Collector and base shot noise, base and emitter resistance thermal noise, flicker noise."""
    out = []
    gm = parts.get("gm")
    if gm is not None:
        collector, inner_emitter, inner_base = gm.nodes[0], gm.nodes[1], gm.nodes[2]
        out.append(_source(element, "collector", "shot", "collector shot", (collector, inner_emitter),
                           2 * _KT * gm.value))
        rpi = parts.get("rpi")
        if rpi is not None:
            out.append(_source(element, "base", "shot", "base shot", (inner_base, inner_emitter), 2 * _KT * rpi.value))
            if flicker:
                out.append(_flicker(element, (inner_base, inner_emitter)))
    for part in ("rb", "re"):
        if part in parts:
            out.append(_source(element, part, "thermal", f"{part} thermal", parts[part].nodes,
                               4 * _KT * parts[part].value))
    return out


def mos_noise(element: Element, parts: dict[str, Primitive], flicker: bool) -> list[NoiseSource]:
    """Channel thermal noise ``4 kT gamma gm`` and flicker noise, drain to source."""
    gm = parts.get("gm")
    if gm is None:
        return []
    nodes = gm.nodes[:2]
    out = [_source(element, "channel", "thermal", "channel thermal", nodes,
                   4 * _KT * Symbol(CHANNEL_NOISE_FACTOR) * gm.value)]
    if flicker:
        out.append(_flicker(element, nodes))
    return out


def diode_noise(element: Element, parts: dict[str, Primitive], flicker: bool) -> list[NoiseSource]:
    """Shot noise ``2 q ID`` (written ``2 kT/rd``) and flicker noise across a diode."""
    rd = parts.get("rd")
    if rd is None:
        return []
    out = [_source(element, "junction", "shot", "shot", rd.nodes, 2 * _KT * rd.value)]
    if flicker:
        out.append(_flicker(element, rd.nodes))
    return out


#: Noise model of each noisy element kind, by element letter (the others are noiseless: ideal sources,
#: controlled sources, capacitors and inductors).
NOISE_MODELS: dict[str, Callable[[Element, dict[str, Primitive], bool], list[NoiseSource]]] = {
    "R": resistor_noise,
    "Q": bjt_noise,
    "M": mos_noise,
    "D": diode_noise,
}


def noise_sources(circuit: Circuit, network: LinearNetwork, flicker: Iterable[str] = ()) -> tuple[NoiseSource, ...]:
    """Every noise source of a circuit, placed in its expanded network.

    Parameters
    ----------
    circuit : Circuit
    network : LinearNetwork
        Its small-signal expansion (:func:`symbias.linear.network.expand`).
    flicker : iterable of str
        Devices with flicker noise (their model's ``KF`` is not zero).

    Raises
    ------
    CircuitError
        When a device named in ``flicker`` is not in the circuit.
    """
    wanted = {name.lower() for name in flicker}
    known = {e.key for e in circuit.elements}
    unknown = sorted(wanted - known)
    if unknown:
        raise CircuitError(f"no device {unknown[0]!r} to give flicker noise", path=circuit.path)
    out: list[NoiseSource] = []
    for element in circuit.elements:
        model = NOISE_MODELS.get(element.kind)
        if model is None or element.kind not in KINDS:
            continue
        out.extend(s for s in model(element, _parts(network, element), element.key in wanted)
                   if s.nodes[0] != s.nodes[1])
    return tuple(out)
