"""Values and expressions in netlist text: exact numbers and a small expression tree, read without ``eval``.

Lowest level of the text side.  A SPICE number (``4.7k``, ``10uF``,
``1meg``) becomes an exact :class:`Number` (a :class:`fractions.Fraction`
inside); a ``{expression}`` becomes a tree of :class:`Expr` nodes built by a
small recursive-descent parser.  Only numbers, names, ``+ - * /``, powers
(``**`` or ``^``), parentheses and the functions in :data:`FUNCTIONS` are
accepted; anything else is a :class:`~symbias.errors.NetlistError`.

The tree is symbias's own, so reading a netlist, solving its DC operating
point and deriving its small-signal results need no computer-algebra system:
sympy is loaded only where a result is shown or manipulated as a sympy
expression (:meth:`Expr.to_sympy`).  Nodes are immutable and hashable and are
kept in a light canonical form (sums and products flattened, numbers folded
exactly, like terms and equal bases merged, arguments in a fixed order), so
equal values compare equal.  :meth:`Expr.terms` expands a value into
monomials for the polynomial engine.

Every growth has a limit checked as the tree is built (:data:`MAX_EXPONENT`,
:data:`MAX_BITS`, :data:`MAX_NODES`, :data:`MAX_NESTING`,
:data:`MAX_LENGTH`); each ends in a one-line
:class:`~symbias.errors.LimitError`.

Examples
--------
>>> parse_number("4.7k")
4700
>>> e = parse_expression("2*RE + 1/gm")
>>> e, sorted(e.names)
(2*RE + 1/gm, ['RE', 'gm'])
>>> float(e.evaluate({"RE": 1e3, "gm": 0.04}))
2025.0
>>> parse_expression("R1*(1+k)", {"k": parse_number("2")})
3*R1
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from fractions import Fraction
from typing import Any, Iterable

from .errors import LimitError, NetlistError

__all__ = [
    "Expr",
    "Number",
    "Symbol",
    "Sum",
    "Product",
    "Power",
    "Call",
    "as_expr",
    "symbol",
    "parse_number",
    "try_parse_number",
    "parse_expression",
    "parse_value",
    "FUNCTIONS",
    "SUFFIXES",
    "ZERO",
    "ONE",
    "MAX_EXPONENT",
    "MAX_BITS",
    "MAX_NODES",
    "MAX_NESTING",
    "MAX_LENGTH",
    "MAX_TERMS",
]

#: SPICE scale suffixes, case-insensitive; ``meg`` and ``mil`` are tried before ``m``.
SUFFIXES: dict[str, Fraction] = {
    "t": Fraction(10**12),
    "g": Fraction(10**9),
    "meg": Fraction(10**6),
    "k": Fraction(10**3),
    "mil": Fraction(254, 10**7),
    "m": Fraction(1, 10**3),
    "u": Fraction(1, 10**6),
    "n": Fraction(1, 10**9),
    "p": Fraction(1, 10**12),
    "f": Fraction(1, 10**15),
}

#: Functions allowed inside ``{...}`` (``ln`` is ``log``).
FUNCTIONS = ("sqrt", "exp", "log", "ln", "abs")

#: Largest magnitude of a numeric exponent (``x**64`` is already far beyond any real use).
MAX_EXPONENT = 64
#: Largest decimal exponent of a number (IEEE doubles end near 1e308).
MAX_DECIMAL_EXPONENT = 308
#: Longest number, in characters.
MAX_DIGITS = 400
#: Largest exact number, in bits of numerator or denominator, that arithmetic may produce.
MAX_BITS = 4096
#: Largest expression, in tree nodes (a value, however built from ``.param`` chains).
MAX_NODES = 2000
#: Deepest nesting of parentheses, signs and powers in one expression.
MAX_NESTING = 60
#: Longest expression text, in characters.
MAX_LENGTH = 20_000
#: Most monomials a value may expand into (:meth:`Expr.terms`).
MAX_TERMS = 10_000

_NUMBER = re.compile(r"([+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?)([a-zA-Z]*)", re.ASCII)
_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*", re.ASCII)


# ---------------------------------------------------------------------------------------------
# the tree
# ---------------------------------------------------------------------------------------------
class Expr:
    """Base of the expression nodes: immutable, hashable, exact.

    Arithmetic with ``+ - * / **`` (and with ints and Fractions) builds new
    canonical nodes.  Subclasses: :class:`Number`, :class:`Symbol`,
    :class:`Sum`, :class:`Product`, :class:`Power`, :class:`Call`.
    """

    __slots__ = ("_hash", "_text", "size", "depth")
    _rank = 9

    def _finish(self, children: Iterable["Expr"] = ()) -> None:
        children = tuple(children)
        self.size = 1 + sum(c.size for c in children)
        self.depth = 1 + max((c.depth for c in children), default=0)
        if self.size > MAX_NODES:
            raise LimitError(f"expression has more than {MAX_NODES} nodes (limit MAX_NODES); "
                             "give the value as a number or split it into .param steps that reduce to numbers")
        self._hash = None
        self._text = None

    # -- identity ------------------------------------------------------------------------------
    def _key(self) -> tuple:
        raise NotImplementedError

    def __hash__(self) -> int:
        if self._hash is None:
            self._hash = hash((type(self).__name__, self._key()))
        return self._hash

    def __eq__(self, other: object) -> bool:
        if isinstance(other, Expr):
            return type(self) is type(other) and hash(self) == hash(other) and self._key() == other._key()
        if isinstance(other, (int, Fraction)) and not isinstance(other, bool):
            return isinstance(self, Number) and self.value == other
        if isinstance(other, float):
            return isinstance(self, Number) and float(self.value) == other
        return NotImplemented

    def __ne__(self, other: object) -> bool:
        result = self.__eq__(other)
        return result if result is NotImplemented else not result

    def sort_key(self) -> tuple:
        """Key that orders nodes deterministically (kind, then text)."""
        return (self._rank, str(self))

    # -- arithmetic ----------------------------------------------------------------------------
    def __add__(self, other):
        return add(self, as_expr(other))

    def __radd__(self, other):
        return add(as_expr(other), self)

    def __sub__(self, other):
        return add(self, multiply(MINUS_ONE, as_expr(other)))

    def __rsub__(self, other):
        return add(as_expr(other), multiply(MINUS_ONE, self))

    def __mul__(self, other):
        return multiply(self, as_expr(other))

    def __rmul__(self, other):
        return multiply(as_expr(other), self)

    def __truediv__(self, other):
        return multiply(self, power(as_expr(other), MINUS_ONE))

    def __rtruediv__(self, other):
        return multiply(as_expr(other), power(self, MINUS_ONE))

    def __neg__(self):
        return multiply(MINUS_ONE, self)

    def __pos__(self):
        return self

    def __pow__(self, other):
        return power(self, as_expr(other))

    def __rpow__(self, other):
        return power(as_expr(other), self)

    # -- questions -----------------------------------------------------------------------------
    @property
    def free_symbols(self) -> frozenset["Symbol"]:
        """The :class:`Symbol` nodes in the expression."""
        out: set[Symbol] = set()
        stack = [self]
        while stack:
            node = stack.pop()
            if isinstance(node, Symbol):
                out.add(node)
            else:
                stack.extend(node.children())
        return frozenset(out)

    @property
    def names(self) -> frozenset[str]:
        """Names of the free symbols."""
        return frozenset(s.name for s in self.free_symbols)

    @property
    def is_number(self) -> bool:
        """True when the expression has no free symbol (it may still be irrational, e.g. ``sqrt(2)``)."""
        return not self.free_symbols

    def children(self) -> tuple["Expr", ...]:
        """Direct sub-expressions."""
        return ()

    def __float__(self) -> float:
        if not self.is_number:
            raise NetlistError(f"{self} is not a number")
        return float(self.evaluate({}))

    def __bool__(self) -> bool:
        return not (isinstance(self, Number) and self.value == 0)

    # -- conversions ---------------------------------------------------------------------------
    def evaluate(self, values: Mapping[str, Any]):
        """Numeric value for symbol values given by name (floats, complex or numpy arrays).

        Raises
        ------
        NetlistError
            If a symbol has no value.
        """
        raise NotImplementedError

    def to_sympy(self):
        """The same value as a sympy expression (imports sympy)."""
        raise NotImplementedError

    def substitute(self, values: Mapping[str, "Expr"]) -> "Expr":
        """A copy with the symbols named in ``values`` replaced (canonical form rebuilt)."""
        raise NotImplementedError

    def terms(self) -> dict[tuple[tuple["Expr", int], ...], Fraction]:
        """The expanded form: ``{monomial: coefficient}``, a monomial a sorted tuple of (base, exponent).

        A base is a :class:`Symbol` or an expression that is not a polynomial
        in symbols (``1/(R1 + R2)`` gives the base ``R1 + R2`` with exponent
        -1; ``sqrt(2)`` is a base of its own).

        Raises
        ------
        LimitError
            Beyond :data:`MAX_TERMS` monomials.

        Examples
        --------
        >>> {tuple((str(b), e) for b, e in m): c for m, c in parse_expression("(a + b)/c").terms().items()}
        {(('a', 1), ('c', -1)): Fraction(1, 1), (('b', 1), ('c', -1)): Fraction(1, 1)}
        """
        raise NotImplementedError

    def __repr__(self) -> str:
        return str(self)

    def __str__(self) -> str:
        if self._text is None:
            self._text = self._format()
        return self._text

    def _format(self) -> str:
        raise NotImplementedError


class Number(Expr):
    """An exact rational number.

    Examples
    --------
    >>> Number(Fraction(1, 4)) + 1, float(Number(3))
    (5/4, 3.0)
    """

    __slots__ = ("value",)
    _rank = 0

    def __init__(self, value: Fraction | int):
        self.value = Fraction(value)
        bits = max(self.value.numerator.bit_length(), self.value.denominator.bit_length())
        if bits > MAX_BITS:
            raise LimitError(f"a number of more than {MAX_BITS} bits (limit MAX_BITS) arises in an expression; "
                             "no component value needs it")
        self._finish()

    def __reduce__(self):
        return (Number, (self.value,))

    def _key(self):
        return (self.value,)

    def sort_key(self):
        try:
            magnitude = float(self.value)
        except OverflowError:
            magnitude = math.inf if self.value > 0 else -math.inf
        return (self._rank, magnitude, str(self))

    def evaluate(self, values):
        return float(self.value)

    def __float__(self) -> float:
        return float(self.value)

    def __int__(self) -> int:
        return int(self.value)

    def to_sympy(self):
        import sympy

        return sympy.Rational(self.value.numerator, self.value.denominator)

    def substitute(self, values):
        return self

    def terms(self):
        return {(): self.value} if self.value else {}

    def _format(self):
        v = self.value
        return str(v.numerator) if v.denominator == 1 else f"{v.numerator}/{v.denominator}"


class Symbol(Expr):
    """A named free symbol (case kept).

    Examples
    --------
    >>> Symbol("RE") * 2
    2*RE
    """

    __slots__ = ("name",)
    _rank = 1

    def __init__(self, name: str):
        self.name = str(name)
        self._finish()

    def __reduce__(self):
        return (Symbol, (self.name,))

    def _key(self):
        return (self.name,)

    def evaluate(self, values):
        try:
            return values[self.name]
        except KeyError:
            raise NetlistError(f"no value given for symbol {self.name!r}") from None

    def to_sympy(self):
        import sympy

        return sympy.Symbol(self.name)

    def substitute(self, values):
        return as_expr(values[self.name]) if self.name in values else self

    def terms(self):
        return {((self, 1),): Fraction(1)}

    def _format(self):
        return self.name


class Sum(Expr):
    """A sum of two or more terms (build with ``+``, not directly)."""

    __slots__ = ("args",)
    _rank = 4

    def __init__(self, args: tuple[Expr, ...]):
        self.args = tuple(args)
        self._finish(self.args)

    def __reduce__(self):
        return (add, self.args)

    def _key(self):
        return self.args

    def children(self):
        return self.args

    def evaluate(self, values):
        total = self.args[0].evaluate(values)
        for arg in self.args[1:]:
            total = total + arg.evaluate(values)
        return total

    def to_sympy(self):
        import sympy

        return sympy.Add(*(a.to_sympy() for a in self.args))

    def substitute(self, values):
        return add(*(a.substitute(values) for a in self.args))

    def terms(self):
        out: dict = {}
        for arg in self.args:
            for monomial, coeff in arg.terms().items():
                total = out.get(monomial, 0) + coeff
                if total:
                    out[monomial] = total
                else:
                    out.pop(monomial, None)
        _check_terms(len(out))
        return out

    def _format(self):
        parts = []
        for i, arg in enumerate(self.args):
            coeff, _ = _split_coefficient(arg)
            if i and coeff < 0:
                parts.append(" - " + _format_term(multiply(Number(-1), arg)))
            else:
                parts.append((" + " if i else "") + _format_term(arg))
        return "".join(parts)


class Product(Expr):
    """A product of two or more factors (build with ``*``, not directly)."""

    __slots__ = ("args",)
    _rank = 3

    def __init__(self, args: tuple[Expr, ...]):
        self.args = tuple(args)
        self._finish(self.args)

    def __reduce__(self):
        return (multiply, self.args)

    def _key(self):
        return self.args

    def children(self):
        return self.args

    def evaluate(self, values):
        total = self.args[0].evaluate(values)
        for arg in self.args[1:]:
            total = total * arg.evaluate(values)
        return total

    def to_sympy(self):
        import sympy

        return sympy.Mul(*(a.to_sympy() for a in self.args))

    def substitute(self, values):
        return multiply(*(a.substitute(values) for a in self.args))

    def terms(self):
        out: dict = {(): Fraction(1)}
        for arg in self.args:
            out = _multiply_terms(out, arg.terms())
        return out

    def _format(self):
        coeff, rest = _split_coefficient(self)
        up: list[str] = []
        down: list[str] = []
        if coeff.numerator not in (1, -1):
            up.append(str(abs(coeff.numerator)))
        if coeff.denominator != 1:
            down.append(str(coeff.denominator))
        for factor in _factors(rest):
            if isinstance(factor, Power) and isinstance(factor.exponent, Number) and factor.exponent.value < 0:
                inverse = power(factor.base, Number(-factor.exponent.value))
                down.append(_wrap(inverse, 3))
            else:
                up.append(_wrap(factor, 3))
        text = "*".join(up) or "1"
        if down:
            text += "/" + (down[0] if len(down) == 1 else "(" + "*".join(down) + ")")
        return ("-" if coeff < 0 else "") + text


class Power(Expr):
    """``base**exponent`` (build with ``**``, not directly)."""

    __slots__ = ("base", "exponent")
    _rank = 2

    def __init__(self, base: Expr, exponent: Expr):
        self.base, self.exponent = base, exponent
        self._finish((base, exponent))

    def __reduce__(self):
        return (power, (self.base, self.exponent))

    def _key(self):
        return (self.base, self.exponent)

    def children(self):
        return (self.base, self.exponent)

    def evaluate(self, values):
        base = self.base.evaluate(values)
        if isinstance(self.exponent, Number) and self.exponent.value.denominator == 1:
            n = int(self.exponent.value)
            return base**n if n >= 0 else 1.0 / base ** (-n)
        exponent = self.exponent.evaluate(values)
        if _is_scalar(base) and _is_scalar(exponent):
            if isinstance(base, complex) or isinstance(exponent, complex) or base >= 0:
                return base**exponent
            return math.nan  # a real power of a negative number: not a real value
        import numpy as np

        with np.errstate(invalid="ignore"):
            return np.power(base, exponent)

    def to_sympy(self):
        import sympy

        return sympy.Pow(self.base.to_sympy(), self.exponent.to_sympy())

    def substitute(self, values):
        return power(self.base.substitute(values), self.exponent.substitute(values))

    def terms(self):
        exponent = self.exponent
        if isinstance(exponent, Number) and exponent.value.denominator == 1:
            n = int(exponent.value)
            base_terms = self.base.terms()
            if n >= 0:
                out: dict = {(): Fraction(1)}
                for _ in range(n):
                    out = _multiply_terms(out, base_terms)
                return out
            if len(base_terms) == 1:  # a monomial: invert it
                (monomial, coeff), = base_terms.items()
                return {tuple((b, e * n) for b, e in monomial): coeff**n}
            return {((self.base, n),): Fraction(1)}
        return {((self, 1),): Fraction(1)}

    def _format(self):
        exponent = self.exponent
        if isinstance(exponent, Number):
            v = exponent.value
            if v == Fraction(1, 2):
                return f"sqrt({self.base})"
            if v < 0:
                inverse = power(self.base, Number(-v))
                return f"1/{_wrap(inverse, 3)}"
        return f"{_wrap(self.base, 4)}**{_wrap(exponent, 4)}"


class Call(Expr):
    """A function of one argument: ``exp``, ``log``, ``abs`` (``sqrt`` is a power of 1/2)."""

    __slots__ = ("function", "argument")
    _rank = 1

    def __init__(self, function: str, argument: Expr):
        self.function, self.argument = function, argument
        self._finish((argument,))

    def __reduce__(self):
        return (call, (self.function, self.argument))

    def _key(self):
        return (self.function, self.argument)

    def children(self):
        return (self.argument,)

    def evaluate(self, values):
        value = self.argument.evaluate(values)
        if _is_scalar(value) and not isinstance(value, complex):
            if self.function == "exp":
                return math.exp(min(value, 709.0)) if value < 709.0 else math.inf
            if self.function == "log":
                return math.log(value) if value > 0 else (-math.inf if value == 0 else math.nan)
            return abs(value)
        import numpy as np

        return {"exp": np.exp, "log": np.log, "abs": np.abs}[self.function](value)

    def to_sympy(self):
        import sympy

        return {"exp": sympy.exp, "log": sympy.log, "abs": sympy.Abs}[self.function](self.argument.to_sympy())

    def substitute(self, values):
        return call(self.function, self.argument.substitute(values))

    def terms(self):
        return {((self, 1),): Fraction(1)}

    def _format(self):
        return f"{self.function}({self.argument})"


ZERO = Number(0)
ONE = Number(1)
MINUS_ONE = Number(-1)


def _is_scalar(value) -> bool:
    return isinstance(value, (int, float, complex))


def _check_terms(count: int) -> None:
    if count > MAX_TERMS:
        raise LimitError(f"a value expands into more than {MAX_TERMS} terms (limit MAX_TERMS); "
                         "give it numbers, or write it as a product of smaller parts")


def _multiply_terms(a: dict, b: dict) -> dict:
    _check_terms(len(a) * len(b))
    out: dict = {}
    for ma, ca in a.items():
        for mb, cb in b.items():
            powers: dict = dict(ma)
            for base, exponent in mb:
                powers[base] = powers.get(base, 0) + exponent
            monomial = tuple(sorted(((k, e) for k, e in powers.items() if e), key=lambda kv: kv[0].sort_key()))
            total = out.get(monomial, 0) + ca * cb
            if total:
                out[monomial] = total
            else:
                out.pop(monomial, None)
    return out


def _split_coefficient(expr: Expr) -> tuple[Fraction, Expr]:
    """(numeric coefficient, the rest) of a term."""
    if isinstance(expr, Number):
        return expr.value, ONE
    if isinstance(expr, Product) and isinstance(expr.args[0], Number):
        rest = expr.args[1:]
        return expr.args[0].value, rest[0] if len(rest) == 1 else Product(rest)
    return Fraction(1), expr


def _factors(expr: Expr) -> tuple[Expr, ...]:
    if isinstance(expr, Product):
        return expr.args
    if isinstance(expr, Number) and expr.value == 1:
        return ()
    return (expr,)


def _base_exponent(expr: Expr) -> tuple[Expr, Expr]:
    if isinstance(expr, Power):
        return expr.base, expr.exponent
    return expr, ONE


def _precedence(expr: Expr) -> int:
    if isinstance(expr, Sum):
        return 1
    if isinstance(expr, Product):
        return 2
    if isinstance(expr, Number):
        return 2 if expr.value.denominator != 1 or expr.value < 0 else 4
    if isinstance(expr, Power):
        coeff_negative = isinstance(expr.exponent, Number) and expr.exponent.value < 0
        return 2 if coeff_negative else 3
    return 4


def _wrap(expr: Expr, level: int) -> str:
    """Text of ``expr`` in parentheses when it binds less tightly than ``level``."""
    text = str(expr)
    return f"({text})" if _precedence(expr) < level else text


def _format_term(expr: Expr) -> str:
    return str(expr)


# ---------------------------------------------------------------------------------------------
# canonical constructors
# ---------------------------------------------------------------------------------------------
def as_expr(value: Any) -> Expr:
    """An :class:`Expr` for an Expr, an int, a Fraction, a finite float (converted exactly), value text or a
    sympy expression.

    Examples
    --------
    >>> as_expr(0.5), as_expr(3)
    (1/2, 3)
    """
    if isinstance(value, Expr):
        return value
    if isinstance(value, bool):
        raise NetlistError(f"not a value: {value!r}")
    if isinstance(value, (int, Fraction)):
        return Number(value)
    if isinstance(value, float):
        if not math.isfinite(value):
            raise NetlistError(f"not a finite number: {value!r}")
        return Number(Fraction(value))
    if isinstance(value, str):
        return parse_value(value)
    if type(value).__module__.startswith("sympy"):  # a sympy number or expression, read by its text
        if getattr(value, "is_Rational", False):
            return Number(Fraction(int(value.p), int(value.q)))
        return parse_expression(str(value).replace("Abs(", "abs("))
    raise NetlistError(f"not a value: {value!r}")


def symbol(name: str) -> Symbol:
    """A :class:`Symbol` (a short constructor for code).

    Examples
    --------
    >>> symbol("gm_Q1").name
    'gm_Q1'
    """
    return Symbol(name)


def add(*args: Expr) -> Expr:
    """The canonical sum of ``args``: flattened, numbers folded, like terms merged, sorted."""
    constant = Fraction(0)
    collected: dict[Expr, Fraction] = {}
    order: list[Expr] = []
    stack = list(args)
    flat: list[Expr] = []
    for arg in stack:
        if isinstance(arg, Sum):
            flat.extend(arg.args)
        else:
            flat.append(arg)
    for arg in flat:
        if isinstance(arg, Number):
            constant += arg.value
            continue
        coeff, rest = _split_coefficient(arg)
        if rest not in collected:
            collected[rest] = Fraction(0)
            order.append(rest)
        collected[rest] += coeff
    kept = sorted((r for r in order if collected[r]), key=_term_order)
    terms = [multiply(Number(collected[r]), r) for r in kept]
    if constant:
        terms.append(Number(constant))
    if not terms:
        return ZERO
    return terms[0] if len(terms) == 1 else Sum(tuple(terms))


def _term_order(rest: Expr) -> tuple:
    """Order of the terms of a sum: plain products first, terms with a reciprocal after, then by text."""
    factors = rest.args if isinstance(rest, Product) else (rest,)
    reciprocal = any(isinstance(f, Power) and isinstance(f.exponent, Number) and f.exponent.value < 0
                     for f in factors)
    return (reciprocal, str(rest))


def multiply(*args: Expr) -> Expr:
    """The canonical product of ``args``: flattened, numbers folded, equal bases merged, sorted."""
    coeff = Fraction(1)
    exponents: dict[Expr, Expr] = {}
    order: list[Expr] = []
    flat: list[Expr] = []
    for arg in args:
        if isinstance(arg, Product):
            flat.extend(arg.args)
        else:
            flat.append(arg)
    for arg in flat:
        if isinstance(arg, Number):
            coeff *= arg.value
            continue
        base, exponent = _base_exponent(arg)
        if base not in exponents:
            exponents[base] = ZERO
            order.append(base)
        exponents[base] = add(exponents[base], exponent)
    if coeff == 0:
        return ZERO
    factors: list[Expr] = []
    for base in order:
        factor = power(base, exponents[base])
        if isinstance(factor, Number):
            coeff *= factor.value
        elif isinstance(factor, Product):  # e.g. (2*x)**2 folded out
            for f in factor.args:
                if isinstance(f, Number):
                    coeff *= f.value
                else:
                    factors.append(f)
        else:
            factors.append(factor)
    factors.sort(key=Expr.sort_key)
    if coeff != 1 or not factors:
        factors.insert(0, Number(coeff))
    return factors[0] if len(factors) == 1 else Product(tuple(factors))


def _integer_root(value: int, n: int) -> int | None:
    if value < 0:
        return None
    root = round(value ** (1.0 / n)) if value.bit_length() < 1000 else math.isqrt(value) if n == 2 else None
    if root is None:
        return None
    for candidate in (root - 1, root, root + 1):
        if candidate >= 0 and candidate**n == value:
            return candidate
    return None


def power(base: Expr, exponent: Expr) -> Expr:
    """The canonical ``base**exponent``.

    Raises
    ------
    NetlistError
        Zero to a negative power.
    LimitError
        A numeric exponent beyond :data:`MAX_EXPONENT`.
    """
    if isinstance(exponent, Number):
        e = exponent.value
        if abs(e) > MAX_EXPONENT:
            raise LimitError(f"exponent {e} is too large (limit MAX_EXPONENT = {MAX_EXPONENT})")
        if e == 0:
            return ONE
        if e == 1:
            return base
        if isinstance(base, Number):
            b = base.value
            if b == 0:
                if e < 0:
                    raise NetlistError("division by zero")
                return ZERO
            if e.denominator == 1:
                bits = max(b.numerator.bit_length(), b.denominator.bit_length()) * abs(int(e))
                if bits > MAX_BITS:
                    raise LimitError(f"the number {b}**{e} is too large (limit MAX_BITS = {MAX_BITS} bits)")
                return Number(b ** int(e))
            # an exact rational root where there is one (sqrt(4) = 2), else an irrational constant
            if b > 0:
                num = _integer_root(b.numerator, e.denominator)
                den = _integer_root(b.denominator, e.denominator)
                if num is not None and den is not None:
                    return power(Number(Fraction(num, den)), Number(e.numerator))
        if e.denominator == 1:
            if isinstance(base, Power):
                return power(base.base, multiply(base.exponent, exponent))
            if isinstance(base, Product):
                return multiply(*(power(f, exponent) for f in base.args))
    elif isinstance(base, Number) and base.value == 1:
        return ONE
    return Power(base, exponent)


def call(function: str, argument: Expr) -> Expr:
    """``function(argument)`` with exact values where they are rational (``exp(0) = 1``)."""
    name = {"ln": "log"}.get(function.lower(), function.lower())
    if name == "sqrt":
        return power(argument, Number(Fraction(1, 2)))
    if name not in ("exp", "log", "abs"):
        raise NetlistError(f"unknown function {function!r} (allowed: {', '.join(FUNCTIONS)})")
    if isinstance(argument, Number):
        v = argument.value
        if name == "abs":
            return Number(abs(v))
        if name == "exp" and v == 0:
            return ONE
        if name == "log" and v == 1:
            return ZERO
        if name == "log" and v <= 0:
            raise NetlistError(f"log of {v}: not a positive number")
    return Call(name, argument)


# ---------------------------------------------------------------------------------------------
# numbers and the parser
# ---------------------------------------------------------------------------------------------
def try_parse_number(text: str) -> Number | None:
    """Read a SPICE number exactly, or return None when ``text`` is not one.

    Trailing unit letters after the scale suffix are ignored, as SPICE does
    (``10uF`` is 10e-6, ``2kOhm`` is 2000).  Only ASCII digits count.

    Examples
    --------
    >>> try_parse_number("10uF")
    1/100000
    >>> try_parse_number("RE") is None, try_parse_number("\\u0661\\u0662") is None
    (True, True)
    """
    match = _NUMBER.fullmatch(text.strip())
    if not match:
        return None
    mantissa, letters = match.groups()
    exponent = re.search(r"[eE]([+-]?[0-9]+)$", mantissa)
    if exponent and abs(int(exponent.group(1))) > MAX_DECIMAL_EXPONENT:
        # an exact 10**999999999 would take minutes to build; no real value is near it
        raise NetlistError(f"number {text.strip()!r} is out of range (exponent beyond +-{MAX_DECIMAL_EXPONENT})")
    if len(mantissa) > MAX_DIGITS:
        raise LimitError(f"number {text.strip()[:20]!r}... has more than {MAX_DIGITS} characters")
    value = Fraction(mantissa)
    letters = letters.lower()
    if letters.startswith("meg"):
        value *= SUFFIXES["meg"]
    elif letters.startswith("mil"):
        value *= SUFFIXES["mil"]
    elif letters and letters[0] in SUFFIXES:
        value *= SUFFIXES[letters[0]]
    return Number(value)


def parse_number(text: str) -> Number:
    """Read a SPICE number exactly; raise :class:`NetlistError` if it is not one.

    Examples
    --------
    >>> parse_number("1meg")
    1000000
    """
    value = try_parse_number(text)
    if value is None:
        raise NetlistError(f"expected a number, got {text!r}")
    return value


_TOKEN = re.compile(
    r"\s*(?:(?P<num>(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?[a-zA-Z]*)"
    r"|(?P<name>[A-Za-z_][A-Za-z0-9_]*)"
    r"|(?P<op>\*\*|[-+*/^(),]))",
    re.ASCII,
)


def _tokenize(text: str) -> list[tuple[str, str]]:
    tokens = []
    pos = 0
    text = text.rstrip()
    while pos < len(text):
        match = _TOKEN.match(text, pos)
        if not match or match.end() == pos:
            raise NetlistError(f"unexpected character {text[pos:].strip()[:1]!r} in expression {_short(text)!r}")
        kind = match.lastgroup
        tokens.append((kind, match.group(kind)))
        pos = match.end()
    return tokens


def _short(text: str) -> str:
    text = text.strip()
    return text if len(text) <= 60 else text[:57] + "..."


class _Parser:
    """Recursive descent (sum -> product -> unary -> power -> atom), nesting bounded by :data:`MAX_NESTING`."""

    def __init__(self, text: str, names: Mapping[str, Expr]):
        if len(text) > MAX_LENGTH:
            raise LimitError(f"expression of {len(text)} characters is longer than {MAX_LENGTH} (limit MAX_LENGTH)")
        self.text = text
        self.tokens = _tokenize(text)
        self.pos = 0
        self.names = names
        self.level = 0

    def peek(self) -> tuple[str, str] | None:
        return self.tokens[self.pos] if self.pos < len(self.tokens) else None

    def take(self) -> tuple[str, str]:
        token = self.peek()
        if token is None:
            raise NetlistError(f"expression {_short(self.text)!r} ends too early")
        self.pos += 1
        return token

    def expect(self, op: str) -> None:
        token = self.take()
        if token != ("op", op):
            raise NetlistError(f"expected {op!r} in expression {_short(self.text)!r}, got {token[1]!r}")

    def deeper(self) -> None:
        self.level += 1
        if self.level > MAX_NESTING:
            raise LimitError(f"expression {_short(self.text)!r} nests more than {MAX_NESTING} levels "
                             "(limit MAX_NESTING)")

    def parse(self) -> Expr:
        if not self.tokens:
            raise NetlistError("empty expression")
        value = self.sum()
        if self.peek() is not None:
            raise NetlistError(f"unexpected {self.peek()[1]!r} in expression {_short(self.text)!r}")
        return _finite_real(value, self.text)

    def sum(self) -> Expr:
        terms = [self.product()]
        while self.peek() in (("op", "+"), ("op", "-")):
            op = self.take()[1]
            rhs = self.product()
            terms.append(rhs if op == "+" else -rhs)
        return terms[0] if len(terms) == 1 else add(*terms)

    def product(self) -> Expr:
        value = self.unary()
        while self.peek() in (("op", "*"), ("op", "/")):
            op = self.take()[1]
            rhs = self.unary()
            if op == "/":
                if rhs == 0:
                    raise NetlistError(f"division by zero in expression {_short(self.text)!r}")
                value = value / rhs
            else:
                value = value * rhs
        return value

    def unary(self) -> Expr:
        signs = 1
        count = 0
        while self.peek() in (("op", "-"), ("op", "+")):
            if self.take()[1] == "-":
                signs = -signs
            count += 1
            if count > MAX_NESTING:
                raise LimitError(f"expression {_short(self.text)!r} has more than {MAX_NESTING} signs in a row")
        value = self.power()
        return -value if signs < 0 else value

    def power(self) -> Expr:
        base = self.atom()
        if self.peek() in (("op", "**"), ("op", "^")):
            self.take()
            self.deeper()
            exponent = self.unary()  # right-associative, allows 2**-1
            self.level -= 1
            if isinstance(base, Number) and base.value == 0 and isinstance(exponent, Number) and exponent.value < 0:
                raise NetlistError(f"division by zero in expression {_short(self.text)!r}")
            return base**exponent
        return base

    def atom(self) -> Expr:
        kind, text = self.take()
        if kind == "num":
            value = try_parse_number(text)
            if value is None:
                raise NetlistError(f"bad number {text!r} in expression {_short(self.text)!r}")
            return value
        if kind == "name":
            if self.peek() == ("op", "("):
                if text.lower() not in FUNCTIONS:
                    raise NetlistError(f"unknown function {text!r} (allowed: {', '.join(FUNCTIONS)})")
                self.take()
                self.deeper()
                argument = self.sum()
                self.level -= 1
                self.expect(")")
                return call(text, argument)
            return self.names.get(text.lower(), Symbol(text))
        if text == "(":
            self.deeper()
            value = self.sum()
            self.level -= 1
            self.expect(")")
            return value
        raise NetlistError(f"unexpected {text!r} in expression {_short(self.text)!r}")


def _finite_real(value: Expr, text: str) -> Expr:
    """``value`` if a numeric value is real and within float range, else a NetlistError."""
    if value.is_number and not isinstance(value, Number):
        try:
            number = value.evaluate({})
        except (OverflowError, ZeroDivisionError, ValueError):
            number = math.nan
        if isinstance(number, complex) or not math.isfinite(number) or (
                number != 0 and not 10.0**-MAX_DECIMAL_EXPONENT < abs(number) < 10.0**MAX_DECIMAL_EXPONENT):
            raise NetlistError(f"expression {_short(text)!r} is not a finite real number")
    if isinstance(value, Number) and value.value and not (
            Fraction(1, 10**MAX_DECIMAL_EXPONENT) < abs(value.value) < 10**MAX_DECIMAL_EXPONENT):
        raise NetlistError(f"expression {_short(text)!r} is out of range (beyond 1e+-{MAX_DECIMAL_EXPONENT})")
    return value


def parse_expression(text: str, names: Mapping[str, Expr] | None = None) -> Expr:
    """Parse an arithmetic expression over numbers and names.

    Parameters
    ----------
    text : str
        The expression, without braces.
    names : mapping, optional
        Known names (lower-case keys), e.g. ``.param`` values, substituted in
        place; any other name becomes a free symbol, case preserved.

    Raises
    ------
    NetlistError
        Syntax, unknown function, division by zero, a value that is not a finite real.
    LimitError
        Beyond one of the module's limits.

    Examples
    --------
    >>> parse_expression("sqrt(4)"), parse_expression("2^-1"), parse_expression("x*x/y")
    (2, 1/2, x**2/y)
    """
    return _Parser(text, names or {}).parse()


def parse_value(text: str, names: Mapping[str, Expr] | None = None) -> Expr:
    """Read an element value: a number, a bare name, or ``{expression}``.

    Examples
    --------
    >>> parse_value("1k"), parse_value("RE"), parse_value("{RE/2}")
    (1000, RE, RE/2)
    """
    text = text.strip()
    if text.startswith("{") or text.startswith("'"):
        closing = "}" if text.startswith("{") else "'"
        if not text.endswith(closing) or len(text) < 2:
            raise NetlistError(f"unclosed expression {_short(text)!r}")
        return parse_expression(text[1:-1], names)
    number = try_parse_number(text)
    if number is not None:
        return number
    if _NAME.fullmatch(text):
        return (names or {}).get(text.lower(), Symbol(text))
    raise NetlistError(f"expected a number, a name or {{expression}}, got {_short(text)!r}")
