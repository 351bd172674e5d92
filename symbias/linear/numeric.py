"""Numeric evaluation of symbolic values and batched numeric solves.

The numeric twin of :mod:`symbias.linear.mna`: the same :class:`~symbias.linear.mna.LinearProblem`
solved with numbers by a batched ``numpy.linalg.solve`` over arrays of
parameter values.  :class:`~symbias.formula.Formula` uses it for results too
large to evaluate term by term, and the tests use the agreement of both routes.

Examples
--------
>>> from symbias.expressions import Symbol
>>> evaluate_expression(1 / Symbol("ro") + 2, {"ro": 4.0})
2.25
"""

from __future__ import annotations


from typing import Any, Mapping

import numpy as np

from ..errors import AnalysisError, NetlistError
from ..expressions import Expr

__all__ = ["evaluate_expression", "solve_problem", "normalise_values"]

def normalise_values(values: Mapping[Any, Any]) -> dict[str, Any]:
    """Key a value mapping by symbol name; lists and tuples become numpy arrays.

    Keys may be names or symbols (anything with a ``name``).

    Examples
    --------
    >>> from symbias.expressions import Symbol
    >>> normalise_values({Symbol("gm"): 2})
    {'gm': 2}
    """
    out = {}
    for key, value in values.items():
        name = getattr(key, "name", None) or str(key)
        out[name] = np.asarray(value) if isinstance(value, (list, tuple)) else value
    return out


def evaluate_expression(expr: Expr, values: Mapping[str, Any]) -> Any:
    """Evaluate a small expression over numbers or numpy arrays.

    Used for element values and sub-expressions, never for big results.

    Raises
    ------
    AnalysisError
        If a symbol has no value.

    Examples
    --------
    >>> from symbias.expressions import Symbol
    >>> evaluate_expression(1 / Symbol("ro") + 2, {"ro": 4.0})
    2.25
    """
    try:
        return expr.evaluate(values)
    except NetlistError as err:
        raise AnalysisError(err.reason) from None


def solve_problem(problem, values: Mapping[str, Any]) -> np.ndarray:
    """Evaluate ``c^T A^-1 b`` of a linear problem by a batched numeric solve.

    Parameters
    ----------
    problem : LinearProblem
    values : mapping of symbol name to number or array
        Arrays broadcast together; the result has their broadcast shape.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.linear.network import expand
    >>> from symbias.linear.mna import LinearProblem
    >>> net = expand(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"))
    >>> p = LinearProblem(net, rhs=(("v:a", 1),), observe=(("v:a", 1),))
    >>> float(solve_problem(p, {"RA": 2.0, "RB": 2.0}))
    1.0
    """
    from .mna import stamp, unknowns

    values = normalise_values(values)
    labels = unknowns(problem.network)
    index = {label: i for i, label in enumerate(labels)}
    raw = stamp(problem.network)
    cache: dict[Expr, Any] = {}
    for contributions in raw.values():
        for value, _ in contributions:
            if value not in cache:
                cache[value] = evaluate_expression(value, values)
    shape = np.broadcast_shapes(*(np.shape(v) for v in cache.values())) if cache else ()
    dtype = np.result_type(*[np.asarray(v).dtype for v in cache.values()], np.float64)
    size = len(labels)
    matrix = np.zeros(shape + (size, size), dtype=dtype)
    for (r, c), contributions in raw.items():
        for value, sign in contributions:
            matrix[..., r, c] += sign * np.asarray(cache[value])
    rhs = np.zeros(shape + (size, 1), dtype=dtype)
    for label, coefficient in problem.rhs:
        rhs[..., index[label], 0] += coefficient
    try:
        x = np.linalg.solve(matrix, rhs)
        # one step of iterative refinement: high-gain cascodes are ill-conditioned
        # enough that a plain float64 solve loses several digits
        x = x + np.linalg.solve(matrix, rhs - matrix @ x)
        x = x[..., 0]
    except np.linalg.LinAlgError:
        raise AnalysisError("the network is singular at the given values") from None
    result = 0
    for label, coefficient in problem.observe:
        result = result + coefficient * x[..., index[label]]
    return np.asarray(result)


