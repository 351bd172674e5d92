"""Values and expressions in netlist text, read without ``eval``.

Lowest level of the text side: turns a SPICE number (``4.7k``, ``10uF``,
``1meg``) into an exact :class:`sympy.Rational` and a ``{expression}`` into a
sympy expression built node by node by a small recursive-descent parser.  Only
numbers, names, ``+ - * / **`` (``^`` too), parentheses and the functions in
:data:`FUNCTIONS` are accepted; anything else is a :class:`NetlistError`.

Examples
--------
>>> parse_number("4.7k")
4700
>>> parse_expression("2*RE + 1/gm")
2*RE + 1/gm
"""

from __future__ import annotations

import re
from collections.abc import Mapping

import sympy

from .errors import NetlistError

__all__ = ["parse_number", "try_parse_number", "parse_expression", "parse_value", "FUNCTIONS", "SUFFIXES"]

#: SPICE scale suffixes, case-insensitive; ``meg`` must be tried before ``m``.
SUFFIXES: dict[str, sympy.Rational] = {
    "t": sympy.Integer(10) ** 12,
    "g": sympy.Integer(10) ** 9,
    "meg": sympy.Integer(10) ** 6,
    "k": sympy.Integer(10) ** 3,
    "mil": sympy.Rational(254, 10) * sympy.Rational(1, 10**6),
    "m": sympy.Rational(1, 10**3),
    "u": sympy.Rational(1, 10**6),
    "n": sympy.Rational(1, 10**9),
    "p": sympy.Rational(1, 10**12),
    "f": sympy.Rational(1, 10**15),
}

#: Functions allowed inside ``{...}``.
FUNCTIONS = {
    "sqrt": sympy.sqrt,
    "exp": sympy.exp,
    "log": sympy.log,
    "ln": sympy.log,
    "abs": sympy.Abs,
}

#: Largest magnitude of a numeric exponent in an expression (``x**64`` is already far beyond any real use).
MAX_EXPONENT = 64

#: Largest decimal exponent of a number (IEEE doubles end near 1e308).
MAX_DECIMAL_EXPONENT = 308

#: Longest number, in characters (no real component value needs more).
MAX_DIGITS = 400

#: Largest exact number (in bits) a power of numbers may produce.
MAX_BITS = 4096


def _bits(value: sympy.Rational) -> int:
    return max(int(value.p).bit_length(), int(value.q).bit_length())


_NUMBER = re.compile(r"^([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)([a-zA-Z]*)$")
_NAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")


def try_parse_number(text: str) -> sympy.Rational | None:
    """Read a SPICE number exactly, or return None when ``text`` is not one.

    Trailing unit letters after the scale suffix are ignored, as SPICE does
    (``10uF`` is 10e-6, ``2kOhm`` is 2000).

    Examples
    --------
    >>> try_parse_number("10uF")
    1/100000
    >>> try_parse_number("RE") is None
    True
    """
    match = _NUMBER.match(text.strip())
    if not match:
        return None
    mantissa, letters = match.groups()
    exponent = re.search(r"[eE]([+-]?\d+)$", mantissa)
    if exponent and abs(int(exponent.group(1))) > MAX_DECIMAL_EXPONENT:
        # an exact 10**999999999 would take minutes to build; no real value is near it
        raise NetlistError(f"number {text.strip()!r} is out of range (exponent beyond +-{MAX_DECIMAL_EXPONENT})")
    if len(mantissa) > MAX_DIGITS:
        # Python refuses to convert integers of more than 4300 digits from text
        raise NetlistError(f"number {text.strip()[:20]!r}... has more than {MAX_DIGITS} characters")
    value = sympy.Rational(mantissa)
    letters = letters.lower()
    if letters.startswith("meg"):
        return value * SUFFIXES["meg"]
    if letters.startswith("mil"):
        return value * SUFFIXES["mil"]
    if letters and letters[0] in SUFFIXES:
        return value * SUFFIXES[letters[0]]
    return value


def parse_number(text: str) -> sympy.Rational:
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
    r"\s*(?:(?P<num>(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?[a-zA-Z]*)"
    r"|(?P<name>[A-Za-z_][A-Za-z0-9_]*)"
    r"|(?P<op>\*\*|[-+*/^(),]))"
)


def _tokenize(text: str) -> list[tuple[str, str]]:
    tokens = []
    pos = 0
    text = text.rstrip()
    while pos < len(text):
        match = _TOKEN.match(text, pos)
        if not match or match.end() == pos:
            raise NetlistError(f"unexpected character {text[pos:].strip()[:1]!r} in expression {text.strip()!r}")
        kind = match.lastgroup
        tokens.append((kind, match.group(kind)))
        pos = match.end()
    return tokens


