"""The machine interface: a Formula as a JSON-ready dictionary.

The fields are stable: ``quantity``, ``label``, ``unit``, ``exact`` (a string
``sympy.parse_expr`` reads back when every identifier is a plain symbol),
``numerator``, ``denominator``, ``symbols`` (sorted names), ``meanings``,
``assumptions`` and ``terms`` (numerator and denominator term counts).
With an approximation the record gains ``approx`` (sympy-parseable),
``approx_error`` (worst relative error found), ``approx_worst_point``,
``approx_points`` (corners, random draws, admitted, refinement points),
``approx_tolerance``, ``approx_assumptions`` (the magnitude statements with
their ranges), and these statements are appended to ``assumptions``.  With
sensitivities it gains ``sensitivities`` (symbol -> simplified expression as
a string, or the value where the formula is too large for a symbolic form)
and ``sensitivity_values`` (symbol -> value at ``sensitivity_point``).

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


def formula_record(formula: Formula, approximation: Any = None, sensitivities: Any = None,
                   point: dict[str, float] | None = None) -> dict[str, Any]:
    """JSON-ready fields of a formula, its approximation and sensitivities (see the module docstring).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> from symbias.approx import approximate
    >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
    >>> r = formula_record(f, approximate(f, ["RA >> RB"]))
    >>> r["approx"], round(r["approx_error"], 3), r["approx_assumptions"]
    ('RB', 0.033, ['RA >> RB  (RA/RB in [30, 1e+04])', 'RA in [100, 100000] ohm (reference scale)'])
    """
    num_terms, den_terms = formula.nterms
    exact = formula.exact_string()
    numerator, denominator = exact[1:].split(")/(", 1)
    record = {
        "quantity": formula.quantity,
        "label": formula.label,
        "unit": formula.unit,
        "exact": exact,
        "numerator": numerator,
        "denominator": denominator[:-1],
        "symbols": [s.name for s in formula.symbols],
        "meanings": {name: str(meaning) for name, meaning in formula.meanings.items()},
        "assumptions": list(formula.assumptions),
        "terms": [num_terms, den_terms],
    }
    if approximation is not None:
        statements = list(approximation.statements)
        record["approx"] = approximation.text
        record["approx_error"] = float(approximation.error)
        record["approx_tolerance"] = float(approximation.tolerance)
        record["approx_worst_point"] = dict(approximation.worst_point)
        record["approx_points"] = {"corners": approximation.corners, "random": approximation.samples,
                                   "admitted": approximation.admitted, "refinement": approximation.refined}
        record["approx_assumptions"] = statements
        record["assumptions"] = record["assumptions"] + statements
    if sensitivities is not None:
        record["sensitivities"] = {
            row.symbol: (str(row.expr) if row.expr is not None else row.value) for row in sensitivities
        }
        record["sensitivity_values"] = {row.symbol: row.value for row in sensitivities if row.value is not None}
        if point is not None:
            record["sensitivity_point"] = dict(point)
    return record


def dumps(data: Any) -> str:
    """Serialise with stable key order and two-space indentation."""
    return json.dumps(data, indent=2, sort_keys=False, default=str)
