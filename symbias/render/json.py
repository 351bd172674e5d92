"""The machine interface: a Formula as a JSON-ready dictionary.

The fields are stable: ``quantity``, ``label``, ``unit``, ``exact`` (a string
``sympy.parse_expr`` reads back when every identifier is a plain symbol),
``numerator``, ``denominator``, ``symbols`` (sorted names), ``meanings``,
``assumptions`` and ``terms`` (numerator and denominator term counts).
Later steps add ``approx``, ``approx_error`` and ``sensitivities``.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> record = formula_record(output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\n"), "a"))
>>> record["exact"], record["symbols"]
('(RA)/(1)', ['RA'])
"""

from __future__ import annotations

import json
from typing import Any

from ..formula import Formula

__all__ = ["formula_record", "dumps"]


def formula_record(formula: Formula) -> dict[str, Any]:
    """JSON-ready fields of a formula (see the module docstring)."""
    num_terms, den_terms = formula.nterms
    exact = formula.exact_string()
    numerator, denominator = exact[1:].split(")/(", 1)
    return {
        "quantity": formula.quantity,
        "label": formula.label,
        "unit": formula.unit,
        "exact": exact,
        "numerator": numerator,
        "denominator": denominator[:-1],
        "symbols": [s.name for s in formula.symbols],
        "meanings": dict(formula.meanings),
        "assumptions": list(formula.assumptions),
        "terms": [num_terms, den_terms],
    }


def dumps(data: Any) -> str:
    """Serialise with stable key order and two-space indentation."""
    return json.dumps(data, indent=2, sort_keys=False, default=str)
