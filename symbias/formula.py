"""The Formula: an exact rational result kept as two ring polynomials.

Fifth step of the symbolic side (polynomial system -> :class:`Formula`).  A
formula keeps numerator and denominator as polynomials of
:mod:`symbias.linear.polys` (cheap to differentiate, approximate and evaluate) and
builds a sympy expression only when asked (:attr:`Formula.expr`), because
turning a large polynomial into a sympy ``Expr`` costs far more than deriving
it.

Ring generators stand for a user symbol ``x``, its reciprocal ``1/x`` or a
non-polynomial sub-expression (see :class:`~symbias.linear.mna.RingVariable`).  The
user-facing form multiplies numerator and denominator by the lowest powers
of the symbols that clear every reciprocal, so ``.expr`` is a ratio of two
polynomials in the user's symbols.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
>>> f.expr
RA*RB/(RA + RB)
>>> float(f.evaluate({"RA": 2.0, "RB": 2.0}))
1.0
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from fractions import Fraction
from functools import cached_property, reduce
from math import gcd, lcm
from types import MappingProxyType
from typing import Any, Mapping

import numpy as np

from .errors import AnalysisError
from .expressions import Expr, Power, Symbol
from .linear.mna import LinearProblem, RingVariable, Solution
from .linear.numeric import evaluate_expression, normalise_values, solve_problem
from .linear.polys import Ring

__all__ = ["Formula", "TERM_BUDGET", "POLYNOMIAL_ROUTE_TERMS", "cancel_common_factor"]

#: Largest result (numerator plus denominator terms) turned into a sympy expression;
#: sympy needs seconds per 10,000 terms, so larger results are written from their terms.
TERM_BUDGET = 20_000
#: Above this many terms ``evaluate(route="auto")`` uses the batched numeric solve.
POLYNOMIAL_ROUTE_TERMS = 3_000
#: Largest result for which common factors are cancelled (a gcd per result).
CANCEL_TERMS = 20_000
#: Largest result whose coefficients are made integer and coprime (else scaled to a unit leading term).
NORMALISE_TERMS = 20_000


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

    # -- construction -------------------------------------------------------------
    @classmethod
    def from_solution(cls, solution: Solution, *, cancel: bool = True, **fields) -> "Formula":
        """Build a formula from a solver result: cancel common factors, normalise.

        Common polynomial factors are cancelled when the result has fewer than
        :data:`CANCEL_TERMS` terms; the denominator is scaled to integer
        coefficients without common divisor and a positive leading term.
        """
        ring = solution.ring
        num, den = solution.numerator, solution.denominator
        if cancel:
            num, den = cancel_common_factor(ring, num, den)
        num, den = _normalise(ring, num, den)
        return cls(ring=ring, variables=solution.variables, numerator=num, denominator=den, **fields)

    def with_polynomials(self, numerator: Any, denominator: Any, **changes) -> "Formula":
        """A formula with new polynomials over the same ring (normalised, no cancel)."""
        num, den = _normalise(self.ring, numerator, denominator)
        return replace(self, numerator=num, denominator=den, **changes)

    # -- structure ----------------------------------------------------------------
    @cached_property
    def symbols(self) -> tuple[Symbol, ...]:
        """The user symbols the result depends on, sorted by name."""
        used = self._used_generators
        names: set[str] = set()
        for i in used:
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

    def user_terms(self) -> tuple[list[tuple[dict[Any, int], Fraction]], list[tuple[dict[Any, int], Fraction]]]:
        """Numerator and denominator terms in user symbols, reciprocals cleared.

        Each term is ``({factor: exponent}, coefficient)`` where a factor is a
        :class:`~symbias.expressions.Symbol` (or a sub-expression for
        non-polynomial values); both
        lists are multiplied by the same monomial so every exponent is >= 0.
        """
        keys, matrix = self._user_key_matrix()
        polys = [self.ring.terms(self.numerator), self.ring.terms(self.denominator)]
        exponents = []
        for terms in polys:
            raw = np.array([e for e, _ in terms], dtype=np.int64).reshape(len(terms), len(self.variables))
            exponents.append(raw @ matrix)
        stacked = np.vstack(exponents) if any(len(t) for t in polys) else np.zeros((0, len(keys)), np.int64)
        shift = np.maximum(0, -stacked.min(axis=0)) if len(stacked) else np.zeros(len(keys), np.int64)
        out = []
        for terms, user in zip(polys, exponents):
            shifted = user + shift
            rows = []
            for (_, coeff), row in zip(terms, shifted.tolist()):
                rows.append(({keys[k]: e for k, e in enumerate(row) if e}, coeff))
            out.append(rows)
        return out[0], out[1]

    def _user_key_matrix(self) -> tuple[list[Any], np.ndarray]:
        """User factors and the matrix mapping generator exponents to their exponents."""
        keys: list[Any] = []
        index: dict[Any, int] = {}
        entries = []
        for v, variable in enumerate(self.variables):
            if variable.power:
                key, sign = Symbol(variable.symbol), variable.power
            elif isinstance(variable.meaning, Power) and variable.meaning.exponent == -1:
                key, sign = variable.meaning.base, -1
            else:
                key, sign = variable.meaning, 1
            if key not in index:
                index[key] = len(keys)
                keys.append(key)
            entries.append((v, index[key], sign))
        matrix = np.zeros((len(self.variables), len(keys)), dtype=np.int64)
        for v, k, sign in entries:
            matrix[v, k] = sign
        return keys, matrix

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
        return _terms_to_expr(self.user_terms()[0])

    @cached_property
    def denominator_expr(self):
        """Denominator as a sympy polynomial expression in the user symbols."""
        self._check_budget()
        return _terms_to_expr(self.user_terms()[1])

    @cached_property
    def expr(self):
        """The exact result as a sympy expression ``numerator/denominator``."""
        return self.numerator_expr / self.denominator_expr

    def exact_string(self) -> str:
        """The exact result as text that ``sympy.parse_expr`` reads back.

        Written straight from the terms, so it also works for results too big
        for :attr:`expr`.
        """
        num, den = self.user_terms()
        return f"({_terms_to_text(num)})/({_terms_to_text(den)})"

    def latex(self, symbol_names: Mapping[str, str] | None = None) -> str:
        """LaTeX of the exact result.

        Results within :data:`TERM_BUDGET` go through sympy's printer; larger
        ones are written straight from their terms (same form, no sympy
        expression is built).

        Parameters
        ----------
        symbol_names : mapping of str to str, optional
            LaTeX for symbol names, e.g. ``{"gm_Q1": "g_{m,Q1}"}``.
        """
        import sympy

        names = dict(symbol_names or {})
        if sum(self.nterms) <= TERM_BUDGET:
            mapping = {s: names[s.name] for s in self.expr.free_symbols
                       if isinstance(s, sympy.Symbol) and s.name in names}
            return sympy.latex(self.expr, symbol_names=mapping)
        num, den = self.user_terms()
        return rf"\frac{{{_terms_to_latex(num, names)}}}{{{_terms_to_latex(den, names)}}}"

    def _repr_latex_(self) -> str:
        return f"$\\displaystyle {self.latex()}$"

    def __str__(self) -> str:
        return f"{self.label} = {self.expr}"

    # -- numbers ------------------------------------------------------------------
    def generator_values(self, values: Mapping[Any, Any]) -> list[Any]:
        """Values of the ring generators for user symbol values (numbers or arrays)."""
        values = normalise_values(values)
        missing = [s.name for s in self.symbols if s.name not in values]
        if missing:
            raise AnalysisError(f"no value given for {', '.join(missing)}")
        out = []
        for variable in self.variables:
            if variable.power == 1:
                out.append(values.get(variable.symbol, 0.0))
            elif variable.power == -1:
                value = values.get(variable.symbol)
                out.append(0.0 if value is None else 1.0 / np.asarray(value, dtype=np.result_type(value, float)))
            else:
                out.append(evaluate_expression(variable.meaning, values) if variable.meaning.names <= set(values)
                           else 0.0)
        return out

    @cached_property
    def _compiled(self) -> tuple["_Program", "_Program"]:
        """Horner-factored straight-line programs of numerator and denominator."""
        size = len(self.variables)
        return tuple(_horner_program(self.ring.terms(poly), size) for poly in (self.numerator, self.denominator))

    def evaluate(self, values: Mapping[Any, Any], route: str = "auto") -> np.ndarray:
        """Evaluate the result for numbers or numpy arrays of symbol values.

        Parameters
        ----------
        values : mapping of symbol (or name) to number or array
            Arrays broadcast; complex values are allowed (e.g. ``s = 2j*pi*f``).
        route : {"auto", "polynomial", "solve"}
            ``polynomial`` evaluates the exact polynomials term by term;
            ``solve`` solves the numeric network (needs :attr:`problem`);
            ``auto`` picks the polynomial route for results of up to
            :data:`POLYNOMIAL_ROUTE_TERMS` terms.

        Examples
        --------
        >>> from symbias.netlist import parse_netlist
        >>> from symbias.analyses import output_resistance
        >>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\n"), "a")
        >>> f.evaluate({"RA": [1.0, 2.0]})
        array([1., 2.])
        """
        if route not in ("auto", "polynomial", "solve"):
            raise ValueError(f"unknown route {route!r}")
        if route == "auto":
            route = "solve" if sum(self.nterms) > POLYNOMIAL_ROUTE_TERMS and self.problem is not None else "polynomial"
        if route == "solve":
            if self.problem is None:
                raise AnalysisError(f"{self.label} has no network to solve numerically")
            return np.asarray(solve_problem(self.problem, self._network_values(values)))
        generators = self.generator_values(values)
        result = _evaluate_ratio(self._compiled, generators, self._used_generators)
        # a constant result still takes the shape of the inputs
        shape = np.broadcast_shapes(*(np.shape(v) for v in normalise_values(values).values()))
        return np.broadcast_to(result, shape).copy() if np.shape(result) != shape else result

    def _network_values(self, values: Mapping[Any, Any]) -> dict[str, Any]:
        """User values plus 1.0 for network symbols that cancelled out of the result.

        The numeric route solves the whole network, which may hold symbols the
        exact result does not depend on (the simple mirror's Rout is ``ro_Q2``
        alone); any non-zero value gives the same result for those.
        """
        values = normalise_values(values)
        missing = [s.name for s in self.symbols if s.name not in values]
        if missing:
            raise AnalysisError(f"no value given for {', '.join(missing)}")
        filled = dict(values)
        for symbol in self.problem.network.symbols:
            filled.setdefault(symbol.name, 1.0)
        return filled

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


def cancel_common_factor(ring: Ring, num, den) -> tuple[Any, Any]:
    """``num/den`` with their common polynomial factor divided out.

    Only for results of fewer than :data:`CANCEL_TERMS` terms (a gcd per
    result); larger ones, and a zero numerator, are returned as they are.
    """
    if ring.nterms(num) + ring.nterms(den) >= CANCEL_TERMS or ring.is_zero(num):
        return num, den
    common = _common_factor(ring, num, den)
    if common is None:
        return num, den
    return ring.exact_div(num, common), ring.exact_div(den, common)


def _common_factor(ring: Ring, num, den):
    """The non-constant gcd of two polynomials, or None when they are coprime.

    The gcd is computed with python-flint even for the sympy backend (its own
    gcd took seconds where flint takes milliseconds); the factor is then
    brought back into the caller's ring.
    """
    if ring.backend != "flint":
        try:
            from .linear.polys import make_ring

            fast = make_ring(ring.names, "flint")
        except ImportError:  # pragma: no cover - flint is a dependency
            fast = ring
        if fast is not ring:
            common = fast.gcd(fast.from_terms(ring.terms(num)), fast.from_terms(ring.terms(den)))
            if fast.nterms(common) <= 1 and not any(fast.degrees(common)):
                return None
            return ring.from_terms(fast.terms(common))
    common = ring.gcd(num, den)
    if ring.nterms(common) <= 1 and not any(ring.degrees(common)):
        return None
    return common


def _normalise(ring: Ring, num, den):
    if ring.is_zero(den):
        raise AnalysisError("the result has a zero denominator")
    if ring.nterms(den) + ring.nterms(num) > NORMALISE_TERMS:
        lead = ring.leading_coefficient(den)
        return (num, den) if lead == 1 else (ring.scale(num, 1 / lead), ring.scale(den, 1 / lead))
    terms = ring.terms(den)
    numerators = [c.numerator for _, c in terms]
    denominators = [c.denominator for _, c in terms]
    content = Fraction(abs(reduce(gcd, numerators)), reduce(lcm, denominators))
    positive = sum(1 if c > 0 else -1 for _, c in terms) >= 0
    scale = 1 / content if positive else -1 / content
    if scale != 1:
        factor = ring.constant(scale)
        num, den = num * factor, den * factor
    return num, den


def _terms_to_expr(terms):
    import sympy

    parts = []
    converted: dict[Any, Any] = {}
    for powers, coeff in terms:
        factors = [sympy.Rational(coeff.numerator, coeff.denominator)]
        for key, e in powers.items():
            if key not in converted:
                converted[key] = key.to_sympy()
            factors.append(converted[key] ** e)
        parts.append(sympy.Mul(*factors))
    return sympy.Add(*parts)


def _terms_to_text(terms) -> str:
    if not terms:
        return "0"
    names: dict[Any, str] = {}

    def name(key: Any) -> str:
        if key not in names:
            names[key] = key.name if isinstance(key, Symbol) else f"({key})"
        return names[key]

    out = []
    for powers, coeff in terms:
        factors = []
        if coeff != 1 or not powers:
            factors.append(f"({coeff})" if coeff.denominator != 1 or coeff < 0 else str(coeff))
        for text, e in sorted((name(key), e) for key, e in powers.items()):
            factors.append(text if e == 1 else f"{text}**{e}")
        out.append("*".join(factors))
    return " + ".join(out)


def _terms_to_latex(terms, names: Mapping[str, str]) -> str:
    if not terms:
        return "0"
    cache: dict[Any, str] = {}

    def name(key: Any) -> str:
        if key not in cache:
            import sympy

            if isinstance(key, Symbol):
                cache[key] = names.get(key.name) or sympy.latex(key.to_sympy())
            else:
                cache[key] = rf"\left({sympy.latex(key.to_sympy())}\right)"
        return cache[key]

    parts = []
    for powers, coeff in terms:
        factors = [name(key) if e == 1 else f"{name(key)}^{{{e}}}" for key, e in powers.items()]
        magnitude = abs(coeff)
        text = " ".join(sorted(factors))
        if magnitude != 1 or not factors:
            number = str(magnitude.numerator) if magnitude.denominator == 1 else \
                rf"\frac{{{magnitude.numerator}}}{{{magnitude.denominator}}}"
            text = f"{number} {text}".strip()
        parts.append(("- " if coeff < 0 else "+ ") + text)
    joined = " ".join(parts)
    return joined[2:] if joined.startswith("+ ") else joined


# -- the polynomial evaluation route ------------------------------------------------
#
# A polynomial is evaluated by a straight-line program over numpy arrays, built
# once per formula by greedy multivariate Horner factoring: the generator that
# occurs in most terms is pulled out, ``p = x*q + r``, and q and r are factored
# in turn.  Circuit results are nearly multilinear, so this removes most
# multiplications (a 164-term result needs about 390 array operations instead
# of about 1,500).  The program runs on blocks of points small enough to stay
# in the processor cache, which matters as much as the operation count.

#: Points evaluated per block by the polynomial route.
_BLOCK = 16_384

# Instruction codes of a program (a stack machine; the tree has no sharing, so
# the stack never grows beyond the factoring depth).
_PUSH, _MUL_GEN, _SCALE, _ADD_CONST, _ADD = range(5)


@dataclass(frozen=True)
class _Program:
    """Straight-line evaluation of one polynomial.

    ``code`` is a tuple of ``(instruction, argument)``; ``constant`` is the
    value of a polynomial without generators (``code`` is then empty).
    """

    code: tuple[tuple[int, Any], ...]
    constant: float


def _horner_program(terms, size: int) -> _Program:
    """Factor ``terms`` (exponent tuple, coefficient) into a :class:`_Program`."""
    if not terms:
        return _Program((), 0.0)
    exponents = np.array([e for e, _ in terms], dtype=np.int64).reshape(len(terms), size)
    coefficients = np.array([float(c) for _, c in terms])
    code: list[tuple[int, Any]] = []
    constant = _emit_horner(exponents, coefficients, code)
    return _Program(tuple(code), 0.0 if constant is None else constant)


def _emit_horner(exponents: np.ndarray, coefficients: np.ndarray, code: list) -> float | None:
    """Append code that leaves the polynomial on the stack; return its value if constant.

    Recursion depth is bounded by the number of generators plus the total
    degree: each level removes one generator from the rest, or one power from
    the factored part.
    """
    if len(coefficients) == 1:  # a monomial: the most common leaf, emitted without numpy reductions
        factors = [i for i, e in enumerate(exponents[0].tolist()) for _ in range(e)]
        coefficient = float(coefficients[0])
        if not factors:
            return coefficient
        code.append((_PUSH, factors[0]))
        code.extend((_MUL_GEN, i) for i in factors[1:])
        if coefficient != 1.0:
            code.append((_SCALE, coefficient))
        return None
    present = exponents > 0
    counts = present.sum(axis=0)
    if not counts.any():
        return float(coefficients.sum())
    pivot = int(counts.argmax())
    with_pivot = present[:, pivot]
    reduced = exponents[with_pivot]
    reduced[:, pivot] -= 1
    quotient = _emit_horner(reduced, coefficients[with_pivot], code)
    if quotient is None:
        code.append((_MUL_GEN, pivot))
    else:
        code.append((_PUSH, pivot))
        if quotient != 1.0:
            code.append((_SCALE, quotient))
    rest = ~with_pivot
    if rest.any():
        remainder = _emit_horner(exponents[rest], coefficients[rest], code)
        if remainder is None:
            code.append((_ADD, None))
        elif remainder != 0.0:
            code.append((_ADD_CONST, remainder))
    return None


def _run_program(program: _Program, generators: list[Any]) -> Any:
    """Value of a program on one block of generator values (1-d arrays or scalars).

    Intermediate arrays the program owns are updated in place; generator
    arrays are never written.
    """
    if not program.code:
        return program.constant
    stack: list[Any] = []
    owned: list[bool] = []
    multiply, add = np.multiply, np.add
    for instruction, argument in program.code:
        if instruction == _PUSH:
            stack.append(generators[argument])
            owned.append(False)
            continue
        if instruction == _ADD:
            right, right_owned = stack.pop(), owned.pop()
            if owned[-1]:
                add(stack[-1], right, out=stack[-1])
            elif right_owned:
                stack[-1] = add(right, stack[-1], out=right)
                owned[-1] = True
            else:
                stack[-1] = stack[-1] + right
                owned[-1] = True
            continue
        operand = generators[argument] if instruction == _MUL_GEN else argument
        ufunc = add if instruction == _ADD_CONST else multiply
        if owned[-1]:
            ufunc(stack[-1], operand, out=stack[-1])
        else:
            stack[-1] = ufunc(stack[-1], operand)
            owned[-1] = True
    return stack[-1]


def _evaluate_ratio(programs: tuple[_Program, _Program], generators: list[Any], used: tuple[int, ...]) -> np.ndarray:
    """``numerator / denominator`` over the broadcast shape of the used generators, block by block."""
    arrays = [np.asarray(generators[i]) for i in used]
    shape = np.broadcast_shapes(*(a.shape for a in arrays)) if arrays else ()
    # one dtype for all, so in-place updates never need a cast (int or complex input)
    dtype = np.result_type(np.float64, *arrays)
    count = int(np.prod(shape, dtype=np.int64))
    width = max(1, min(count, _BLOCK))
    flat: list[Any] = [None] * len(generators)
    tiled: set[int] = set()
    for i, array in zip(used, arrays):
        if array.ndim == 0:  # a scalar becomes one block of copies, sliced like the others
            flat[i] = np.full(width, array, dtype=dtype)
            tiled.add(i)
        else:
            flat[i] = np.broadcast_to(array, shape).astype(dtype).ravel()
    out = np.empty(count, dtype=dtype)
    with np.errstate(divide="ignore", invalid="ignore"):
        for start in range(0, count, _BLOCK):
            stop = min(start + _BLOCK, count)
            block = [
                None if v is None else v[: stop - start] if i in tiled else v[start:stop]
                for i, v in enumerate(flat)
            ]
            out[start:stop] = np.asarray(_run_program(programs[0], block)) / _run_program(programs[1], block)
    return out.reshape(shape)
