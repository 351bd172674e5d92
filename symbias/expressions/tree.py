"""The expression tree: exact, immutable, hashable nodes and the canonical constructors.

Part of :mod:`symbias.expressions` (read its docstring first).  Nodes keep a
light canonical form as they are built: sums and products flattened, numbers
folded exactly, like terms and equal bases merged, arguments in a fixed
order, so equal values compare equal.  Numeric evaluation, expansion into
monomials and conversion to sympy are free functions of the tree in
:mod:`~symbias.expressions.evaluation`, :mod:`~symbias.expressions.expansion`
and :mod:`~symbias.expressions.conversion`; the methods of the same names
call them.

Examples
--------
>>> x = Symbol("x")
>>> (x + x) * 3, x * x / 2, (2 * x) ** 2
(6*x, x**2/2, 4*x**2)
"""

from __future__ import annotations

import math
from fractions import Fraction
from typing import Any, Iterable, Mapping

from ..errors import LimitError, NetlistError
from .limits import MAX_BITS, MAX_DEPTH, MAX_EXPONENT, MAX_NODES

__all__ = ["Expr", "Number", "Symbol", "Sum", "Product", "Power", "Call", "coerce", "substitute", "add", "multiply",
           "power", "call", "ZERO", "ONE", "MINUS_ONE", "FUNCTIONS"]

#: Functions allowed inside ``{...}`` (``ln`` is ``log``).
FUNCTIONS = ("sqrt", "exp", "log", "ln", "abs")


class Expr:
    """Base of the expression nodes: immutable, hashable, exact.

    Arithmetic with ``+ - * / **`` (and with ints and Fractions) builds new
    canonical nodes.  Subclasses: :class:`Number`, :class:`Symbol`,
    :class:`Sum`, :class:`Product`, :class:`Power`, :class:`Call`.
    """

    __slots__ = ("_hash", "_text", "size", "depth")
    _rank = 9
    #: The node kind, read by the free functions of the sibling modules (number, symbol, add, mul, pow, call).
    op = ""

    def _finish(self, children: Iterable["Expr"] = ()) -> None:
        children = tuple(children)
        self.size = 1 + sum(c.size for c in children)
        self.depth = 1 + max((c.depth for c in children), default=0)
        if self.size > MAX_NODES:
            raise LimitError(f"expression has more than {MAX_NODES} nodes (limit MAX_NODES); "
                             "give the value as a number or split it into .param steps that reduce to numbers")
        if self.depth > MAX_DEPTH:
            raise LimitError(f"expression nests more than {MAX_DEPTH} levels (limit MAX_DEPTH), as .param steps that "
                             "each wrap the last can build; give some intermediate values as numbers")
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
        return add(self, coerce(other))

    def __radd__(self, other):
        return add(coerce(other), self)

    def __sub__(self, other):
        return add(self, multiply(MINUS_ONE, coerce(other)))

    def __rsub__(self, other):
        return add(coerce(other), multiply(MINUS_ONE, self))

    def __mul__(self, other):
        return multiply(self, coerce(other))

    def __rmul__(self, other):
        return multiply(coerce(other), self)

    def __truediv__(self, other):
        return multiply(self, power(coerce(other), MINUS_ONE))

    def __rtruediv__(self, other):
        return multiply(coerce(other), power(self, MINUS_ONE))

    def __neg__(self):
        return multiply(MINUS_ONE, self)

    def __pos__(self):
        return self

    def __pow__(self, other):
        return power(self, coerce(other))

    def __rpow__(self, other):
        return power(coerce(other), self)

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

    # -- conversions (free functions of the tree, in sibling modules) --------------------------
    def evaluate(self, values: Mapping[str, Any]):
        """Numeric value for symbol values given by name (floats, complex or numpy arrays).

        Raises
        ------
        NetlistError
            If a symbol has no value.
        """
        from .evaluation import evaluate

        return evaluate(self, values)

    def to_sympy(self):
        """The same value as a sympy expression (imports sympy)."""
        from .conversion import to_sympy

        return to_sympy(self)

    def terms(self) -> dict[tuple[tuple["Expr", int], ...], Fraction]:
        """The expanded form ``{monomial: coefficient}`` (see :mod:`~symbias.expressions.expansion`).

        Raises
        ------
        LimitError
            Beyond :data:`~symbias.expressions.limits.MAX_TERMS` monomials.
        """
        from .expansion import expand

        return expand(self)


    def __repr__(self) -> str:
        return str(self)

    def __str__(self) -> str:
        if self._text is None:
            from .formatting import text

            self._text = text(self)
        return self._text