class _Parser:
    """Recursive descent: sum -> product -> unary -> power -> atom."""

    def __init__(self, text: str, names: Mapping[str, sympy.Expr]):
        self.text = text
        self.tokens = _tokenize(text)
        self.pos = 0
        self.names = names

    def peek(self) -> tuple[str, str] | None:
        return self.tokens[self.pos] if self.pos < len(self.tokens) else None

    def take(self) -> tuple[str, str]:
        token = self.peek()
        if token is None:
            raise NetlistError(f"expression {self.text.strip()!r} ends too early")
        self.pos += 1
        return token

    def expect(self, op: str) -> None:
        token = self.take()
        if token != ("op", op):
            raise NetlistError(f"expected {op!r} in expression {self.text.strip()!r}, got {token[1]!r}")

    def parse(self) -> sympy.Expr:
        if not self.tokens:
            raise NetlistError("empty expression")
        value = self.sum()
        if self.peek() is not None:
            raise NetlistError(f"unexpected {self.peek()[1]!r} in expression {self.text.strip()!r}")
        return _finite_real(value, self.text)

    def sum(self) -> sympy.Expr:
        value = self.product()
        while self.peek() in (("op", "+"), ("op", "-")):
            op = self.take()[1]
            rhs = self.product()
            value = value + rhs if op == "+" else value - rhs
        return value

    def product(self) -> sympy.Expr:
        value = self.unary()
        while self.peek() in (("op", "*"), ("op", "/")):
            op = self.take()[1]
            rhs = self.unary()
            if op == "/":
                if rhs == 0:
                    raise NetlistError(f"division by zero in expression {self.text.strip()!r}")
                value = value / rhs
            else:
                value = value * rhs
        return value

    def unary(self) -> sympy.Expr:
        if self.peek() in (("op", "-"), ("op", "+")):
            op = self.take()[1]
            value = self.unary()
            return -value if op == "-" else value
        return self.power()

    def power(self) -> sympy.Expr:
        base = self.atom()
        if self.peek() in (("op", "**"), ("op", "^")):
            self.take()
            exponent = self.unary()  # right-associative, allows 2**-1
            if exponent.is_Number and abs(exponent) > MAX_EXPONENT:
                # exact arithmetic would build 9**9**9 digit by digit: refuse instead of hanging
                raise NetlistError(
                    f"exponent {exponent} in expression {self.text.strip()!r} is too large (at most {MAX_EXPONENT})"
                )
            if exponent.is_Number and base.is_Rational and _bits(base) * abs(exponent) > MAX_BITS:
                raise NetlistError(f"number {base}**{exponent} in expression {self.text.strip()!r} is too large")
            return base**exponent
        return base

    def atom(self) -> sympy.Expr:
        kind, text = self.take()
        if kind == "num":
            value = try_parse_number(text)
            if value is None:
                raise NetlistError(f"bad number {text!r} in expression {self.text.strip()!r}")
            return value
        if kind == "name":
            if self.peek() == ("op", "("):
                function = FUNCTIONS.get(text.lower())
                if function is None:
                    raise NetlistError(f"unknown function {text!r} (allowed: {', '.join(FUNCTIONS)})")
                self.take()
                argument = self.sum()
                self.expect(")")
                return function(argument)
            return self.names.get(text.lower(), sympy.Symbol(text))
        if text == "(":
            value = self.sum()
            self.expect(")")
            return value
        raise NetlistError(f"unexpected {text!r} in expression {self.text.strip()!r}")


def _finite_real(value: sympy.Expr, text: str) -> sympy.Expr:
    """``value`` if it is real and finite (a number also within float range), else a NetlistError."""
    bad = value.has(sympy.I, sympy.zoo, sympy.oo, sympy.nan)
    if not bad and value.is_number and not value.is_Rational:
        magnitude = abs(value.evalf(20))  # e.g. exp(1e6), far beyond any float
        bad = not (value.is_real and magnitude.is_finite) or magnitude > 10**MAX_DECIMAL_EXPONENT or (
            0 < magnitude < sympy.Float(10) ** -MAX_DECIMAL_EXPONENT
        )
    if bad:
        raise NetlistError(f"expression {text.strip()!r} is not a finite real number")
    return value


def parse_expression(text: str, names: Mapping[str, sympy.Expr] | None = None) -> sympy.Expr:
    """Parse an arithmetic expression over numbers and names.

    Parameters
    ----------
    text : str
        The expression, without braces.
    names : mapping, optional
        Known names (lower-case keys), e.g. ``.param`` values, substituted in
        place; any other name becomes a free symbol, case preserved.

    Examples
    --------
    >>> parse_expression("R1*(1+k)", {"k": parse_number("2")})
    3*R1
    >>> parse_expression("sqrt(4)")
    2
    """
    return _Parser(text, names or {}).parse()


def parse_value(text: str, names: Mapping[str, sympy.Expr] | None = None) -> sympy.Expr:
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
            raise NetlistError(f"unclosed expression {text!r}")
        return parse_expression(text[1:-1], names)
    number = try_parse_number(text)
    if number is not None:
        return number
    if _NAME.match(text):
        return (names or {}).get(text.lower(), sympy.Symbol(text))
    raise NetlistError(f"expected a number, a name or {{expression}}, got {text!r}")
