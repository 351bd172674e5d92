"""Noise of a bias circuit: sources, their densities at the bias point, output noise exactly and in numbers.

Quantity level, beside :mod:`symbias.analyses`.  Modules, bottom up:

* :mod:`~symbias.noise.sources`: one noise current source across each noisy
  part of the small-signal network, with its published density in closed
  form (resistor thermal, BJT shot and base-resistance thermal, MOS channel
  thermal, flicker, diode shot);
* :mod:`~symbias.noise.densities`: the same densities in numbers at an
  operating point (bias currents, model parameters, temperature; CODATA 2018
  constants);
* :mod:`~symbias.noise.transfers`: the exact transfer ``H_i`` of every source to
  the output (one cofactor expansion shared by all of them), its
  low-frequency limit, and the output noise ``sum |H_i|^2 S_i`` in closed form;
* :mod:`~symbias.noise.spectrum`: ``|H_i(j 2 pi f)|^2`` by a numeric solve
  over frequency, each source's and each device's contribution and share,
  the total, the integral over a band and the 1/f corner.

Importing it loads numpy, not sympy.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.linear.network import expand
>>> c = parse_netlist("t\\nV1 a 0 0\\nR1 a 0 1k\\n")
>>> [s.name for s in noise_sources(c, expand(c))]
['R1 thermal']
"""

from .densities import SourceDensity, source_densities
from .sources import KINDS_OF_NOISE, NOISE_MODELS, NoiseSource, noise_sources
from .output import NoiseOutput, noise_output
from .spectrum import Contribution, NoiseSpectrum, band_integral, noise_spectrum
from .transfers import NoiseTerm, OutputNoiseFormula, output_noise_formula

__all__ = [
    "NoiseSource",
    "noise_sources",
    "NOISE_MODELS",
    "KINDS_OF_NOISE",
    "SourceDensity",
    "source_densities",
    "NoiseOutput",
    "noise_output",
    "NoiseSpectrum",
    "noise_spectrum",
    "Contribution",
    "band_integral",
    "NoiseTerm",
    "OutputNoiseFormula",
    "output_noise_formula",
]
