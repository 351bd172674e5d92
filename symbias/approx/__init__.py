"""Dominant-term approximation of an exact formula, with a measured error bound.

Sixth step of the symbolic side (:class:`~symbias.formula.Formula` ->
:class:`Approximation`).  An exact result keeps every term; a design note
wants the few that matter.  This package keeps the fewest terms of numerator
and denominator whose worst relative error, measured over the stated
parameter ranges, is within a tolerance.

One module per step, each importing only those above it:

==============  ===========================================================
module          responsibility
==============  ===========================================================
``statements``  the statement grammar (``gm*ro >> 1``, ``beta in [50, 200]``),
                the hand-analysis defaults, ranges around a nominal point
``magnitudes``  the statements as a box in log space: factors, checks,
                reference scale, corners and the seeded sampler
``terms``       every numerator and denominator term at the box's points
``search``      exhaustive search over small term sets, then greedy growth,
                with compass refinement of the worst error
``result``      :func:`approximate` and the :class:`Approximation` it returns
``laplace``     results in ``s``: coefficient by coefficient, error over a
                frequency band, dominant pole and zero in closed form
``arrays``      numpy helpers (single-thread products, relative errors)
==============  ===========================================================

Importing the package loads numpy but not sympy; sympy is loaded when a short
form is displayed.  Every result object pickles (it can be computed in a
worker of a process pool).

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> from symbias.devices.options import SmallSignalOptions
>>> deck = '''cascode sink
... VB1 g1 0 1
... VB2 g2 0 2
... M1 x g1 0 0 NM
... M2 out g2 x x NM
... Vout out 0 3
... .model NM nmos
... '''
>>> exact = output_resistance(parse_netlist(deck), "Vout", SmallSignalOptions(match=True))
>>> exact.expr
gm*ro**2 + 2*ro
>>> a = approximate(exact)
>>> a.expr
gm*ro**2
>>> a.error < 0.1
True
"""

from __future__ import annotations

from ..errors import AssumptionError
from .magnitudes import (
    FREE_RANGE,
    MAX_CORNERS,
    REFERENCE_CONDUCTANCE,
    REFERENCE_RESISTANCE,
    MagnitudeModel,
    magnitude_model,
)
from .laplace import DEFAULT_BAND, FrequencyApproximation, approximate_frequency
from .result import DEFAULT_SAMPLES, DEFAULT_TOLERANCE, Approximation, approximate
from .statements import (
    BETA_RANGE,
    BODY_RANGE,
    COMPARABLE,
    MUCH_GREATER,
    Assumption,
    check_symbols,
    default_assumptions,
    nominal_ranges,
    parse_assumption,
)

__all__ = [
    "Assumption",
    "AssumptionError",
    "MagnitudeModel",
    "Approximation",
    "FrequencyApproximation",
    "approximate_frequency",
    "DEFAULT_BAND",
    "parse_assumption",
    "check_symbols",
    "default_assumptions",
    "nominal_ranges",
    "magnitude_model",
    "approximate",
    "MUCH_GREATER",
    "COMPARABLE",
    "BETA_RANGE",
    "BODY_RANGE",
    "REFERENCE_CONDUCTANCE",
    "REFERENCE_RESISTANCE",
    "FREE_RANGE",
    "DEFAULT_TOLERANCE",
    "DEFAULT_SAMPLES",
    "MAX_CORNERS",
]
