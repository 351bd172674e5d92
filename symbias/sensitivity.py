"""Normalised sensitivities ``S(F, x) = (x/F) dF/dx`` of a formula.

Works on a :class:`~symbias.formula.Formula` in its ring: with ``F = N/D``,
``S = x (N'/N - D'/D)``.  The symbolic form (a new formula, common factors
cancelled) is built for small results; the numeric value at a point is always
available and cheap, since only ``N'``, ``N``, ``D'`` and ``D`` are evaluated.
A parameter that enters through several devices (all ``ro`` of a group) has
the sum of the individual sensitivities: scaling every member by ``t`` and
differentiating at ``t = 1`` gives exactly that sum.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
>>> sensitivity(f, "RA").expr
RB/(RA + RB)
>>> float(sensitivity_value(f, "RA", {"RA": 1.0, "RB": 3.0}))
0.75
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Iterable, Mapping

import numpy as np

from .errors import AnalysisError
from .formula import Formula, cancel_common_factor
from .linear.numeric import normalise_values
from .symbols import LAPLACE, PARAMETERS, symbols_of

if TYPE_CHECKING:
    import sympy

__all__ = [
    "Sensitivity",
    "sensitivity",
    "sensitivity_value",
    "sensitivities",
    "group_sensitivity",
    "parameter_symbols",
    "SYMBOLIC_TERMS",
    "SYMBOLIC_RESULT_TERMS",
    "FACTOR_TERMS",
]

#: Largest formula (numerator plus denominator terms) given a symbolic sensitivity.
SYMBOLIC_TERMS = 200
#: Largest sensitivity (numerator plus denominator terms, after cancellation) given a symbolic form.
SYMBOLIC_RESULT_TERMS = 60
#: Largest symbolic sensitivity that sympy cancels and factors.
FACTOR_TERMS = 24


def _check(formula: Formula, name: str) -> None:
    if name not in {s.name for s in formula.symbols}:
        raise AnalysisError(f"{formula.label} does not depend on {name}")
    if formula.ring.is_zero(formula.numerator):
        raise AnalysisError(f"{formula.label} is zero; its normalised sensitivity is undefined")


def sensitivity(formula: Formula, name: str) -> Formula:
    """Exact normalised sensitivity ``S(F, x)`` as a formula, common factors cancelled.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 ro\\n"), "a")
    >>> sensitivity(f, "ro").expr
    1
    """
    _check(formula, name)
    ring = formula.ring
    num, den = formula.numerator, formula.denominator
    top = formula.polynomial_derivative(num, name) * den - num * formula.polynomial_derivative(den, name)
    bottom = num * den
    direct, inverse, _ = formula.symbol_generators(name)
    if direct is not None:
        top = top * ring.gens[direct]
    elif inverse is not None:
        bottom = bottom * ring.gens[inverse]
    top, bottom = cancel_common_factor(ring, top, bottom)
    return formula.with_polynomials(top, bottom, quantity="sensitivity", label=f"S({formula.label}, {name})",
                                    unit="1", problem=None)


def sensitivity_value(formula: Formula, name: str, values: Mapping[Any, Any]) -> np.ndarray:
    """Numeric ``S(F, x)`` at a point (numbers or arrays), from ``x (N'/N - D'/D)``."""
    _check(formula, name)
    ring = formula.ring
    total = 0.0
    for poly, sign in ((formula.numerator, 1.0), (formula.denominator, -1.0)):
        slope = formula.polynomial_derivative(poly, name)
        if ring.is_zero(slope):
            continue
        ratio = formula.with_polynomials(slope, poly, problem=None)
        total = total + sign * ratio.evaluate(values, route="polynomial")
    x = normalise_values(values).get(name)
    if x is None:
        raise AnalysisError(f"no value given for {name}")
    return np.asarray(np.asarray(x, dtype=float) * total)


@dataclass(frozen=True, eq=False)
class Sensitivity:
    """One row of a sensitivity table.

    Parameters
    ----------
    symbol : str
        The parameter, or a label like ``ro (all)`` for a group.
    members : tuple of str
        The symbols summed (one for a single symbol).
    value : float or None
        At the given point.
    expr : sympy.Expr or None
        Simplified symbolic form, for small formulas.
    """

    symbol: str
    members: tuple[str, ...]
    value: float | None
    expr: sympy.Expr | None


def _symbolic(formula: Formula, names: Iterable[str]) -> sympy.Expr | None:
    """The readable form: the ring's cancelled sensitivity, factored by sympy only when it is small.

    sympy's rational cancellation and factoring take minutes on a 60-term
    sensitivity of a four-transistor cascode (found by the adversarial run),
    so they are kept to forms of at most :data:`FACTOR_TERMS` terms; larger
    ones keep the ring's form, and beyond :data:`SYMBOLIC_RESULT_TERMS` terms
    there is no symbolic form (the value is still given).
    """
    if sum(formula.nterms) > SYMBOLIC_TERMS:
        return None
    parts = [sensitivity(formula, name) for name in names]
    sizes = [sum(part.nterms) for part in parts]
    if max(sizes, default=0) > SYMBOLIC_RESULT_TERMS:
        return None
    import sympy

    total = sympy.Add(*(part.expr for part in parts))
    if sum(sizes) > FACTOR_TERMS:
        return total if len(parts) == 1 else None
    return sympy.factor(sympy.cancel(total))


def sensitivities(
    formula: Formula,
    at: Mapping[str, float] | None = None,
    *,
    symbolic: bool = True,
    groups: Mapping[str, Iterable[str]] | None = None,
) -> tuple[Sensitivity, ...]:
    """Sensitivity to every symbol (and to each group), ranked by magnitude at ``at``.

    Parameters
    ----------
    formula : Formula
    at : mapping, optional
        A point; without it rows have no value and keep the symbol order.
    symbolic : bool
        Add the simplified expression (formulas of up to :data:`SYMBOLIC_TERMS` terms).
    groups : mapping of label to symbol names, optional
        Extra rows for parameters entering through several symbols.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
    >>> [(s.symbol, round(s.value, 3)) for s in sensitivities(f, {"RA": 1.0, "RB": 3.0})]
    [('RA', 0.75), ('RB', 0.25)]
    """
    rows = [(s.name, (s.name,)) for s in formula.symbols if s.name != LAPLACE]
    rows += [(label, tuple(members)) for label, members in (groups or {}).items()]
    table = []
    for label, members in rows:
        value = None
        if at is not None:
            value = _at_point(formula, members, at)
        expr = _symbolic(formula, members) if symbolic else None
        table.append(Sensitivity(label, tuple(members), value, expr))
    if at is not None:
        table.sort(key=lambda row: -abs(row.value))
    return tuple(table)


def parameter_symbols(formula: Formula, parameter: str) -> tuple[str, ...]:
    """Symbols of one device parameter: ``ro`` and every ``ro_<device>``.

    Raises
    ------
    AnalysisError
        If ``parameter`` is not a device parameter (see :data:`symbias.symbols.PARAMETERS`).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> c = parse_netlist("t\\nI1 0 a 1\\nR1 a 0 ro_Q1\\nR2 a 0 ro_Q2\\nR3 a 0 RB\\n")
    >>> parameter_symbols(output_resistance(c, "a"), "ro")
    ('ro_Q1', 'ro_Q2')
    """
    if parameter not in PARAMETERS:
        raise AnalysisError(f"{parameter!r} is not a device parameter; expected one of {', '.join(PARAMETERS)}")
    return symbols_of((s.name for s in formula.symbols), parameter)


def group_sensitivity(formula: Formula, names: Iterable[str], at: Mapping[str, float]) -> float:
    """Sensitivity to a parameter entering through several symbols: the sum of theirs."""
    names = tuple(names)
    if not names:
        raise AnalysisError(f"{formula.label}: no symbols given for a group sensitivity")
    return _at_point(formula, names, at)


def _at_point(formula: Formula, names: Iterable[str], at: Mapping[str, float]) -> float:
    """The summed sensitivity at one point (a table row is a number; arrays go to sensitivity_value)."""
    total = sum(sensitivity_value(formula, n, at) for n in names)
    if np.ndim(total):
        raise AnalysisError(f"a sensitivity table is taken at one point, not at arrays of values; "
                            f"use sensitivity_value for {formula.label} over arrays")
    return float(total)
