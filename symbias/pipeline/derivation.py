"""Derive small-signal quantities with what is asked on top: approximation, sensitivities, error, values.

Pipeline step 3: a :class:`~symbias.pipeline.targets.Target` and a
:class:`DeriveRequest` -> :class:`Derivation`, a frozen record of every
:class:`DerivedQuantity` (the exact :class:`~symbias.formula.Formula`, its
leading-order form with the worst error over the assumed ranges, normalised
sensitivities, the transfer error split by cause, and the value at the DC
operating point).  Everything is computed here; renderers only format it.

With ``at_bias``, the operating point gives the symbol values, and the
sensitivities are evaluated there.

Examples
--------
>>> from symbias.pipeline.targets import load_target
>>> d = derive(load_target("examples/simple_mirror.cir"), DeriveRequest(sensitivities=True))
>>> [(r.formula.label, [s.symbol for s in r.sensitivities]) for r in d.results][:1]
[('Rout at Vout', ['ro_Q2'])]
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any, Mapping

from ..devices.options import SmallSignalOptions
from ..errors import AssumptionError, InfiniteResultError
from .bias import BiasPoint, bias_point
from .parasitics import with_parasitic_values
from .quantities import Quantity, default_quantities
from .targets import DesignInputs, Target

__all__ = ["DeriveRequest", "DerivedQuantity", "Derivation", "derive", "value_at", "check_printable"]


@dataclass(frozen=True)
class DeriveRequest:
    """What to derive and what to compute on top of each exact result.

    Parameters
    ----------
    quantities : tuple of Quantity
        Empty: the target's defaults (:func:`~symbias.pipeline.quantities.default_quantities`).
    options : SmallSignalOptions
        Device models, matching, symbolic passives.
    backend : {"flint", "sympy"} or None
        Polynomial arithmetic.
    approximate : bool
        Add the dominant-term form and its worst error.
    assumptions : tuple of str
        Magnitude statements (``"RE >> 1/gm"``).
    default_assumptions : bool
        Add the hand-analysis defaults.
    tolerance : float
        Largest accepted worst relative error of the approximation.
    samples, seed : int
        Random points of the error search and their seed.
    sensitivities : bool
        Add normalised sensitivities.
    transfer_error : bool
        For current gains: the small-signal error 1 - gain/ideal split by cause,
        and with ``at_bias`` the DC current ratio at the operating point and
        its error split by cause (:mod:`~symbias.pipeline.mirror_ratio`).
    at_bias : DesignInputs or None
        Solve the DC operating point with these inputs and evaluate there
        (capacitances and ``rb``, ``re`` from the model cards, see
        :mod:`~symbias.pipeline.parasitics`).
    band : (float, float)
        For results in ``s``: the frequencies (Hz) over which the
        approximation's error is measured.

    Examples
    --------
    >>> from symbias.pipeline.quantities import Quantity
    >>> request = DeriveRequest((Quantity("output_resistance", ("Vout",)),), approximate=True)
    >>> request.tolerance, request.quantities[0].kind
    (0.1, 'output_resistance')
    """

    quantities: tuple[Quantity, ...] = ()
    options: SmallSignalOptions = field(default_factory=SmallSignalOptions)
    backend: str | None = None
    approximate: bool = False
    assumptions: tuple[str, ...] = ()
    default_assumptions: bool = True
    tolerance: float = 0.10
    samples: int = 2000
    seed: int = 0
    sensitivities: bool = False
    transfer_error: bool = False
    at_bias: DesignInputs | None = None
    band: tuple[float, float] = (1.0, 1e9)

    def __post_init__(self) -> None:
        object.__setattr__(self, "quantities", tuple(self.quantities))
        object.__setattr__(self, "assumptions", tuple(self.assumptions))
        if not 0 < self.tolerance < 1:
            raise AssumptionError(f"tolerance must be between 0 and 1, got {self.tolerance:g}", path="--tolerance")
        if self.samples < 1:
            raise AssumptionError(f"samples must be at least 1, got {self.samples}", path="--samples")


@dataclass(frozen=True, eq=False)
class DerivedQuantity:
    """One derived quantity and what was computed on top of it.

    Parameters
    ----------
    quantity : Quantity
    formula : Formula
        The exact result.
    approximation : Approximation or None
    sensitivities : tuple of Sensitivity or None
    sensitivity_point : mapping or None
        Where the sensitivities were evaluated.
    transfer_error : TransferError or None
    value : float or None
        The result at the operating point (None when not asked, or infinite).
    missing : tuple of str
        Symbols the operating point and the given values leave without a number.
    infinite : str or None
        For a result that is infinite (an open port): why; ``formula`` is then None.
    approximation_error_at_bias : float or None
        Relative error of the approximation at the operating point (with ``at_bias``).
    dc_ratio : MirrorRatio or None
        For a current gain from a current source, with ``transfer_error`` and
        ``at_bias``: the DC ratio ``Iout/Iin`` and its error by cause.
    """

    quantity: Quantity
    formula: Any
    approximation: Any = None
    sensitivities: Any = None
    sensitivity_point: Mapping[str, float] | None = None
    transfer_error: Any = None
    value: float | None = None
    missing: tuple[str, ...] = ()
    infinite: str | None = None
    approximation_error_at_bias: float | None = None
    dc_ratio: Any = None


@dataclass(frozen=True, eq=False)
class Derivation:
    """Everything :func:`derive` computed for a target."""

    target: Target
    request: DeriveRequest
    results: tuple[DerivedQuantity, ...]
    bias: BiasPoint | None = None


def derive(target: Target, request: DeriveRequest | None = None) -> Derivation:
    """Derive the requested quantities of a target (see :class:`DeriveRequest`).

    Everything is computed before anything is returned, so a failure leaves
    nothing half done.

    Raises
    ------
    CircuitError, AnalysisError, AssumptionError, ConvergenceError
        From the analyses, the approximation or the DC solve.

    Examples
    --------
    >>> from symbias.pipeline.targets import load_target, design_inputs
    >>> target = load_target("examples/simple_mirror.cir")
    >>> d = derive(target, DeriveRequest(at_bias=design_inputs(target)))
    >>> d.results[0].formula.expr, round(d.results[0].value / 1e6, 3)
    (ro_Q2, 3.05)
    """
    from ..analyses import QUANTITIES

    request = request or DeriveRequest()
    wanted = request.quantities or default_quantities(target)
    bias = bias_point(target, request.at_bias, request.options) if request.at_bias is not None else None
    if bias is not None:
        bias = with_parasitic_values(target, bias, request.options)
    computed = []
    for quantity in wanted:
        function = QUANTITIES[quantity.kind][0]
        try:
            computed.append((quantity, function(target.circuit, *quantity.arguments, options=request.options,
                                                backend=request.backend), None))
        except InfiniteResultError as err:  # an open port: report it and go on with the other quantities
            computed.append((quantity, None, err.reason))
    _check_assumptions(request, [formula for _, formula, _ in computed if formula is not None])
    results = [_extras(quantity, formula, request, bias, target) if formula is not None
               else DerivedQuantity(quantity, None, value=math.inf, infinite=reason)
               for quantity, formula, reason in computed]
    return Derivation(target, request, tuple(results), bias)


def _check_assumptions(request: DeriveRequest, formulas) -> None:
    """``--assume`` statements must be used and speak of symbols some derived result has."""
    if not request.assumptions:
        return
    if not (request.approximate or request.sensitivities or request.transfer_error):
        raise AssumptionError("assumptions are used by --approx, --sensitivity and --mirror-error: add one of them "
                              "or leave the assumptions out", path="--assume")
    from ..approx import check_symbols

    try:
        check_symbols(request.assumptions, {s.name for formula in formulas for s in formula.symbols})
    except AssumptionError as err:
        raise err.located(path="--assume") from None


_FEWER = "use fewer symbols (leave out --symbolic, a lower --level, --match) or numbers for free symbols"


def _extras(quantity: Quantity, formula, request: DeriveRequest, bias: BiasPoint | None,
            target: Target) -> DerivedQuantity:
    from ..limits import MAX_DERIVED_TERMS, check_terms

    if request.approximate or request.sensitivities or request.transfer_error:
        check_terms(sum(formula.nterms), MAX_DERIVED_TERMS, "MAX_DERIVED_TERMS",
                    "--approx, --sensitivity and --mirror-error", _FEWER, formula.problem.network.path
                    if formula.problem is not None else None)
    options = dict(defaults=request.default_assumptions, tolerance=request.tolerance, samples=request.samples,
                   seed=request.seed)
    try:
        approximation = _approximation(formula, request, options) if request.approximate else None
        rows = point = None
        if request.sensitivities:
            rows, point = _sensitivities(formula, request, approximation, bias, options)
        error = None
        if request.transfer_error and formula.quantity == "current_gain":
            from ..transfer_error import transfer_error

            error = transfer_error(formula, None, request.assumptions, **options)
    except AssumptionError as err:
        raise err.located(path="--assume") from None
    value, missing = value_at(formula, bias.values) if bias is not None else (None, ())
    at_bias = None
    if approximation is not None and value is not None and value != 0:
        approximate_value, _ = value_at(approximation.formula, bias.values)
        at_bias = None if approximate_value is None else abs(approximate_value / value - 1.0)
    ratio = None
    if error is not None and bias is not None and target.circuit.element(quantity.arguments[1]).kind == "I":
        from .mirror_ratio import mirror_ratio

        ratio = mirror_ratio(target, request.at_bias, *quantity.arguments, point=bias.point)
    return DerivedQuantity(quantity, formula, approximation, rows,
                           MappingProxyType(dict(point)) if point is not None else None, error, value, missing,
                           approximation_error_at_bias=at_bias, dc_ratio=ratio)


def _approximation(formula, request: DeriveRequest, options: dict):
    from ..approx import approximate

    return approximate(formula, request.assumptions, band=request.band, **options)


def _sensitivities(formula, request: DeriveRequest, approximation, bias: BiasPoint | None, options: dict):
    """Sensitivity rows and the point they were taken at: the bias point, else the centre of the ranges."""
    from ..approx import magnitude_model
    from ..sensitivity import sensitivities

    names = [s.name for s in formula.symbols]
    if bias is not None and all(n in bias.values for n in names if n != "s"):
        point = {n: bias.values[n] for n in names if n != "s"}
    else:
        model = approximation.model if approximation is not None and approximation.model else None
        if model is None and names:
            model = magnitude_model(names, request.assumptions, defaults=options["defaults"],
                                    meanings=formula.meanings)
        point = model.centre() if model is not None else {}
    return sensitivities(formula, point), point


def check_printable(derivation: Derivation, form: str = "json") -> None:
    """Refuse to write out in ``form`` an exact result too large for it.

    JSON and Markdown write up to :data:`~symbias.limits.MAX_PRINTED_TERMS`
    terms; LaTeX and Python, which go through sympy, up to
    :data:`~symbias.limits.MAX_TYPESET_TERMS`; the text form summarises any size.

    Raises
    ------
    LimitError
        Saying that the text form summarises such a result.

    Examples
    --------
    >>> from symbias.pipeline.targets import load_target
    >>> check_printable(derive(load_target("examples/simple_mirror.cir")), "latex")
    """
    from ..limits import MAX_PRINTED_TERMS, MAX_TYPESET_TERMS, check_terms

    if form == "text":
        return
    typeset = form in ("latex", "python")
    limit, name = (MAX_TYPESET_TERMS, "MAX_TYPESET_TERMS") if typeset else (MAX_PRINTED_TERMS, "MAX_PRINTED_TERMS")
    for result in derivation.results:
        if result.formula is None:  # an infinite result has nothing to write out
            continue
        check_terms(sum(result.formula.nterms), limit, name, f"writing it out as {form}",
                    f"the text form summarises it{'; --json writes it' if typeset else ''}; or {_FEWER}",
                    derivation.target.where)


def value_at(formula, values: Mapping[str, float]) -> tuple[float | None, tuple[str, ...]]:
    """The formula's value at numeric symbol values: (value or None when infinite, missing symbols).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\n"), "a")
    >>> value_at(f, {"RA": 2e3}), value_at(f, {})
    ((2000.0, ()), (None, ('RA',)))
    """
    import math

    missing = tuple(s.name for s in formula.symbols if s.name not in values and s.name != "s")
    if missing:
        return None, missing
    if any(s.name == "s" for s in formula.symbols) and "s" not in values:
        values = {**values, "s": 0.0}  # the value at the bias point is the low-frequency one
    number = complex(formula.evaluate(values))
    value = number.real if abs(number.imag) <= 1e-12 * abs(number) else abs(number)
    return (value if math.isfinite(value) else None), ()
