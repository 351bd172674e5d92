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

from dataclasses import dataclass
from typing import Any, Mapping

import numpy as np

from ..errors import AnalysisError, NetlistError
from ..expressions import Expr

__all__ = ["evaluate_expression", "solve_problem", "normalise_values", "NumericSystem", "compile_problem",
           "solve_system"]


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


#: Points assembled and solved per block: the matrices of a block stay in the processor cache.
BLOCK = 2048


@dataclass(frozen=True, eq=False)
class NumericSystem:
    """The MNA system of a :class:`~symbias.linear.mna.LinearProblem`, compiled once for numbers.

    Built by :func:`compile_problem`; :func:`solve_system` assembles and
    solves it for arrays of symbol values.  The stamp pattern is fixed here,
    so a call does no stamping and no expression work: every distinct element
    value is a sum of monomials over ``bases`` (symbols, or sub-expressions
    that are not polynomials), and each matrix entry is a signed sum of
    values (plain element-wise numpy: a BLAS product here ran 50x slower
    with threads competing for two cores).

    Parameters
    ----------
    size : int
        Number of MNA unknowns.
    bases : tuple of Expr
        Symbols and sub-expressions the element values are made of.
    monomials : tuple
        Per distinct value, its ``(coefficient, ((base index, exponent), ...))`` terms.
    positions : numpy.ndarray
        Flat index ``row * size + column`` of every non-zero matrix entry.
    contributions : tuple
        Per entry, its ``(value index, signed count)`` pairs.
    rhs, observe : numpy.ndarray
        The vectors ``b`` and ``c`` of ``c^T A^-1 b``.
    """

    size: int
    bases: tuple[Expr, ...]
    monomials: tuple[tuple[tuple[float, tuple[tuple[int, int], ...]], ...], ...]
    positions: np.ndarray
    contributions: tuple[tuple[tuple[int, float], ...], ...]
    rhs: np.ndarray
    observe: np.ndarray


def compile_problem(problem) -> NumericSystem:
    """Stamp a linear problem once into a :class:`NumericSystem`.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.linear.network import expand
    >>> from symbias.linear.mna import LinearProblem
    >>> net = expand(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"))
    >>> system = compile_problem(LinearProblem(net, rhs=(("v:a", 1),), observe=(("v:a", 1),)))
    >>> system.size, [str(b) for b in system.bases], system.positions.tolist()
    (1, ['RA', 'RB'], [0])
    """
    from .mna import stamp, unknowns

    labels = unknowns(problem.network)
    index = {label: i for i, label in enumerate(labels)}
    size = len(labels)
    raw = stamp(problem.network)
    value_index: dict[Expr, int] = {}
    positions = sorted(r * size + c for r, c in raw)
    column = {p: k for k, p in enumerate(positions)}
    counts: dict[tuple[int, int], int] = {}
    for (r, c), contributions in raw.items():
        for value, sign in contributions:
            v = value_index.setdefault(value, len(value_index))
            key = (v, column[r * size + c])
            counts[key] = counts.get(key, 0) + sign
    grouped: dict[int, list[tuple[int, float]]] = {}
    for (v, k), count in sorted(counts.items(), key=lambda item: (item[0][1], item[0][0])):
        if count:
            grouped.setdefault(positions[k], []).append((v, float(count)))
    bases: dict[Expr, int] = {}
    monomials = tuple(_value_monomials(value, bases) for value in value_index)
    rhs, observe = np.zeros(size), np.zeros(size)
    for label, coefficient in problem.rhs:
        rhs[index[label]] += coefficient
    for label, coefficient in problem.observe:
        observe[index[label]] += coefficient
    return NumericSystem(size, tuple(bases), monomials, np.array(list(grouped), dtype=np.intp),
                         tuple(tuple(c) for c in grouped.values()), rhs, observe)


