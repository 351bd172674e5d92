"""Error of a current transfer: epsilon = 1 - gain/ideal, exactly and to leading order.

Works on a :class:`~symbias.formula.Formula` (a current gain, usually) and
its approximation (:mod:`symbias.approx`).  The ideal transfer is the gain's
limit for ideal devices (beta and ro to infinity, gmb to zero) unless given.
For a mirror the systematic error is split into its causes where the model
allows: finite beta (base currents), output conductance (the small-signal
Early effect: ``ro`` loading the mirror nodes) and the MOS body effect.  Each
cause's error is the exact epsilon with the other non-idealities removed, and
has its own leading-order term.

The split covers what a small-signal formula holds.  The DC part of the Early
effect, a mismatch ``dVCE/VA`` from unequal collector voltages, depends on the
operating point and is not in a small-signal gain: the DC ratio ``Iout/Iin``
and its error by cause are :mod:`symbias.pipeline.mirror_ratio`'s.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import current_gain
>>> from symbias.devices.options import SmallSignalOptions
>>> deck = '''simple NPN mirror
... Iref 0 in 1
... Q1 in in 0 QN
... Q2 out in 0 QN
... Vout out 0 0
... .model QN npn
... '''
>>> gain = current_gain(parse_netlist(deck), "Vout", "Iref", SmallSignalOptions(match=True, beta=True))
>>> err = transfer_error(gain)
>>> err.ideal.expr, err.leading.expr
(1, 2/beta)
>>> [(c.name, c.leading.expr) for c in err.causes]
[('finite beta', 2/beta), ('output conductance (Early effect)', 1/(gm*ro))]
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from numbers import Rational, Real
from typing import Iterable

from .approx import DEFAULT_SAMPLES, DEFAULT_TOLERANCE, Approximation, Assumption, approximate
from .errors import AnalysisError
from .formula import Formula
from .symbols import symbols_of

__all__ = ["ErrorCause", "TransferError", "limit", "ideal_transfer", "transfer_error", "CAUSES"]

#: Cause name -> (device parameters that carry it, the ideal limit of their symbols).
CAUSES: dict[str, tuple[tuple[str, ...], str]] = {
    "finite beta": (("beta", "rpi"), "infinity"),
    "output conductance (Early effect)": (("ro",), "infinity"),
    "body effect": (("gmb",), "zero"),
}


def _members(formula: Formula, parameters: tuple[str, ...]) -> tuple[str, ...]:
    """The formula's symbols of these device parameters, any owner (``ro``, ``ro_Q1`` ...)."""
    return symbols_of((s.name for s in formula.symbols), *parameters)


def limit(formula: Formula, name: str, toward: str = "infinity") -> Formula:
    """The limit of a formula as one symbol goes to infinity or zero.

    Keeps the terms of highest (or lowest) power of the symbol in numerator
    and denominator, all in the ring.

    Raises
    ------
    AnalysisError
        If the limit is infinite, the symbol sits inside a sub-expression, or
        ``toward`` is neither ``"infinity"`` nor ``"zero"``.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
    >>> limit(f, "RA").expr, limit(f, "RA", "zero").expr
    (RB, 0)
    """
    if toward not in ("infinity", "zero"):
        raise AnalysisError(f"a limit is taken toward 'infinity' or 'zero', not {toward!r}")
    ring = formula.ring
    up, down, inside = formula.symbol_generators(name)
    if inside:
        raise AnalysisError(f"cannot take the limit of {name} inside {inside[0]}")
    if up is None and down is None:
        return formula
    if ring.is_zero(formula.numerator):
        return formula
    sides = []
    for poly in (formula.numerator, formula.denominator):
        terms = ring.terms(poly)
        net = [(e[up] if up is not None else 0) - (e[down] if down is not None else 0) for e, _ in terms]
        pick = max(net) if toward == "infinity" else min(net)
        kept = []
        for (exps, coeff), n in zip(terms, net):
            if n == pick:
                exps = list(exps)
                for i in (up, down):
                    if i is not None:
                        exps[i] = 0
                kept.append((tuple(exps), coeff))
        sides.append((pick, ring.from_terms(kept)))
    (pn, num), (pd, den) = sides
    grows = pn > pd if toward == "infinity" else pn < pd
    if grows:
        raise AnalysisError(f"{formula.label} grows without bound as {name} goes to {toward}")
    if pn != pd:
        return formula.with_polynomials(ring.zero, ring.one)
    return formula.with_polynomials(num, den)


def _idealise(formula: Formula, causes: Iterable[str]) -> Formula:
    for cause in causes:
        parameters, toward = CAUSES[cause]
        for name in _members(formula, parameters):
            formula = limit(formula, name, toward)
    return formula


