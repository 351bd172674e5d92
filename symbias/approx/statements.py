"""Magnitude statements: their grammar, and the defaults of hand analysis.

Lowest level of :mod:`symbias.approx`: text in, :class:`Assumption` out.  No
numbers are sampled here; :mod:`symbias.approx.magnitudes` turns statements
into a log-space box.

Every statement is read as the range of a monomial (a product of powers of
symbols):

=====================  ===================================================
statement              range it stands for
=====================  ===================================================
``A >> B``             ``A/B`` in [30, 1e4]  (:data:`MUCH_GREATER`)
``A << B``             ``B/A`` in [30, 1e4]
``A ~ B``              ``A/B`` in [1/3, 3]   (:data:`COMPARABLE`)
``A in [lo, hi]``      ``A`` in [lo, hi]; also ``lo < A < hi``
``A = v``              ``A`` fixed at ``v``
=====================  ===================================================

Defaults follow hand analysis (:func:`default_assumptions`): per device or
matched group ``gm*ro >> 1``; for bipolar devices ``beta >> 1`` read as beta in
[30, 1000] (:data:`BETA_RANGE`) and ``ro >> rpi`` (``VA/VT`` of tens of volts
over 26 mV is about 1e3, against beta about 1e2); for MOS devices the body
factor ``gmb/gm`` in [0.05, 0.4] (:data:`BODY_RANGE`); devices of an unmatched
circuit are comparable (``gm_Q2 ~ gm_Q1``, ``ro_Q2 ~ ro_Q1``).  A numeric
nominal point enters as ranges (:func:`nominal_ranges`).

Examples
--------
>>> a = parse_assumption("RE >> 2/gm")
>>> a.monomial, a.low, a.high
('RE*gm', 60.0, 20000.0)
>>> [s.text for s in nominal_ranges({"gm_Q1": 1e-3, "VCC": -5.0}, 0.2, names=["gm_Q1"])]
['gm_Q1 in [0.0008, 0.0012]']
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Iterable, Mapping, Sequence

import numpy as np

from ..errors import AssumptionError, SymbiasError
from ..expressions import Expr, Symbol, parse_expression, try_parse_number
from ..symbols import owners

__all__ = [
    "Assumption",
    "parse_assumption",
    "check_symbols",
    "default_assumptions",
    "nominal_ranges",
    "MUCH_GREATER",
    "COMPARABLE",
    "BETA_RANGE",
    "BODY_RANGE",
]

#: Range of ``A/B`` read from ``A >> B``.
MUCH_GREATER = (30.0, 1e4)
#: Range of ``A/B`` read from ``A ~ B``.
COMPARABLE = (1 / 3, 3.0)
#: Range of beta read from the default ``beta >> 1``.
BETA_RANGE = (30.0, 1000.0)
#: Range of the MOS body factor ``gmb/gm`` (about 0.1-0.3 in bulk processes; common practice).
BODY_RANGE = (0.05, 0.4)

#: Device parameters the hand-analysis defaults speak about.
_DEFAULT_PARAMETERS = ("gm", "gmb", "ro", "rpi", "beta")


@dataclass(frozen=True)
class Assumption:
    """A magnitude statement: ``low <= prod(symbol**exponent) <= high``.

    Parameters
    ----------
    text : str
        The statement as written (``"gm*ro >> 1"``).
    powers : tuple of (str, float)
        The monomial, as (symbol name, exponent) pairs sorted by name.
    low, high : float
        Its range, ``0 < low <= high``.
    origin : str
        ``user``, ``default``, ``reference`` (scale of the box) or ``free``
        (a symbol no statement covers).

    Examples
    --------
    >>> a = parse_assumption("gm*ro >> 1")
    >>> a.monomial, a.low, a.high
    ('gm*ro', 30.0, 10000.0)
    >>> str(a)
    'gm*ro >> 1'
    """

    text: str
    powers: tuple[tuple[str, float], ...]
    low: float
    high: float
    origin: str = "user"

    def __post_init__(self) -> None:
        if not self.powers:
            raise AssumptionError(f"{self.text!r} names no symbol")
        if not (0 < self.low <= self.high) or not math.isfinite(self.high):
            raise AssumptionError(f"{self.text!r}: the range must be positive and finite, low <= high")
        object.__setattr__(self, "powers", tuple(sorted((str(n), float(e)) for n, e in self.powers)))

    @property
    def names(self) -> frozenset[str]:
        """Symbols the statement involves."""
        return frozenset(n for n, _ in self.powers)

    @property
    def monomial(self) -> str:
        """The monomial as text (``gm*ro``, ``gmb/gm``)."""
        up = [_power_text(n, e) for n, e in self.powers if e > 0]
        down = [_power_text(n, -e) for n, e in self.powers if e < 0]
        text = "*".join(up) or "1"
        if down:
            text += "/" + (down[0] if len(down) == 1 else "(" + "*".join(down) + ")")
        return text

    def describe(self) -> str:
        """The statement with the range it stands for.

        Examples
        --------
        >>> parse_assumption("RE >> 1/gm").describe()
        'RE >> 1/gm  (RE*gm in [30, 1e+04])'
        """
        if self.origin in ("reference", "free"):
            return self.text
        if self.low == self.high:
            span = f"{self.monomial} = {self.low:.4g}"
        else:
            span = f"{self.monomial} in [{self.low:.4g}, {self.high:.4g}]"
        if self.text.replace(" ", "") == span.replace(" ", ""):
            return self.text
        return f"{self.text}  ({span})"

    def row(self, names: Sequence[str]) -> np.ndarray:
        """Exponent vector over ``names`` (the statement in log space).

        Examples
        --------
        >>> parse_assumption("ro >> beta/gm").row(["beta", "gm", "ro"]).tolist()
        [-1.0, 1.0, 1.0]
        """
        index = {n: i for i, n in enumerate(names)}
        missing = sorted(self.names - index.keys())
        if missing:
            raise AssumptionError(f"{self.text!r} speaks of {', '.join(missing)}, not among the symbols in question")
        out = np.zeros(len(names))
        for n, e in self.powers:
            out[index[n]] = e
        return out

    def __str__(self) -> str:
        return self.text


def _power_text(name: str, exponent: float) -> str:
    if exponent == 1:
        return name
    return f"{name}**{int(exponent) if float(exponent).is_integer() else exponent}"


# the statement grammar (operators and brackets), not symbol names: the sides are read by
# the expression parser
_CHAIN = re.compile(r"^(.+?)(<=|<|>=|>)(.+?)(<=|<|>=|>)(.+)$")
_RANGE = re.compile(r"^(.+?)\s+in\s*\[(.+),(.+)\]$", re.IGNORECASE)


def parse_assumption(text: str, origin: str = "user") -> Assumption:
    """Read a statement such as ``gm*ro >> 1``, ``RE >> 1/gm``, ``beta in [50, 200]``.

    Sides are read by the restricted expression parser (never ``eval``);
    bounds accept SPICE suffixes (``3m``).  See the module table for the
    meaning of each operator.

    Raises
    ------
    AssumptionError
        If the text has no known operator or the ratio is not a monomial.

    Examples
    --------
    >>> parse_assumption("50 < beta < 200").describe()
    '50 < beta < 200  (beta in [50, 200])'
    >>> parse_assumption("gm_Q2 ~ gm_Q1").monomial
    'gm_Q2/gm_Q1'
    """
    s = " ".join(text.split())
    if not s:
        raise AssumptionError("empty assumption")
    try:
        statement = _read(s, origin)
    except SymbiasError as err:
        if isinstance(err, AssumptionError):
            raise
        raise AssumptionError(f"cannot read assumption {s!r}: {err.reason}") from None
    if statement is None:
        raise AssumptionError(
            f"cannot read assumption {s!r}: expected A >> B, A << B, A ~ B, A in [lo, hi], lo < A < hi or A = v"
        )
    return statement


def check_symbols(statements: Iterable[Assumption | str], names: Iterable[str]) -> tuple[Assumption, ...]:
    """The statements read, after checking that each speaks only of symbols in ``names``.

    A statement about a symbol the results do not have would otherwise be
    left out without a word (a typo, or an assumption meant for another
    circuit).

    Raises
    ------
    AssumptionError
        Naming the first unknown symbol and the symbols there are.

    Examples
    --------
    >>> [a.text for a in check_symbols(["gm*ro >> 1"], ["gm", "ro", "rpi"])]
    ['gm*ro >> 1']
    >>> check_symbols(["foo >> bar"], ["gm", "ro"])
    Traceback (most recent call last):
    ...
    symbias.errors.AssumptionError: <input>: 'foo >> bar' speaks of bar, which no derived result has (its symbols: gm, ro)
    """
    known = set(names)
    read = tuple(s if isinstance(s, Assumption) else parse_assumption(s) for s in statements)
    for statement in read:
        unknown = sorted(statement.names - known)
        if unknown:
            raise AssumptionError(f"{statement.text!r} speaks of {unknown[0]}, which no derived result has "
                                  f"(its symbols: {', '.join(sorted(known)) or 'none'})")
    return read


def _read(s: str, origin: str) -> Assumption | None:
    """The statement of one-space-separated text, or None when no operator fits."""
    if ">>" in s or "<<" in s:
        op = ">>" if ">>" in s else "<<"
        left, right = _split(s, op)
        ratio = _side(left) / _side(right) if op == ">>" else _side(right) / _side(left)
        return _statement(s, ratio, *MUCH_GREATER, origin)
    if "~" in s:
        left, right = _split(s, "~")
        return _statement(s, _side(left) / _side(right), *COMPARABLE, origin)
    match = _RANGE.match(s)
    if match:
        return _statement(s, _side(match.group(1)), _bound(match.group(2)), _bound(match.group(3)), origin)
    match = _CHAIN.match(s)
    if match:
        a, op1, b, op2, c = (g.strip() for g in match.groups())
        if op1[0] != op2[0]:
            raise AssumptionError(f"{s!r}: write a range as lo < X < hi")
        low, high = (_bound(a), _bound(c)) if op1[0] == "<" else (_bound(c), _bound(a))
        return _statement(s, _side(b), low, high, origin)
    if "=" in s:
        left, right = _split(s, "=")
        value = _bound(right)
        return _statement(s, _side(left), value, value, origin)
    return None


def _split(text: str, op: str) -> tuple[str, str]:
    parts = text.split(op)
    if len(parts) != 2 or not parts[0].strip() or not parts[1].strip():
        raise AssumptionError(f"cannot read assumption {text!r}: expected one {op!r} between two sides")
    return parts[0].strip(), parts[1].strip()


def _side(text: str) -> Expr:
    number = try_parse_number(text)
    return number if number is not None else parse_expression(text)


def _bound(text: str) -> float:
    value = _side(text.strip())
    if not value.is_number:
        raise AssumptionError(f"bound {text.strip()!r} is not a number")
    return float(value)


def _statement(text: str, ratio: Expr, low: float, high: float, origin: str) -> Assumption:
    terms = ratio.terms()
    if len(terms) != 1:
        raise AssumptionError(f"{text!r}: the ratio of the two sides must be a product of powers of symbols")
    (monomial, coeff), = terms.items()
    if not coeff > 0:
        raise AssumptionError(f"{text!r}: both sides must be positive")
    powers = []
    for base, exponent in monomial:
        if not isinstance(base, Symbol):
            raise AssumptionError(f"{text!r}: the ratio of the two sides must be a product of powers of symbols")
        powers.append((base.name, float(exponent)))
    if not powers:
        raise AssumptionError(f"{text!r} compares numbers only")
    scale = float(coeff)
    return Assumption(text, tuple(powers), low / scale, high / scale, origin)


def default_assumptions(names: Iterable[str]) -> tuple[Assumption, ...]:
    """Hand-analysis statements for the device symbols among ``names``.

    Examples
    --------
    >>> [a.text for a in default_assumptions(["beta", "gm", "ro"])]
    ['gm*ro >> 1', 'beta >> 1', 'ro >> beta/gm']
    >>> [a.text for a in default_assumptions(["gm_M1", "gm_M2", "gmb_M2", "ro_M1", "ro_M2"])]
    ['gm_M1*ro_M1 >> 1', 'gm_M2 ~ gm_M1', 'ro_M2 ~ ro_M1', 'gm_M2*ro_M2 >> 1', '0.05 < gmb_M2/gm_M2 < 0.4']
    """
    groups = {owner: {k: v for k, v in params.items() if k in _DEFAULT_PARAMETERS}
              for owner, params in owners(names).items()}
    groups = {owner: params for owner, params in groups.items() if params}
    own = {owner: _device_defaults(groups[owner]) for owner in sorted(groups)}
    late = [statement for owner in sorted(groups) for statement in _ordering_defaults(groups[owner])]
    cross: list[Assumption] = []
    for parameter in ("gm", "ro", "rpi", "beta"):
        members = [groups[s][parameter] for s in sorted(groups) if parameter in groups[s]]
        for other in members[1:]:
            cross.append(Assumption(f"{other} ~ {members[0]}", ((other, 1), (members[0], -1)), *COMPARABLE,
                                    "default"))
    # the first device's ranges and the comparisons to it span the box; the other devices' own
    # statements then act as checks, which keeps most random points admissible
    ordered = list(own[min(own)]) if own else []
    ordered += cross
    for owner in sorted(own)[1:]:
        ordered += own[owner]
    return tuple(ordered + late)


def _device_defaults(p: Mapping[str, str]) -> list[Assumption]:
    """One device's (or matched group's) own ranges: intrinsic gain, current gain, body factor."""
    gm, ro, rpi, beta, gmb = (p.get(k) for k in ("gm", "ro", "rpi", "beta", "gmb"))
    out = []
    if gm and ro:
        out.append(Assumption(f"{gm}*{ro} >> 1", ((gm, 1), (ro, 1)), *MUCH_GREATER, "default"))
    if beta:
        out.append(Assumption(f"{beta} >> 1", ((beta, 1),), *BETA_RANGE, "default"))
    if rpi and gm:
        out.append(Assumption(f"{rpi} >> 1/{gm}", ((rpi, 1), (gm, 1)), *BETA_RANGE, "default"))
    if gmb and gm:
        out.append(Assumption(f"{BODY_RANGE[0]:g} < {gmb}/{gm} < {BODY_RANGE[1]:g}", ((gmb, 1), (gm, -1)),
                              *BODY_RANGE, "default"))
    return out


def _ordering_defaults(p: Mapping[str, str]) -> list[Assumption]:
    """``ro >> rpi`` of a bipolar device (``ro >> beta/gm`` in the beta form)."""
    gm, ro, rpi, beta = (p.get(k) for k in ("gm", "ro", "rpi", "beta"))
    if ro and rpi:
        return [Assumption(f"{ro} >> {rpi}", ((ro, 1), (rpi, -1)), *MUCH_GREATER, "default")]
    if ro and beta and gm:
        return [Assumption(f"{ro} >> {beta}/{gm}", ((ro, 1), (gm, 1), (beta, -1)), *MUCH_GREATER, "default")]
    return []


def nominal_ranges(
    values: Mapping[str, float],
    spread: float = 0.3,
    *,
    names: Iterable[str] | None = None,
) -> tuple[Assumption, ...]:
    """Range statements around a numeric nominal point (e.g. an operating point).

    Each symbol ranges over ``[v*(1-spread), v*(1+spread)]``.  Given to
    :func:`~symbias.approx.approximate`, they replace the hand-analysis
    defaults on every symbol they cover.

    Parameters
    ----------
    values : mapping of symbol name to number
        SI values (``gm_Q1``, ``ro_Q1``, netlist symbols such as ``RE``).
    spread : float
        Relative half-width of each range, in [0, 1).
    names : iterable of str, optional
        Only these symbols (a formula's): the other values may then be of any
        sign (a negative supply, a zero ``gmb``).

    Raises
    ------
    AssumptionError
        For a spread outside [0, 1) or a value that is not a positive number.

    Examples
    --------
    >>> [a.describe() for a in nominal_ranges({"gm": 4e-3}, 0.25)]
    ['gm in [0.003, 0.005]']
    """
    spread = _number(spread, "spread")
    if not 0 <= spread < 1:
        raise AssumptionError(f"spread must be in [0, 1), got {spread:g}")
    wanted = None if names is None else set(names)
    out = []
    for name, value in sorted(values.items()):
        if wanted is not None and name not in wanted:
            continue
        value = _number(value, f"nominal value of {name}")
        if not value > 0:
            raise AssumptionError(f"nominal value of {name} must be positive, got {value:g}")
        low, high = value * (1 - spread), value * (1 + spread)
        out.append(Assumption(f"{name} in [{low:.4g}, {high:.4g}]", ((name, 1),), low, high, "user"))
    return tuple(out)


def _number(value: object, what: str) -> float:
    """A finite float, or an AssumptionError naming ``what``."""
    try:
        number = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise AssumptionError(f"{what} must be a number, got {value!r}") from None
    if not math.isfinite(number):
        raise AssumptionError(f"{what} must be finite, got {number:g}")
    return number
