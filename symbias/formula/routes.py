"""The two evaluation routes of a formula: its polynomials, or a numeric solve of its network.

Part of :mod:`symbias.formula` (the evaluation routes), used by
:meth:`~symbias.formula.Formula.evaluate`:

* ``polynomial``: the exact numerator and denominator, evaluated by the
  straight-line programs of :mod:`~symbias.formula.horner`;
* ``solve``: the formula's linear problem compiled once
  (:func:`~symbias.linear.numeric.compile_problem`) and solved in batches.

``auto`` takes the polynomial route up to :data:`POLYNOMIAL_ROUTE_TERMS` terms,
where the solve becomes cheaper.

Examples
--------
>>> choose_route("auto", 5_000, has_network=True), choose_route("auto", 12, has_network=True)
('solve', 'polynomial')
"""

from __future__ import annotations

from typing import Any, Mapping, Sequence

import numpy as np

from ..errors import AnalysisError, UsageError
from ..expressions import Symbol
from ..linear.mna import RingVariable
from ..linear.numeric import NumericSystem, evaluate_expression, normalise_values, solve_system
from .horner import Program, evaluate_ratio

__all__ = ["POLYNOMIAL_ROUTE_TERMS", "ROUTES", "choose_route", "generator_values", "polynomial_route",
           "solve_route"]

#: Above this many terms ``evaluate(route="auto")`` uses the batched numeric solve.
POLYNOMIAL_ROUTE_TERMS = 3_000
ROUTES = ("auto", "polynomial", "solve")


def choose_route(route: str, terms: int, has_network: bool) -> str:
    """The route ``auto`` stands for, or ``route`` itself after checking it.

    Raises
    ------
    UsageError
        For an unknown route name.
    """
    if route not in ROUTES:
        raise UsageError(f"unknown route {route!r} (choose from {', '.join(ROUTES)})")
    if route != "auto":
        return route
    return "solve" if terms > POLYNOMIAL_ROUTE_TERMS and has_network else "polynomial"


def _check_values(symbols: Sequence[Symbol], values: Mapping[str, Any]) -> None:
    missing = [s.name for s in symbols if s.name not in values]
    if missing:
        raise AnalysisError(f"no value given for {', '.join(missing)}")


def generator_values(variables: Sequence[RingVariable], symbols: Sequence[Symbol],
                     values: Mapping[Any, Any]) -> list[Any]:
    """Values of the ring generators for user symbol values (numbers or arrays)."""
    values = normalise_values(values)
    _check_values(symbols, values)
    out = []
    for variable in variables:
        if variable.power == 1:
            out.append(values.get(variable.symbol, 0.0))
        elif variable.power == -1:
            value = values.get(variable.symbol)
            out.append(0.0 if value is None else 1.0 / np.asarray(value, dtype=np.result_type(value, float)))
        else:
            out.append(evaluate_expression(variable.meaning, values) if variable.meaning.names <= set(values)
                       else 0.0)
    return out


def polynomial_route(programs: tuple[Program, Program], variables: Sequence[RingVariable],
                     symbols: Sequence[Symbol], used: tuple[int, ...], values: Mapping[Any, Any]) -> np.ndarray:
    """The exact ratio evaluated from its programs; a constant result still takes the inputs' shape."""
    generators = generator_values(variables, symbols, values)
    result = evaluate_ratio(programs, generators, used)
    shape = np.broadcast_shapes(*(np.shape(v) for v in normalise_values(values).values()))
    return np.broadcast_to(result, shape).copy() if np.shape(result) != shape else result


def solve_route(system: NumericSystem, network_symbols: Sequence[Symbol], symbols: Sequence[Symbol],
                values: Mapping[Any, Any]) -> np.ndarray:
    """The numeric solve of the network, with 1.0 for network symbols that cancelled out of the result.

    The network may hold symbols the exact result does not depend on (the
    simple mirror's Rout is ``ro_Q2`` alone); any non-zero value gives the
    same result for those.
    """
    values = normalise_values(values)
    _check_values(symbols, values)
    filled = dict(values)
    for symbol in network_symbols:
        filled.setdefault(symbol.name, 1.0)
    return np.asarray(solve_system(system, filled))
