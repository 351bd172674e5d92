"""Output noise in numbers over frequency: each source's and device's part, total, band integral, 1/f corner.

Fourth step of :mod:`symbias.noise` (sources + densities + bias values ->
:class:`NoiseSpectrum`).  ``|H_i(j 2 pi f)|^2`` comes from the numeric twin of
the network (:mod:`symbias.linear.numeric`), one batched solve over all
frequencies per source, so the numbers never wait for a closed form; the
closed forms of :mod:`~symbias.noise.transfers` are checked against it in the
tests.

Integrals over a band treat the density between two neighbouring
frequencies as a power law ``S ~ f^a`` (exact for white and 1/f parts; the
grid is fine enough elsewhere), as circuit simulators do.  The 1/f corner is
where the flicker part of the output noise equals the white part.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.linear.network import expand
>>> from symbias.dc.operating_point import operating_point
>>> from symbias.noise.sources import noise_sources
>>> from symbias.noise.densities import source_densities
>>> from symbias.noise.output import noise_output
>>> c = parse_netlist("t\\nI1 0 a 1m\\nR1 a 0 1k\\n")
>>> network = expand(c)
>>> sources = noise_sources(c, network)
>>> densities = source_densities(sources, c, operating_point(c), {}, 27.0, {})
>>> spectrum = noise_spectrum(network, sources, densities, noise_output(c, "a"), {}, [1.0, 1e3])
>>> round(float(spectrum.total[0]) * 1e18, 4)  # 4kTR of 1 kohm, V^2/Hz
16.5761
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Mapping, Sequence

import numpy as np

from ..linear.mna import LinearProblem
from ..linear.network import LinearNetwork
from ..linear.numeric import compile_problem, solve_system
from ..symbols import LAPLACE
from .densities import SourceDensity
from .output import NoiseOutput, drive
from .sources import NoiseSource

__all__ = ["NoiseSpectrum", "noise_spectrum", "Contribution", "band_integral"]


@dataclass(frozen=True)
class Contribution:
    """One row of a ranked table: who, how much of the output density, which share of it."""

    name: str
    element: str
    kind: str
    density: float
    share: float


@dataclass(frozen=True, eq=False)
class NoiseSpectrum:
    """The output noise of a circuit at its bias point, over frequency.

    Parameters
    ----------
    output : NoiseOutput
    sources : tuple of NoiseSource
    densities : tuple of SourceDensity
        Each source's own density.
    frequencies : numpy.ndarray
        Hz, increasing.
    gains : numpy.ndarray
        ``|H_i(j 2 pi f)|^2``, sources x frequencies.
    """

    output: NoiseOutput
    sources: tuple[NoiseSource, ...]
    densities: tuple[SourceDensity, ...]
    frequencies: np.ndarray
    gains: np.ndarray

    @property
    def white(self) -> np.ndarray:
        """Each source's white density (A^2/Hz)."""
        return np.array([d.white for d in self.densities])

    @property
    def flicker(self) -> np.ndarray:
        """Each source's flicker coefficient (A^2; density = flicker/f)."""
        return np.array([d.flicker for d in self.densities])

    @property
    def contributions(self) -> np.ndarray:
        """Each source's part of the output density, sources x frequencies."""
        own = self.white[:, None] + self.flicker[:, None] / self.frequencies[None, :]
        return self.gains * own

    @property
    def total(self) -> np.ndarray:
        """The output noise density over frequency (A^2/Hz or V^2/Hz)."""
        return self.contributions.sum(axis=0)

    def index(self, frequency: float) -> int:
        """The grid point nearest ``frequency`` (in log f)."""
        return int(np.argmin(np.abs(np.log(self.frequencies / float(frequency)))))

    def ranked(self, frequency: float) -> list[Contribution]:
        """Every source's contribution at the grid point nearest ``frequency``, largest first."""
        k = self.index(frequency)
        parts = self.contributions[:, k]
        total = parts.sum()
        rows = [Contribution(s.name, s.element, s.kind, float(v), float(v / total) if total > 0 else 0.0)
                for s, v in zip(self.sources, parts)]
        return sorted(rows, key=lambda r: -r.density)

    def by_element(self, frequency: float) -> list[Contribution]:
        """Each element's summed contribution at the grid point nearest ``frequency``, largest first."""
        merged: dict[str, float] = {}
        kinds: dict[str, set[str]] = {}
        for row in self.ranked(frequency):
            merged[row.element] = merged.get(row.element, 0.0) + row.density
            kinds.setdefault(row.element, set()).add(row.kind)
        total = sum(merged.values())
        rows = [Contribution(e, e, "+".join(sorted(kinds[e])), v, v / total if total > 0 else 0.0)
                for e, v in merged.items()]
        return sorted(rows, key=lambda r: -r.density)

    def element_spectra(self) -> dict[str, np.ndarray]:
        """Each element's summed contribution over frequency (element -> density at :attr:`frequencies`).

        Examples
        --------
        >>> from symbias.noise.output import NoiseOutput
        >>> s = NoiseSpectrum(NoiseOutput("voltage", "a", "v(a)", ()), (), (), np.array([1.0]), np.zeros((0, 1)))
        >>> s.element_spectra()
        {}
        """
        merged: dict[str, np.ndarray] = {}
        for source, row in zip(self.sources, self.contributions):
            merged[source.element] = merged.get(source.element, 0.0) + row
        return merged

    def integrated(self, start: float | None = None, stop: float | None = None) -> float:
        """The output noise power over a band (A^2 or V^2); the whole grid by default."""
        f = self.frequencies
        keep = (f >= (start if start is not None else f[0]) * (1 - 1e-12)) & \
               (f <= (stop if stop is not None else f[-1]) * (1 + 1e-12))
        return band_integral(f[keep], self.total[keep])

    def flicker_corner(self) -> tuple[float | None, str]:
        """Where the flicker part of the output density equals the white part, and how it was found.

        Within the grid the crossing is interpolated in log-log; when the
        flicker part is below the white part everywhere, the corner lies below
        the grid and is extrapolated from the lowest frequency (1/f).
        """
        flicker = (self.gains * self.flicker[:, None]).sum(axis=0) / self.frequencies
        white = (self.gains * self.white[:, None]).sum(axis=0)
        if not np.any(flicker > 0):
            return None, "no flicker noise at the output"
        with np.errstate(divide="ignore"):
            ratio = np.log(flicker / white)
        above = ratio > 0
        if above.all():
            return None, "above the band (flicker noise dominates throughout)"
        if not above.any():
            return float(self.frequencies[0] * flicker[0] / white[0]), "below the band (extrapolated as 1/f)"
        k = int(np.flatnonzero(above[:-1] & ~above[1:])[0]) if np.any(above[:-1] & ~above[1:]) else 0
        lf = np.log(self.frequencies[k:k + 2])
        corner = lf[0] + (0.0 - ratio[k]) * (lf[1] - lf[0]) / (ratio[k + 1] - ratio[k])
        return float(np.exp(corner)), "within the band"