def _value_monomials(value: Expr, bases: dict[Expr, int]):
    terms = []
    for monomial, coefficient in value.terms().items():
        factors = tuple((bases.setdefault(base, len(bases)), exponent) for base, exponent in monomial)
        terms.append((float(coefficient), factors))
    return tuple(terms)


def solve_system(system: NumericSystem, values: Mapping[str, Any]) -> np.ndarray:
    """``c^T A^-1 b`` of a compiled system for numbers or arrays of symbol values (batched solve).

    One LU solve per point, no refinement step: on the ill-conditioned
    regulated cascode a refinement in double precision does not reduce the
    error (``tests/formula/test_formula_routes.py``).

    Raises
    ------
    AnalysisError
        If a symbol has no value or the matrix is singular at some point.
    """
    values = normalise_values(values)
    bases = [_base_value(base, values) for base in system.bases]
    shape = np.broadcast_shapes(*(np.shape(b) for b in bases)) if bases else ()
    dtype = np.result_type(np.float64, *[np.asarray(b).dtype for b in bases])
    count = int(np.prod(shape, dtype=np.int64))
    flat = [np.broadcast_to(np.asarray(b, dtype=dtype), shape).reshape(count) for b in bases]
    out = np.empty(count, dtype=dtype)
    width = max(1, min(count, BLOCK))
    # entries are written as contiguous rows of one buffer reused by every block (the pattern is
    # fixed, so the zeros stay); LAPACK reads the matrices through a transposed view of it
    entries = np.zeros((system.size * system.size, width), dtype=dtype)
    rhs = np.broadcast_to(system.rhs.astype(dtype)[:, None], (width, system.size, 1))
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for start in range(0, count, BLOCK):
            stop = min(start + BLOCK, count)
            block = [b[start:stop] for b in flat]
            out[start:stop] = _solve_block(system, block, entries[:, : stop - start], rhs[: stop - start])
    return out.reshape(shape)


def _base_value(base: Expr, values: Mapping[str, Any]) -> Any:
    name = getattr(base, "name", None)
    if name is not None and not base.children():
        if name not in values:
            raise AnalysisError(f"no value given for {name}")
        return values[name]
    return evaluate_expression(base, values)


def _solve_block(system: NumericSystem, bases: list[np.ndarray], entries: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    size, count = system.size, entries.shape[1]
    if size == 0:
        return np.zeros(count, dtype=entries.dtype)
    element_values = [_monomial_sum(terms, bases, count, entries.dtype) for terms in system.monomials]
    for position, contributions in zip(system.positions.tolist(), system.contributions):
        row = entries[position]
        (first, weight), rest = contributions[0], contributions[1:]
        np.multiply(element_values[first], weight, out=row)
        for value, weight in rest:
            row += element_values[value] * weight if weight != 1.0 else element_values[value]
    try:
        x = np.linalg.solve(entries.T.reshape(count, size, size), rhs)
    except np.linalg.LinAlgError:
        raise AnalysisError("the network is singular at the given values") from None
    return x[..., 0] @ system.observe


def _monomial_sum(terms, bases: list[np.ndarray], count: int, dtype) -> np.ndarray:
    total = None
    for coefficient, factors in terms:
        term = None
        for base, exponent in factors:
            factor = bases[base] if exponent == 1 else 1 / bases[base] if exponent == -1 else bases[base] ** exponent
            term = factor if term is None else term * factor
        if term is None:
            term = np.full(count, coefficient, dtype=dtype)
        elif coefficient != 1.0:
            term = coefficient * term
        total = term if total is None else total + term
    return np.zeros(count, dtype=dtype) if total is None else total


def solve_problem(problem, values: Mapping[str, Any]) -> np.ndarray:
    """Evaluate ``c^T A^-1 b`` of a linear problem by a batched numeric solve.

    Compiles the problem (:func:`compile_problem`) and solves it
    (:func:`solve_system`); compile once and keep the system when solving
    the same problem repeatedly.

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
    return np.asarray(solve_system(compile_problem(problem), values))
