"""symbias: closed-form and numeric analysis of transistor bias circuits.

The names below are the public surface a script needs: reading circuits and
library entries, the small-signal quantities, the approximation, the
sensitivities and the transfer error, the operating point and sweeps, process
files and the error classes.  Everything else stays in its module.  The names
are loaded on first use, so ``import symbias`` stays cheap (no sympy, numpy or
plotting until a name is touched).

Examples
--------
>>> import symbias
>>> c = symbias.parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n")
>>> symbias.output_resistance(c, "a").expr
RA*RB/(RA + RB)
>>> result = symbias.derive(symbias.load_target("bjt-simple-mirror"))
>>> [r.formula.quantity for r in result.results]
['output_resistance', 'current_gain']
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

_EXPORTS = {
    # reading circuits and library entries
    "parse_netlist": "netlist",
    "read_netlist": "netlist",
    "Circuit": "circuit",
    "find_topology": "library",
    "load_library": "library",
    "load_process": "process",
    "Process": "process",
    # small-signal quantities
    "SmallSignalOptions": "devices.options",
    "Formula": "formula",
    "output_resistance": "analyses",
    "current_gain": "analyses",
    "voltage_gain": "analyses",
    "transconductance": "analyses",
    "transimpedance": "analyses",
    "approximate": "approx",
    "sensitivities": "sensitivity",
    "transfer_error": "transfer_error",
    # the pipeline every front end uses
    "load_target": "pipeline",
    "design_inputs": "pipeline",
    "derive": "pipeline",
    "DeriveRequest": "pipeline",
    "Quantity": "pipeline",
    "bias_point": "pipeline",
    "run_sweep": "pipeline",
    "mirror_ratio": "pipeline",
    "SweepRequest": "pipeline",
    # choosing the block: a spec, the library ranked against it
    "load_spec": "design.spec",
    "rank_candidates": "design.rank",
    "Ranking": "design.rank",
    # large signal
    "operating_point": "dc.operating_point",
    "OperatingPoint": "dc.operating_point",
    "conducting_point": "dc.states",
    # errors
    "SymbiasError": "errors",
    "NetlistError": "errors",
    "CircuitError": "errors",
    "AnalysisError": "errors",
    "ConvergenceError": "errors",
    "ProcessError": "errors",
    "LibraryError": "errors",
    "SpecError": "errors",
    "AssumptionError": "errors",
    "LimitError": "errors",
    "SimulatorError": "errors",
}

__all__ = ["__version__", *_EXPORTS]


def __getattr__(name: str):
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'symbias' has no attribute {name!r}")
    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(__all__)