def band_integral(frequencies: np.ndarray, density: np.ndarray) -> float:
    """``integral S df`` over a grid, each interval as a power law ``S ~ f^a``.

    Examples
    --------
    >>> f = np.array([1.0, 10.0, 100.0])
    >>> round(band_integral(f, 2.0 / f), 6), round(2 * math.log(100.0), 6)  # 2/f from 1 to 100 Hz
    (9.21034, 9.21034)
    """
    total = 0.0
    for f1, f2, s1, s2 in zip(frequencies[:-1], frequencies[1:], density[:-1], density[1:]):
        if s1 <= 0 or s2 <= 0:
            total += 0.5 * (s1 + s2) * (f2 - f1)
            continue
        a = math.log(s2 / s1) / math.log(f2 / f1)
        if abs(a + 1.0) < 1e-9:
            total += s1 * f1 * math.log(f2 / f1)
        else:
            total += s1 * f1 / (a + 1.0) * ((f2 / f1) ** (a + 1.0) - 1.0)
    return float(total)


def noise_spectrum(network: LinearNetwork, sources: Sequence[NoiseSource], densities: Sequence[SourceDensity],
                   output: NoiseOutput, values: Mapping[str, Any], frequencies: Sequence[float]) -> NoiseSpectrum:
    """``|H_i|^2`` of every source over frequency by the numeric solve, with the densities.

    Parameters
    ----------
    network : LinearNetwork
        The expansion the sources sit in.
    sources, densities
        From :func:`~symbias.noise.sources.noise_sources` and
        :func:`~symbias.noise.densities.source_densities`.
    output : NoiseOutput
    values : mapping
        A number for every symbol of the network except ``s``.
    frequencies : sequence of float
        Hz.

    Raises
    ------
    AnalysisError
        When a symbol has no value or the network is singular.
    """
    frequencies = np.asarray(frequencies, dtype=float)
    point = dict(values)
    point[LAPLACE] = 2j * np.pi * frequencies
    gains = np.zeros((len(sources), len(frequencies)))
    for i, source in enumerate(sources):
        system = compile_problem(LinearProblem(network, drive(source.nodes), output.observe))
        transfer = np.broadcast_to(solve_system(system, point), frequencies.shape)
        gains[i] = np.abs(transfer) ** 2
    return NoiseSpectrum(output, tuple(sources), tuple(densities), frequencies, gains)
