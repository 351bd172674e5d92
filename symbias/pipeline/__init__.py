"""The pipeline: library functions every front end calls (command line, ranking, design notes, scripts).

Design layer, above the analyses and the DC side and below the renderers.
Each step takes plain inputs and returns frozen result objects:

* :mod:`~symbias.pipeline.targets`: a netlist file, netlist text or library
  id -> :class:`Target` (circuit, topology, roles); the numbers a circuit needs
  (process, temperature, free-symbol values) -> :class:`DesignInputs`;
* :mod:`~symbias.pipeline.quantities`: which small-signal quantities to
  derive, by default from the roles;
* :mod:`~symbias.pipeline.derivation`: derive them with options, approximate,
  sensitivities, transfer error, values at the operating point ->
  :class:`Derivation`;
* :mod:`~symbias.pipeline.bias`: operating points (one, or every DC state) and
  the small-signal symbol values at the bias point;
* :mod:`~symbias.pipeline.simulation` and :mod:`~symbias.pipeline.corners`:
  bias values from ngspice with the netlist's own model cards, process
  corners, and the model check (built-in models beside ngspice's);
* :mod:`~symbias.pipeline.sweeps`: output, supply and temperature sweeps with
  their metrics;
* :mod:`~symbias.pipeline.topologies`: library listings and topology records.

Examples
--------
>>> from symbias.pipeline import load_target, derive, DeriveRequest
>>> result = derive(load_target("bjt-simple-mirror"), DeriveRequest())
>>> [r.formula.quantity for r in result.results]
['output_resistance', 'current_gain']
"""

from __future__ import annotations

from .bias import BiasPoint, bias_point, operating_point_of, states_of
from .corners import CornerPoints, corner_points, model_check
from .derivation import Derivation, DeriveRequest, DerivedQuantity, derive
from .quantities import QUANTITY_KINDS, Quantity, default_quantities, parse_quantity
from .sweeps import SweepRequest, SweepResult, default_output, run_sweep
from .targets import MODEL_SOURCES, DesignInputs, Target, design_inputs, load_target, target_from_text

__all__ = [
    "Target",
    "load_target",
    "target_from_text",
    "DesignInputs",
    "design_inputs",
    "Quantity",
    "QUANTITY_KINDS",
    "parse_quantity",
    "default_quantities",
    "DeriveRequest",
    "DerivedQuantity",
    "Derivation",
    "derive",
    "BiasPoint",
    "bias_point",
    "operating_point_of",
    "states_of",
    "MODEL_SOURCES",
    "CornerPoints",
    "corner_points",
    "model_check",
    "SweepRequest",
    "SweepResult",
    "run_sweep",
    "default_output",
]
