"""Numeric evaluation of an expression tree over floats, complex numbers or numpy arrays.

Part of :mod:`symbias.expressions`: a free function of the tree that reads
each node's ``op`` and children (it imports no node class).  numpy is loaded
only when an argument is an array or a real power of a negative array needs
it.

Examples
--------
>>> from symbias.expressions import parse_expression
>>> evaluate(parse_expression("2*RE + 1/gm"), {"RE": 1e3, "gm": 0.04})
2025.0
"""

from __future__ import annotations

import math
from typing import Any, Mapping

from ..errors import NetlistError

__all__ = ["evaluate"]


def _is_scalar(value) -> bool:
    return isinstance(value, (int, float, complex))


def evaluate(node, values: Mapping[str, Any]):
    """Numeric value of ``node`` for symbol values given by name.

    Raises
    ------
    NetlistError
        If a symbol has no value.
    """
    op = node.op
    if op == "number":
        return float(node.value)
    if op == "symbol":
        try:
            return values[node.name]
        except KeyError:
            raise NetlistError(f"no value given for symbol {node.name!r}") from None
    if op in ("add", "mul"):
        total = evaluate(node.args[0], values)
        for arg in node.args[1:]:
            total = total + evaluate(arg, values) if op == "add" else total * evaluate(arg, values)
        return total
    if op == "pow":
        return _power(node, values)
    return _call(node.function, evaluate(node.argument, values))


def _power(node, values: Mapping[str, Any]):
    base = evaluate(node.base, values)
    exponent = node.exponent
    if exponent.op == "number" and exponent.value.denominator == 1:
        n = int(exponent.value)
        return base**n if n >= 0 else 1.0 / base ** (-n)
    power = evaluate(exponent, values)
    if _is_scalar(base) and _is_scalar(power):
        if isinstance(base, complex) or isinstance(power, complex) or base >= 0:
            return base**power
        return math.nan  # a real power of a negative number: not a real value
    import numpy as np

    with np.errstate(invalid="ignore"):
        return np.power(base, power)


def _call(function: str, value):
    if _is_scalar(value) and not isinstance(value, complex):
        if function == "exp":
            return math.exp(value) if value < 709.0 else math.inf
        if function == "log":
            return math.log(value) if value > 0 else (-math.inf if value == 0 else math.nan)
        return abs(value)
    import numpy as np

    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        return {"exp": np.exp, "log": np.log, "abs": np.abs}[function](value)