def ideal_transfer(formula: Formula) -> Formula:
    """The transfer with ideal devices (beta, ro to infinity; gmb to zero).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import current_gain
    >>> c = parse_netlist("t\\nI1 0 a 1\\nQ1 a a 0 QN\\nQ2 b a 0 QN 3\\nV1 b 0 0\\n.model QN npn\\n")
    >>> ideal_transfer(current_gain(c, "V1", "I1")).expr
    gm_Q2/gm_Q1
    """
    return _idealise(formula, CAUSES)


@dataclass(frozen=True, eq=False)
class ErrorCause:
    """One cause of a transfer error.

    Parameters
    ----------
    name : str
        A key of :data:`CAUSES`.
    symbols : tuple of str
        The symbols that carry it.
    exact : Formula
        The error with every other non-ideality removed.
    leading : Approximation
        Its leading-order form.
    """

    name: str
    symbols: tuple[str, ...]
    exact: Formula
    leading: Approximation


@dataclass(frozen=True, eq=False)
class TransferError:
    """Systematic error ``epsilon = 1 - gain/ideal`` of a current transfer.

    Parameters
    ----------
    gain : Formula
    ideal : Formula
    exact : Formula
        Epsilon, exact.
    leading : Approximation
        Epsilon to leading order, with its measured worst error.
    causes : tuple of ErrorCause
        The split: one entry per cause whose symbols occur in the gain and whose
        error alone is not zero.
    """

    gain: Formula
    ideal: Formula
    exact: Formula
    leading: Approximation
    causes: tuple[ErrorCause, ...]


def _as_formula(template: Formula, value) -> Formula:
    ring = template.ring
    if isinstance(value, Formula):
        if value.ring != ring:
            raise AnalysisError("the ideal transfer must come from the same derivation as the gain")
        return value
    if isinstance(value, bool) or not isinstance(value, Real):
        raise AnalysisError(f"the ideal transfer must be a number or a Formula, got {value!r}")
    if isinstance(value, Rational):
        number = Fraction(value)
    elif math.isfinite(value):
        number = Fraction(float(value)).limit_denominator(10**12)
    else:
        raise AnalysisError(f"the ideal transfer must be finite, got {value!r}")
    if number == 0:
        raise AnalysisError("the ideal transfer must not be zero")
    return template.with_polynomials(ring.constant(number), ring.one)


def _epsilon(gain: Formula, ideal: Formula, label: str) -> Formula:
    num = ideal.numerator * gain.denominator - gain.numerator * ideal.denominator
    den = ideal.numerator * gain.denominator
    return gain.with_polynomials(num, den, quantity="transfer_error", label=label, unit="1", problem=None)


def transfer_error(
    formula: Formula,
    ideal: Formula | float | None = None,
    assumptions: Iterable[Assumption | str] = (),
    *,
    tolerance: float = DEFAULT_TOLERANCE,
    defaults: bool = True,
    samples: int = DEFAULT_SAMPLES,
    seed: int = 0,
) -> TransferError:
    """Exact and leading-order error of a current transfer, split by cause.

    Parameters
    ----------
    formula : Formula
        The transfer (a current gain).
    ideal : number or Formula, optional
        The ideal transfer; default :func:`ideal_transfer` of ``formula``.
    assumptions, tolerance, defaults, samples, seed
        As for :func:`~symbias.approx.approximate`.

    Raises
    ------
    AnalysisError
        If the ideal transfer is zero or infinite.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import current_gain
    >>> from symbias.devices.options import SmallSignalOptions
    >>> mirror = parse_netlist("t\\nIref 0 in 1\\nQ1 in in 0 QN\\nQ2 out in 0 QN\\nVout out 0 0\\n.model QN npn\\n")
    >>> error = transfer_error(current_gain(mirror, "Vout", "Iref", SmallSignalOptions(match=True, beta=True)))
    >>> error.leading.expr, [c.name for c in error.causes]
    (2/beta, ['finite beta', 'output conductance (Early effect)'])
    """
    ideal_formula = ideal_transfer(formula) if ideal is None else _as_formula(formula, ideal)
    if formula.ring.is_zero(ideal_formula.numerator):
        raise AnalysisError(f"the ideal value of {formula.label} is zero; give the ideal transfer explicitly")
    options = dict(tolerance=tolerance, defaults=defaults, samples=samples, seed=seed)
    assumptions = tuple(assumptions)
    exact = _epsilon(formula, ideal_formula, f"small-signal error of {formula.label}")
    leading = approximate(exact, assumptions, **options)
    causes = []
    for cause, (parameters, _) in CAUSES.items():
        symbols = _members(formula, parameters)
        if not symbols:
            continue
        others = [c for c in CAUSES if c != cause]
        alone = _epsilon(_idealise(formula, others), ideal_formula,
                         f"small-signal error of {formula.label} from {cause}")
        if alone.ring.is_zero(alone.numerator):
            continue
        causes.append(ErrorCause(cause, symbols, alone, approximate(alone, assumptions, **options)))
    return TransferError(formula, ideal_formula, exact, leading, tuple(causes))
