"""The result: :func:`approximate` and the :class:`Approximation` it returns.

Top level of :mod:`symbias.approx`: it takes a
:class:`~symbias.formula.Formula` and the statements, builds the box
(:mod:`~symbias.approx.magnitudes`), evaluates the terms there
(:mod:`~symbias.approx.terms`), runs the search (:mod:`~symbias.approx.search`)
and keeps what a design note needs: the short form, its worst relative error,
where it occurs, and how many points it rests on.  sympy is loaded only when
the short form is displayed (:attr:`Approximation.expr`).
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields
from numbers import Integral, Real
from functools import cached_property
from types import MappingProxyType
from typing import TYPE_CHECKING, Any, Iterable, Mapping

import numpy as np

from ..errors import AssumptionError
from ..formula import Formula
from ..symbols import LAPLACE
from ..limits import MAX_DERIVED_TERMS, check_terms
from .magnitudes import MagnitudeModel, magnitude_model
from .search import TermSearch
from .statements import Assumption
from .terms import TermValues

if TYPE_CHECKING:
    import sympy

__all__ = ["Approximation", "approximate", "DEFAULT_TOLERANCE", "DEFAULT_SAMPLES"]

DEFAULT_TOLERANCE = 0.10
DEFAULT_SAMPLES = 2000

_TIDY_TERMS = 40  # kept terms up to which the form is cancelled and factored for display


@dataclass(frozen=True, eq=False)
class Approximation:
    """A dominant-term form of an exact formula and its measured worst error.

    Parameters
    ----------
    exact : Formula
        The exact result.
    formula : Formula
        The kept terms ``N'/D'`` over the same ring (for evaluation).
    error : float
        Worst relative error ``|approx/exact - 1|`` found.
    worst_point : mapping of str to float
        Symbol values where it occurs.
    assumptions : tuple of Assumption
        Every statement that shaped the ranges (factors, then checks).
    tolerance : float
    corners, samples, refined : int
        Box corners evaluated, random points drawn and compass-search points.
    admitted : int
        Corners and samples that passed every check.
    seed : int
    kept : tuple of (int, int)
        ``((kept numerator terms, all), (kept denominator terms, all))``.
    model : MagnitudeModel, optional
        The box the error was measured over.

    Attributes
    ----------
    expr : sympy.Expr
        The approximation, common factors cancelled (for display and export);
        built on first use, since a caller that only needs the error or the
        kept counts should not pay for a long sympy expression.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
    >>> a = approximate(f, ["RA >> RB"])
    >>> a.text, a.kept, a.error < 0.04
    ('RB', ((1, 1), (1, 2)), True)
    """

    exact: Formula
    formula: Formula
    error: float
    worst_point: Mapping[str, float]
    assumptions: tuple[Assumption, ...]
    tolerance: float
    corners: int
    samples: int
    refined: int
    admitted: int
    seed: int
    kept: tuple[tuple[int, int], tuple[int, int]]
    model: MagnitudeModel | None = field(default=None, repr=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "worst_point", MappingProxyType(dict(self.worst_point)))

    def __reduce__(self):
        # the read-only view does not pickle, a plain dict does; the display form is rebuilt on use
        values = [getattr(self, f.name) for f in fields(self)]
        values[[f.name for f in fields(self)].index("worst_point")] = dict(self.worst_point)
        return (type(self), tuple(values))

    @cached_property
    def expr(self) -> sympy.Expr:
        """The approximation, common factors cancelled (for display and export)."""
        if self.formula is self.exact:
            return self.exact.expr
        # factoring is for display of a short form; it costs minutes on a long one
        if sum(k for k, _ in self.kept) <= _TIDY_TERMS:
            return _tidy(self.formula.expr)
        return self.formula.expr

    @property
    def text(self) -> str:
        """The approximation as text that ``sympy.parse_expr`` reads back."""
        import sympy

        return sympy.sstr(self.expr)

    @property
    def statements(self) -> tuple[str, ...]:
        """The assumptions, each with the range it stands for."""
        return tuple(a.describe() for a in self.assumptions)

    def evaluate(self, values: Mapping[Any, Any]) -> np.ndarray:
        """Evaluate the approximation (numbers or numpy arrays)."""
        return self.formula.evaluate(values, route="polynomial")

    def relative_error(self, values: Mapping[Any, Any]) -> np.ndarray:
        """``|approx/exact - 1|`` at given values."""
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.abs(self.evaluate(values) / self.exact.evaluate(values) - 1.0)

    @property
    def worst_ratios(self) -> dict[str, float]:
        """The assumed monomials (``gm*ro``, ``beta`` ...) at the worst point."""
        out: dict[str, float] = {}
        if not self.worst_point:
            return out
        for a in self.assumptions:
            if a.origin in ("user", "default", "free") and a.low != a.high:
                out.setdefault(a.monomial, float(np.prod([self.worst_point[n] ** e for n, e in a.powers])))
        return out

    def where(self) -> str:
        """The worst point as text, in the assumed monomials (``gm*ro=900, beta=30``)."""
        return ", ".join(f"{k}={v:.4g}" for k, v in (self.worst_ratios or self.worst_point).items()) or "every point"

    def summary(self) -> str:
        """One line: the form, the worst error and where it occurs.

        Examples
        --------
        >>> from symbias.netlist import parse_netlist
        >>> from symbias.analyses import output_resistance
        >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
        >>> a = approximate(f, ["RA >> RB"])
        >>> a.summary().split(";")[0]
        'Rout at a ~ RB'
        """
        return (f"{self.exact.label} ~ {self.text}; worst relative error {100 * self.error:.3g}% at {self.where()} "
                f"({self.corners} corners + {self.samples} random points, {self.admitted} admitted, "
                f"{self.refined} refinement points)")

    def __str__(self) -> str:
        return self.summary()


def approximate(
    formula: Formula,
    assumptions: Iterable[Assumption | str] = (),
    *,
    tolerance: float = DEFAULT_TOLERANCE,
    defaults: bool = True,
    samples: int = DEFAULT_SAMPLES,
    seed: int = 0,
    band: tuple[float, float] | None = None,
) -> Approximation:
    """The simplest dominant-term form within ``tolerance`` over the assumed ranges.

    Simplest means fewest numerator plus denominator terms, then fewest
    symbols, then smallest error.  Forms of up to 8 terms (from the 10 most
    important terms of each side) are tried exhaustively; beyond that terms
    are added greedily, up to the exact form itself (error 0).

    Parameters
    ----------
    formula : Formula
    assumptions : iterable of str or Assumption
        Extra statements (see :mod:`symbias.approx.statements`), or the
        ranges of :func:`~symbias.approx.statements.nominal_ranges` around
        an operating point; they override the defaults where they speak.
    tolerance : float
        Largest accepted worst relative error (0.1 = 10 %).
    defaults : bool
        Add the hand-analysis defaults of :func:`default_assumptions`.
    samples : int
        Random points drawn in addition to the box corners.
    seed : int
    band : (float, float), optional
        For a result in ``s``: the frequencies (Hz) over which the error is
        measured (default :data:`~symbias.approx.laplace.DEFAULT_BAND`); such a
        result is approximated coefficient by coefficient of ``s`` and a
        :class:`~symbias.approx.laplace.FrequencyApproximation` is returned.

    Raises
    ------
    AssumptionError
        If no point satisfies every assumption, or for a bad tolerance or
        sample count.
    LimitError
        For a formula of more than :data:`~symbias.limits.MAX_DERIVED_TERMS` terms.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
    >>> approximate(f, ["RA ~ RB"]).expr
    RA*RB/(RA + RB)
    """
    _check_options(tolerance, samples)
    names = [s.name for s in formula.symbols]
    if LAPLACE in names:
        from .laplace import DEFAULT_BAND, approximate_frequency

        return approximate_frequency(formula, assumptions, tolerance=tolerance, defaults=defaults, samples=samples,
                                     seed=seed, band=band or DEFAULT_BAND)
    nN, nD = formula.nterms
    check_terms(nN + nD, MAX_DERIVED_TERMS, "MAX_DERIVED_TERMS", "an approximation",
                "use fewer symbols or numbers for some of them")
    if not names or nN == 0 or (nN <= 1 and nD <= 1):
        # a single term, a number or zero is its own approximation
        return Approximation(formula, formula, 0.0, {}, (), tolerance, 0, 0, 0, 0, seed, ((nN, nN), (nD, nD)))
    model = magnitude_model(names, assumptions, defaults=defaults, meanings=formula.meanings)
    unit, ncorners, drawn = model.admitted_points(model.corners(seed), samples, seed)
    terms = TermValues(formula, model.names)
    terms.prepare(model.logs(unit))
    kept, error, worst_unit, refined = TermSearch(terms, tolerance, model, unit).run()
    approx = formula.with_polynomials(*(_kept_polynomial(formula, terms, kept, side) for side in (0, 1)),
                                      label=f"{formula.label} (approx)", quantity=formula.quantity, problem=None)
    point = {n: float(v[0]) for n, v in model.values(worst_unit[None, :]).items()}
    counts = ((len(kept[0]), nN), (len(kept[1]), nD))
    return Approximation(formula, approx, float(error), point, model.assumptions, tolerance, ncorners, drawn,
                         refined, len(unit), seed, counts, model)


def _check_options(tolerance: float, samples: int) -> None:
    if not isinstance(tolerance, Real) or not tolerance > 0:
        raise AssumptionError(f"tolerance must be a positive number, got {tolerance!r}")
    if not isinstance(samples, Integral) or samples < 0:
        raise AssumptionError(f"samples must be a whole number >= 0, got {samples!r}")


def _kept_polynomial(formula: Formula, terms: TermValues, kept, side: int):
    """The ring polynomial of the kept terms of one side (0 numerator, 1 denominator)."""
    all_terms = terms.sides[side][0]
    return formula.ring.from_terms([all_terms[i] for i in sorted(kept[side])])


def _tidy(expr: sympy.Expr) -> sympy.Expr:
    """Cancel and factor a small expression; keep the cancelled form when factoring adds nothing."""
    import sympy

    cancelled = sympy.cancel(expr)
    factored = sympy.factor(cancelled)
    return factored if sympy.count_ops(factored) <= sympy.count_ops(cancelled) else cancelled
