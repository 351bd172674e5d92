"""Noise densities in numbers at an operating point (A^2/Hz), from bias currents and model cards.

Second step of :mod:`symbias.noise` (sources + operating point -> :class:`SourceDensity`
per source).  The published forms, with the constants of CODATA 2018
(:mod:`symbias.devices.temperature`) and ``T`` the circuit temperature:

* thermal noise of a conductance ``G`` (resistor, ``rb``, ``re``): ``4 k T G``,
  the closed form of the source evaluated at the bias point's values;
* shot noise: ``2 q |I|`` with the collector, base or diode current of the
  operating point;
* MOS channel thermal noise: ``4 k T gamma |gm|``, gamma the card's ``NGAMMA``
  (default 2/3, the long-channel value; common practice);
* flicker noise, ``c/f``: BJT ``KF |IB|^AF``; diode ``KF |ID|^AF``; MOS
  ``KF |ID|^AF / (COX^2 W Leff)`` with ``COX = 3.9 eps0/TOX`` and, when the
  card has no TOX, TOX = 100 nm, which is the form and the assumption of
  ngspice's level-1 MOS (checked against Debian's ngspice 39 in the tests).
  ``AF`` defaults to 1, ``KF`` to 0.

A device's area and m are those of its operating-point currents (the SPICE
convention of folding them into the area).

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.linear.network import expand
>>> from symbias.dc.operating_point import operating_point
>>> from symbias.noise.sources import noise_sources
>>> c = parse_netlist("t\\nV1 a 0 1\\nR1 a 0 1k\\n")
>>> d = source_densities(noise_sources(c, expand(c)), c, operating_point(c), {}, 27.0, {})
>>> round(d[0].white * 1e24, 4)  # 4kT/R at 300.15 K
16.5761
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Mapping, Sequence

from ..circuit import Circuit
from ..devices.parasitics import EPSILON_0, OXIDE_PERMITTIVITY
from ..devices.temperature import BOLTZMANN, CHARGE, kelvin
from ..errors import AnalysisError, CircuitError
from ..symbols import CHANNEL_NOISE_FACTOR, THERMAL_ENERGY
from .sources import NoiseSource

__all__ = ["SourceDensity", "source_densities", "DEFAULT_GAMMA", "DEFAULT_TOX"]

#: Long-channel MOS channel-noise factor (common practice).
DEFAULT_GAMMA = 2.0 / 3.0
#: Oxide thickness (m) the simulator assumes for the flicker noise of a level-1 MOS card without TOX.
DEFAULT_TOX = 1e-7

_SHOT_TERMINAL = {("Q", "collector"): "c", ("Q", "base"): "b", ("D", "junction"): "a"}


@dataclass(frozen=True)
class SourceDensity:
    """A source's density at the bias point: ``white + flicker/f`` (A^2/Hz, flicker in A^2).

    Examples
    --------
    >>> SourceDensity(1e-24, 1e-21).at(1e3)
    2e-24
    """

    white: float
    flicker: float = 0.0

    def at(self, frequency: Any) -> Any:
        """The density at a frequency (Hz; numbers or arrays)."""
        return self.white + self.flicker / frequency


def _number(value: Any, what: str) -> float:
    number = float(value)
    if not math.isfinite(number):
        raise AnalysisError(f"{what} is not a finite number")
    return number


def _white(source: NoiseSource, circuit: Circuit, point, cards, thermal: float, values) -> float:
    kind = circuit.element(source.element).kind
    if source.kind == "shot":
        terminal = _SHOT_TERMINAL[(kind, source.part)]
        return 2.0 * CHARGE * abs(point.device(source.element).currents[terminal])
    if kind == "M":
        gamma = float(cards.get(source.element, {}).get("NGAMMA", DEFAULT_GAMMA))
        return 4.0 * thermal * gamma * abs(point.device(source.element).small_signal["gm"])
    numbers = dict(values)
    numbers[THERMAL_ENERGY] = thermal
    numbers.setdefault(CHANNEL_NOISE_FACTOR, DEFAULT_GAMMA)
    missing = sorted(source.density.names - set(numbers))
    if missing:
        raise AnalysisError(f"{source.name}: no number for {', '.join(missing)}")
    return abs(_number(source.density.evaluate(numbers), f"the density of {source.name}"))


def _flicker(source: NoiseSource, circuit: Circuit, point, card: Mapping[str, float], values) -> float:
    element = circuit.element(source.element)
    kf, af = float(card.get("KF", 0.0)), float(card.get("AF", 1.0))
    currents = point.device(source.element).currents
    if element.kind == "Q":
        return kf * abs(currents["b"]) ** af
    if element.kind == "D":
        return kf * abs(currents["a"]) ** af
    from ..devices.dc_context import element_number

    def size(key: str) -> float:
        if key not in element.params:
            raise CircuitError(f"{element.name}: flicker noise needs {key.upper()}", path=circuit.path,
                               line=element.line)
        return element_number(element, element.params[key], values, circuit.path, key)

    tox = float(card.get("TOX", 0.0)) or DEFAULT_TOX
    oxide = OXIDE_PERMITTIVITY * EPSILON_0 / tox
    length = size("l") - 2.0 * float(card.get("LD", 0.0))
    return kf * abs(currents["d"]) ** af / (oxide * oxide * size("w") * length)


def source_densities(sources: Sequence[NoiseSource], circuit: Circuit, point, cards: Mapping[str, Mapping[str, float]],
                     temperature: float, values: Mapping[str, float]) -> tuple[SourceDensity, ...]:
    """The density of every source at an operating point.

    Parameters
    ----------
    sources : sequence of NoiseSource
    circuit : Circuit
    point : OperatingPoint
        Bias currents and small-signal values of the devices.
    cards : mapping
        Device name (as written) -> its model parameters (``KF``, ``AF``,
        ``NGAMMA``, ``TOX``, ``LD``), upper-case keys.
    temperature : float
        degC.
    values : mapping
        Numbers of the network's symbols (the bias point's values, netlist
        numbers), for thermal densities and MOS sizes.

    Raises
    ------
    AnalysisError
        When a density cannot be evaluated.
    """
    thermal = BOLTZMANN * kelvin(temperature)
    out = []
    for source in sources:
        if source.kind == "flicker":
            out.append(SourceDensity(0.0, _flicker(source, circuit, point, cards.get(source.element, {}), values)))
        else:
            out.append(SourceDensity(_white(source, circuit, point, cards, thermal, values)))
    return tuple(out)
