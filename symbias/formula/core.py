"""The Formula object: an exact rational result kept as two ring polynomials.

Top of :mod:`symbias.formula` (polynomial system -> :class:`Formula`).  A
formula keeps numerator and denominator as polynomials of
:mod:`symbias.linear.polys` (cheap to differentiate, approximate and
evaluate) and builds a sympy expression only when asked (:attr:`Formula.expr`),
because turning a large polynomial into a sympy ``Expr`` costs far more than
deriving it.  Text for the machine interface is written straight from the
terms (:meth:`Formula.exact_chunks`), numbers come from the evaluation routes
(:mod:`~symbias.formula.routes`), normal forms from
:mod:`~symbias.formula.algebra`.

A formula pickles (for process pools and distributed executors) by the terms
of its polynomials; the ring is rebuilt from its names and the compiled
evaluation programs are rebuilt on first use.

Examples
--------
>>> import pickle
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
>>> f.exact_string()
'(RA*RB)/(RB + RA)'
>>> float(pickle.loads(pickle.dumps(f)).evaluate({"RA": 2.0, "RB": 2.0}))
1.0
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from fractions import Fraction
from functools import cached_property
from types import MappingProxyType
from typing import Any, Iterator, Mapping, TextIO

import numpy as np

from ..errors import AnalysisError
from ..expressions import Expr, Symbol
from ..linear.mna import LinearProblem, RingVariable, Solution
from ..linear.polys import Ring, TermColumns
from . import routes
from .algebra import cancel_common_factor, normalise
from .horner import Program, horner_program
from .text import polynomial_chunks, terms_to_expr, terms_to_latex
from .userform import UserForm, user_form, user_term_dicts

__all__ = ["Formula", "TERM_BUDGET"]

#: Largest result (numerator plus denominator terms) turned into a sympy expression;
#: sympy needs seconds per 10,000 terms, so larger results are written from their terms.
TERM_BUDGET = 20_000

Terms = list[tuple[dict[Any, int], Fraction]]


@dataclass(frozen=True, eq=False)
class Formula:
    """An exact small-signal result ``numerator / denominator``.

    Parameters
    ----------
    quantity : str
        ``output_resistance``, ``current_gain``, ``voltage_gain``,
        ``transconductance``, ``transimpedance`` or a derived name.
    label : str
        Short human description, e.g. ``"Rout at Vout"``.
    unit : str
        Unit of the result (``ohm``, ``A/A``, ``V/V``, ``A/V``, ``V/A``).
    ring : Ring
        Polynomial ring of numerator and denominator.
    variables : tuple of RingVariable
        Meaning of each ring generator.
    numerator, denominator
        Ring polynomials.
    meanings : mapping of str to str
        What each user symbol stands for, with its unit.
    assumptions : tuple of str
        Model assumptions behind the result (e.g. "hybrid-pi, ro included").
    problem : LinearProblem, optional
        The linear problem it solves, for the numeric evaluation route.
    """

    quantity: str
    label: str
    unit: str
    ring: Ring
    variables: tuple[RingVariable, ...]
    numerator: Any
    denominator: Any
    meanings: Mapping[str, str] = field(default_factory=dict)
    assumptions: tuple[str, ...] = ()
    problem: LinearProblem | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "meanings", MappingProxyType(dict(self.meanings)))
        object.__setattr__(self, "assumptions", tuple(self.assumptions))

    def __reduce__(self):
        # ring polynomials of python-flint do not pickle: send their terms; caches stay behind
        polys = (self.ring.pack(self.numerator), self.ring.pack(self.denominator))
        return (_rebuild, (self.quantity, self.label, self.unit, self.ring, self.variables, polys,
                           dict(self.meanings), self.assumptions, self.problem))

    # -- construction -------------------------------------------------------------
    @classmethod
    def from_solution(cls, solution: Solution, *, cancel: bool = True, **fields) -> "Formula":
        """Build a formula from a solver result: cancel common factors, normalise.

        Common polynomial factors are cancelled when the result has fewer than
        :data:`~symbias.formula.algebra.CANCEL_TERMS` terms; the denominator is
        scaled to integer coefficients without common divisor and a positive
        leading term.
        """
        ring = solution.ring
        num, den = solution.numerator, solution.denominator
        if cancel:
            num, den = cancel_common_factor(ring, num, den)
        num, den = normalise(ring, num, den)
        return cls(ring=ring, variables=solution.variables, numerator=num, denominator=den, **fields)

    def with_polynomials(self, numerator: Any, denominator: Any, **changes) -> "Formula":
        """A formula with new polynomials over the same ring (normalised, no cancel)."""
        num, den = normalise(self.ring, numerator, denominator)
        return replace(self, numerator=num, denominator=den, **changes)

    # -- structure ----------------------------------------------------------------
    @cached_property
    def symbols(self) -> tuple[Symbol, ...]:
        """The user symbols the result depends on, sorted by name."""
        names: set[str] = set()
        for i in self._used_generators:
            variable = self.variables[i]
            if variable.symbol:
                names.add(variable.symbol)
            else:
                names |= variable.meaning.names
        return tuple(Symbol(n) for n in sorted(names))

    @cached_property
    def _used_generators(self) -> tuple[int, ...]:
        degrees = zip(self.ring.degrees(self.numerator), self.ring.degrees(self.denominator))
        return tuple(i for i, (a, b) in enumerate(degrees) if a or b)

    @property
    def nterms(self) -> tuple[int, int]:
        """Number of terms of numerator and denominator."""
        return self.ring.nterms(self.numerator), self.ring.nterms(self.denominator)

    @cached_property
    def _columns(self) -> tuple[TermColumns, TermColumns]:
        return self.ring.columns(self.numerator), self.ring.columns(self.denominator)

    @property
    def term_columns(self) -> tuple[TermColumns, TermColumns]:
        """Numerator and denominator terms as arrays (:class:`~symbias.linear.polys.TermColumns`), read once."""
        return self._columns

    @cached_property
    def _user_form(self) -> UserForm:
        return user_form(self.variables, self._columns)

    def user_terms(self) -> tuple[Terms, Terms]:
        """Numerator and denominator terms in user symbols, reciprocals cleared.

        Each term is ``({factor: exponent}, coefficient)`` where a factor is a
        :class:`~symbias.expressions.Symbol` (or a sub-expression for
        non-polynomial values); both lists are multiplied by the same
        monomial so every exponent is >= 0.
        """
        num, den = self._columns
        return user_term_dicts(self._user_form, num), user_term_dicts(self._user_form, den)

    # -- text -----------------------------------------------------------------------
    @property
    def factor_texts(self) -> tuple[str, ...]:
        """Every factor as the exact text writes it (a symbol name or a parenthesised sub-expression);
        with digits, ``+*/()`` and spaces these are all the characters of the exact text."""
        return self._user_form.texts

    def numerator_chunks(self) -> Iterator[str]:
        """The numerator in user symbols as text chunks (see :meth:`exact_chunks`)."""
        return polynomial_chunks(self._user_form, self._columns[0])

    def denominator_chunks(self) -> Iterator[str]:
        """The denominator in user symbols as text chunks (see :meth:`exact_chunks`)."""
        return polynomial_chunks(self._user_form, self._columns[1])

    def exact_chunks(self) -> Iterator[str]:
        """``(numerator)/(denominator)`` as an iterator of text chunks, written straight from the terms.

        No sympy object and no per-term string list is built, so this also
        serves results far beyond :data:`TERM_BUDGET`.
        """
        yield "("
        yield from self.numerator_chunks()
        yield ")/("
        yield from self.denominator_chunks()
        yield ")"

    def write_exact(self, stream: TextIO) -> None:
        """Write :meth:`exact_string` to a text stream chunk by chunk."""
        for chunk in self.exact_chunks():
            stream.write(chunk)

    def exact_string(self) -> str:
        """The exact result as text that ``sympy.parse_expr`` reads back.

        Written straight from the terms, so it also works for results too big
        for :attr:`expr`.
        """
        return "".join(self.exact_chunks())

    def _check_budget(self) -> None:
        total = sum(self.nterms)
        if total > TERM_BUDGET:
            raise AnalysisError(
                f"the exact {self.label} has {total} terms, more than the display budget of {TERM_BUDGET}; "
                "evaluate it numerically or approximate it",
                path=self.problem.network.path if self.problem is not None else None,
            )

    @cached_property
    def numerator_expr(self):
        """Numerator as a sympy polynomial expression in the user symbols."""
        self._check_budget()
        return terms_to_expr(self.user_terms()[0])

    @cached_property
    def denominator_expr(self):
        """Denominator as a sympy polynomial expression in the user symbols."""
        self._check_budget()
        return terms_to_expr(self.user_terms()[1])

    @cached_property
    def expr(self):
        """The exact result as a sympy expression ``numerator/denominator``."""
        return self.numerator_expr / self.denominator_expr

    def latex(self, symbol_names: Mapping[str, str] | None = None) -> str:
        """LaTeX of the exact result.

        Results within :data:`TERM_BUDGET` go through sympy's printer; larger
        ones are written straight from their terms (:meth:`latex_from_terms`).

        Parameters
        ----------
        symbol_names : mapping of str to str, optional
            LaTeX for symbol names, e.g. ``{"gm_Q1": "g_{m,Q1}"}``.
        """
        names = dict(symbol_names or {})
        if sum(self.nterms) > TERM_BUDGET:
            return self.latex_from_terms(names)
        import sympy

        mapping = {s: names[s.name] for s in self.expr.free_symbols
                   if isinstance(s, sympy.Symbol) and s.name in names}
        return sympy.latex(self.expr, symbol_names=mapping)

    def latex_from_terms(self, symbol_names: Mapping[str, str] | None = None) -> str:
        """LaTeX of the exact result written term by term (same form as sympy's, no expression built)."""
        names = dict(symbol_names or {})
        num, den = self.user_terms()
        return rf"\frac{{{terms_to_latex(num, names)}}}{{{terms_to_latex(den, names)}}}"

    def _repr_latex_(self) -> str:
        return f"$\\displaystyle {self.latex()}$"

    def __str__(self) -> str:
        return f"{self.label} = {self.expr}"

    # -- numbers ------------------------------------------------------------------
    def generator_values(self, values: Mapping[Any, Any]) -> list[Any]:
        """Values of the ring generators for user symbol values (numbers or arrays)."""
        return routes.generator_values(self.variables, self.symbols, values)

    @cached_property
    def _compiled(self) -> tuple[Program, Program]:
        """Horner-factored straight-line programs of numerator and denominator."""
        num, den = self._columns
        return horner_program(num), horner_program(den)

    @cached_property
    def _numeric_system(self):
        from ..linear.numeric import compile_problem

        return compile_problem(self.problem)

    def evaluate(self, values: Mapping[Any, Any], route: str = "auto") -> np.ndarray:
        """Evaluate the result for numbers or numpy arrays of symbol values.

        Parameters
        ----------
        values : mapping of symbol (or name) to number or array
            Arrays broadcast; complex values are allowed (e.g. ``s = 2j*pi*f``).
        route : {"auto", "polynomial", "solve"}
            ``polynomial`` evaluates the exact polynomials;
            ``solve`` solves the numeric network (needs :attr:`problem`);
            ``auto`` picks the polynomial route for results of up to
            :data:`~symbias.formula.routes.POLYNOMIAL_ROUTE_TERMS` terms.

        Examples
        --------
        >>> from symbias.netlist import parse_netlist
        >>> from symbias.analyses import output_resistance
        >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\n"), "a")
        >>> f.evaluate({"RA": [1.0, 2.0]})
        array([1., 2.])
        """
        chosen = routes.choose_route(route, sum(self.nterms), self.problem is not None)
        if chosen == "solve":
            if self.problem is None:
                raise AnalysisError(f"{self.label} has no network to solve numerically")
            return routes.solve_route(self._numeric_system, self.problem.network.symbols, self.symbols, values)
        return routes.polynomial_route(self._compiled, self.variables, self.symbols, self._used_generators, values)

    # -- calculus -------------------------------------------------------------------
    def symbol_generators(self, name: str) -> tuple[int | None, int | None, list[Expr]]:
        """Where a user symbol enters the ring.

        Returns
        -------
        direct, inverse : int or None
            Index of the generator ``x`` and of ``1/x`` (None when absent).
        inside : list of Expr
            Non-polynomial sub-expressions that contain the symbol.
        """
        direct = inverse = None
        inside = []
        for i, variable in enumerate(self.variables):
            if variable.symbol == name:
                if variable.power == 1:
                    direct = i
                else:
                    inverse = i
            elif not variable.power and name in variable.meaning.names:
                inside.append(variable.meaning)
        return direct, inverse, inside

    def polynomial_derivative(self, poly: Any, name: str) -> Any:
        """d(poly)/d(name) of a polynomial of this formula's ring, as a ring polynomial.

        Uses d/dx = d/d[x] - [1/x]**2 d/d[1/x] on the ring generators.

        Raises
        ------
        AnalysisError
            If the symbol also occurs inside a non-polynomial sub-expression.
        """
        ring = self.ring
        direct, inverse, inside = self.symbol_generators(name)
        if inside:
            raise AnalysisError(f"cannot differentiate through the sub-expression {inside[0]}")
        out = ring.zero
        if direct is not None:
            out = out + ring.derivative(poly, direct)
        if inverse is not None:
            g = ring.gens[inverse]
            out = out - g * g * ring.derivative(poly, inverse)
        return out

    def derivative(self, symbol) -> "Formula":
        """Exact derivative with respect to a user symbol, as a new formula.

        Uses d/dx = d/d[x] - [1/x]**2 d/d[1/x] on the ring generators.

        Raises
        ------
        AnalysisError
            If the symbol also occurs inside a non-polynomial sub-expression.
        """
        name = getattr(symbol, "name", None) or str(symbol)
        num, den = self.numerator, self.denominator
        numerator = self.polynomial_derivative(num, name) * den - num * self.polynomial_derivative(den, name)
        return self.with_polynomials(
            numerator,
            den * den,
            quantity=f"d_{self.quantity}",
            label=f"d({self.label})/d{name}",
            unit=f"({self.unit})/[{name}]",
        )


def _rebuild(quantity, label, unit, ring, variables, polys, meanings, assumptions, problem) -> Formula:
    """Unpickle a :class:`Formula` (see :meth:`Formula.__reduce__`)."""
    numerator, denominator = (ring.unpack(p) for p in polys)
    return Formula(quantity, label, unit, ring, variables, numerator, denominator, meanings, assumptions, problem)
