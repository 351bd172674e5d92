"""symbias: closed-form and numeric analysis of transistor bias circuits.

The public names below are loaded on first use, so ``import symbias`` stays
cheap (no sympy, numpy or plotting until a name is touched).

Examples
--------
>>> import symbias
>>> c = symbias.parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\n")
>>> symbias.output_resistance(c, "a").expr
RA
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

_EXPORTS = {
    "parse_netlist": "netlist",
    "read_netlist": "netlist",
    "format_netlist": "netlist",
    "Circuit": "circuit",
    "Element": "circuit",
    "Model": "circuit",
    "validate": "circuit",
    "SmallSignalOptions": "network",
    "LinearNetwork": "network",
    "expand": "network",
    "bias_values": "network",
    "Formula": "formula",
    "output_resistance": "analyses",
    "output_impedance": "analyses",
    "current_gain": "analyses",
    "voltage_gain": "analyses",
    "transconductance": "analyses",
    "transimpedance": "analyses",
    "SymbiasError": "errors",
    "NetlistError": "errors",
    "CircuitError": "errors",
    "AnalysisError": "errors",
    "ConvergenceError": "errors",
    "ProcessError": "errors",
    "SpecError": "errors",
    "LibraryError": "errors",
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
