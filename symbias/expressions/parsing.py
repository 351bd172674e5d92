"""Reading values: SPICE numbers and ``{expressions}``, by a restricted recursive-descent parser.

Part of :mod:`symbias.expressions`.  Only numbers, names, ``+ - * /``,
powers (``**`` or ``^``), parentheses and the functions of
:data:`~symbias.expressions.tree.FUNCTIONS` are accepted; nothing is ever
evaluated as Python.

Examples
--------
>>> parse_value("1k"), parse_value("RE"), parse_value("{RE/2}")
(1000, RE, RE/2)
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from fractions import Fraction
from typing import Any

from ..errors import LimitError, NetlistError
from .limits import MAX_DECIMAL_EXPONENT, MAX_DIGITS, MAX_LENGTH, MAX_NESTING
from .tree import FUNCTIONS, Expr, Number, Symbol, add, call, coerce

__all__ = ["SUFFIXES", "try_parse_number", "parse_number", "parse_expression", "parse_value", "as_expr"]

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

_NUMBER = re.compile(r"([+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?)([a-zA-Z]*)", re.ASCII)
_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*", re.ASCII)


def as_expr(value: Any) -> Expr:
    """An :class:`~symbias.expressions.tree.Expr` for an Expr, a number, value text or a sympy expression.

    Numbers (int, Fraction, finite float) convert exactly; text is read as an
    element value (:func:`parse_value`); a sympy expression is read by its text.

    Examples
    --------
    >>> as_expr(0.5), as_expr("2k"), as_expr(3)
    (1/2, 2000, 3)
    """
    if isinstance(value, str):
        return parse_value(value)
    if type(value).__module__.startswith("sympy"):  # a sympy number or expression, read by its text
        if getattr(value, "is_Rational", False):
            return Number(Fraction(int(value.p), int(value.q)))
        return parse_expression(str(value).replace("Abs(", "abs("))
    return coerce(value)


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
        raise LimitError(f"number {text.strip()[:20]!r}... has more than {MAX_DIGITS} characters (limit MAX_DIGITS); "
                         "write it with an exponent (1.5e300)")
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
            raise LimitError(f"expression of {len(text)} characters is longer than {MAX_LENGTH} (limit MAX_LENGTH); "
                             "split it into .param steps")
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
                             "(limit MAX_NESTING); split it into .param steps")

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
                raise LimitError(f"expression {_short(self.text)!r} has more than {MAX_NESTING} signs in a row "
                                 "(limit MAX_NESTING); write one sign")
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
            return _named(text, self.names)
        if text == "(":
            self.deeper()
            value = self.sum()
            self.level -= 1
            self.expect(")")
            return value
        raise NetlistError(f"unexpected {text!r} in expression {_short(self.text)!r}")


#: Words that read as names but mean a number that is not finite; refused rather than made symbols.
_NOT_FINITE = frozenset({"nan", "inf", "infinity"})


def _named(text: str, names: Mapping[str, Expr]) -> Expr:
    """A ``.param`` value or a free symbol; ``nan`` and ``inf`` are refused (no value is infinite or undefined)."""
    if text.lower() in _NOT_FINITE:
        raise NetlistError(f"{text!r} is not a value: numbers must be finite (an open circuit is no element, a short a "
                           "0 V source)")
    return names.get(text.lower(), Symbol(text))


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
        return _named(text, names or {})
    raise NetlistError(f"expected a number, a name or {{expression}}, got {_short(text)!r}")