class Number(Expr):
    """An exact rational number.

    Examples
    --------
    >>> Number(Fraction(1, 4)) + 1, float(Number(3))
    (5/4, 3.0)
    """

    __slots__ = ("value",)
    op = "number"
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

    def __float__(self) -> float:
        return float(self.value)

    def __int__(self) -> int:
        return int(self.value)


class Symbol(Expr):
    """A named free symbol (case kept).

    Examples
    --------
    >>> Symbol("RE") * 2
    2*RE
    """

    __slots__ = ("name",)
    op = "symbol"
    _rank = 1

    def __init__(self, name: str):
        self.name = str(name)
        self._finish()

    def __reduce__(self):
        return (Symbol, (self.name,))

    def _key(self):
        return (self.name,)


class Sum(Expr):
    """A sum of two or more terms (build with ``+``, not directly)."""

    __slots__ = ("args",)
    op = "add"
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


class Product(Expr):
    """A product of two or more factors (build with ``*``, not directly)."""

    __slots__ = ("args",)
    op = "mul"
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


class Power(Expr):
    """``base**exponent`` (build with ``**``, not directly)."""

    __slots__ = ("base", "exponent")
    op = "pow"
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


class Call(Expr):
    """A function of one argument: ``exp``, ``log``, ``abs`` (``sqrt`` is a power of 1/2)."""

    __slots__ = ("function", "argument")
    op = "call"
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


ZERO = Number(0)
ONE = Number(1)
MINUS_ONE = Number(-1)


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


# ---------------------------------------------------------------------------------------------
# canonical constructors
# ---------------------------------------------------------------------------------------------
def coerce(value: Any) -> Expr:
    """An :class:`Expr` for an Expr, an int, a Fraction or a finite float (converted exactly).

    (:func:`symbias.expressions.as_expr` also reads text and sympy expressions.)

    Examples
    --------
    >>> coerce(0.5), coerce(3)
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
    raise NetlistError(f"not a value: {value!r}")


def substitute(node: Expr, values: Mapping[str, Any]) -> Expr:
    """A copy of ``node`` with the symbols named in ``values`` replaced, canonical form rebuilt.

    Examples
    --------
    >>> x, y = Symbol("x"), Symbol("y")
    >>> substitute(x * y + x, {"x": 2})
    2*y + 2
    """
    op = node.op
    if op == "number":
        return node
    if op == "symbol":
        return coerce(values[node.name]) if node.name in values else node
    if op in ("add", "mul"):
        return (add if op == "add" else multiply)(*(substitute(a, values) for a in node.args))
    if op == "pow":
        return power(substitute(node.base, values), substitute(node.exponent, values))
    return call(node.function, substitute(node.argument, values))


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
        if base not in exponents:  # a canonical factor's exponent is already canonical
            exponents[base] = exponent
            order.append(base)
        else:
            exponents[base] = add(exponents[base], exponent)
    if coeff == 0:
        return ZERO
    others = [arg for arg in flat if not isinstance(arg, Number)]
    if coeff == 1 and len(others) == 1:
        return others[0]  # one canonical factor times 1 (the 1/x of every resistor stamp) is already canonical
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
            raise LimitError(f"exponent {e} is too large (limit MAX_EXPONENT = {MAX_EXPONENT}); write the value as a "
                             "number or a product of smaller powers")
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
                    raise LimitError(f"the number {b}**{e} is too large (limit MAX_BITS = {MAX_BITS} bits); write it "
                                     "with an exponent (1e300)")
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
