"""Frequency-dependent results in numbers: coefficients of s, poles and zeros, responses, the -3 dB point.

Quantity level (beside :mod:`symbias.analyses`): it takes an exact
:class:`~symbias.formula.Formula` whose value depends on the Laplace variable
``s`` (device capacitances included) and a numeric point (the operating
point's symbol values), and gives

* :func:`laplace_terms`: numerator and denominator terms grouped by power of
  ``s`` (``N(s) = a0 + a1 s + ...``, ``D(s) = b0 + b1 s + ...``), straight from
  the ring polynomials;
* :func:`coefficients_at`: those coefficients as numbers at a point, each kept
  as a mantissa and a natural-log scale so that a product of many small
  capacitances and conductances neither underflows nor overflows;
* :func:`frequency_response`: ``H(j 2 pi f)`` over frequencies, the poles and
  zeros (roots of the coefficient polynomials, in rad/s, after scaling the
  frequency axis so the roots are well conditioned), the value as ``f -> 0``
  and the frequency where ``|H|`` has fallen 3 dB below it (for an output
  impedance: where the output resistance falls 3 dB).

Coefficients that are sums of terms of both signs are set to zero when they
cancel to within :data:`CANCELLATION` of the sum of their terms' magnitudes
(rounding, not circuit behaviour), so no spurious far-away root appears.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> z = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nC1 a 0 CA\\n"), "a")
>>> z.expr
RA/(CA*RA*s + 1)
>>> r = frequency_response(z, {"RA": 1e3, "CA": 1e-9}, [1e3, 1e6])
>>> round(abs(r.values[0])), round(r.corner / 1e3, 2), (-r.poles.real / (2 * np.pi)).round(-1).tolist()
(1000, 159.15, [159150.0])
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Mapping, Sequence

import numpy as np

from .errors import AnalysisError, UsageError
from .formula import Formula
from .symbols import LAPLACE

__all__ = [
    "LaplaceTerms",
    "Coefficients",
    "FrequencyResponse",
    "CANCELLATION",
    "laplace_terms",
    "is_frequency_dependent",
    "coefficients_at",
    "frequency_response",
    "log_frequencies",
    "evaluate_polynomial",
    "Root",
    "describe_roots",
]

#: A coefficient whose value is below this fraction of the sum of its terms' magnitudes is taken as zero.
CANCELLATION = 1e-11
#: Points per decade of the scan that brackets the -3 dB frequency before it is refined by bisection.
_SCAN_PER_DECADE = 40


@dataclass(frozen=True, eq=False)
class LaplaceTerms:
    """A formula's terms with their power of ``s``.

    Parameters
    ----------
    formula : Formula
    powers : tuple of numpy.ndarray
        Power of ``s`` of every numerator and every denominator term (the ring
        order of :meth:`~symbias.linear.polys.Ring.columns`), shifted so the
        lowest power over both sides is 0.
    laplace : tuple of int
        Ring generator indices of ``s`` and ``1/s`` (-1 when absent).
    """

    formula: Formula
    powers: tuple[np.ndarray, np.ndarray]
    laplace: tuple[int, int]

    @property
    def degrees(self) -> tuple[int, int]:
        """Highest power of ``s`` in numerator and denominator."""
        return tuple(int(p.max(initial=0)) for p in self.powers)


def is_frequency_dependent(formula: Formula) -> bool:
    """True when the formula holds the Laplace variable ``s``.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> is_frequency_dependent(output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\n"), "a"))
    False
    """
    return any(s.name == LAPLACE for s in formula.symbols)


def laplace_terms(formula: Formula) -> LaplaceTerms:
    """Group a formula's numerator and denominator terms by power of ``s``.

    Raises
    ------
    AnalysisError
        When ``s`` sits inside a non-polynomial sub-expression (then no power can be read).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> t = laplace_terms(output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nC1 a 0 CA\\n"), "a"))
    >>> [p.tolist() for p in t.powers], t.degrees
    ([[0], [1, 0]], (0, 1))
    """
    direct, inverse, inside = formula.symbol_generators(LAPLACE)
    if inside:
        raise AnalysisError(f"{formula.label}: s appears inside {inside[0]}; its powers cannot be read")
    powers = []
    for columns in formula.term_columns:
        exponents = columns.exponents  # only the columns of s and 1/s are read (the matrix can be large)
        power = np.zeros(len(exponents), dtype=np.int64)
        if direct is not None:
            power += exponents[:, direct]
        if inverse is not None:
            power -= exponents[:, inverse]
        powers.append(power)
    lowest = min(int(p.min(initial=0)) for p in powers)
    return LaplaceTerms(formula, (powers[0] - lowest, powers[1] - lowest),
                        (-1 if direct is None else direct, -1 if inverse is None else inverse))


@dataclass(frozen=True)
class Coefficients:
    """Numbers of ``N(s) = sum a_k s^k`` and ``D(s) = sum b_k s^k`` at one point.

    Coefficient ``k`` of a side is ``mantissa[k] * exp(scale[k])`` (``mantissa``
    0 for a zero coefficient), lowest power first.
    """

    numerator: np.ndarray
    numerator_scale: np.ndarray
    denominator: np.ndarray
    denominator_scale: np.ndarray

    def values(self) -> tuple[np.ndarray, np.ndarray]:
        """Plain float coefficients (may overflow or underflow for large networks)."""
        with np.errstate(over="ignore", under="ignore"):
            return (self.numerator * np.exp(self.numerator_scale),
                    self.denominator * np.exp(self.denominator_scale))

    def at(self, s: Any) -> np.ndarray:
        """``N(s)/D(s)`` for complex ``s`` (numbers or arrays)."""
        n, n_log = evaluate_polynomial(self.numerator, self.numerator_scale, s)
        d, d_log = evaluate_polynomial(self.denominator, self.denominator_scale, s)
        with np.errstate(over="ignore", under="ignore", divide="ignore", invalid="ignore"):
            return n / d * np.exp(n_log - d_log)

    def low_frequency(self) -> complex:
        """The limit of ``N(s)/D(s)`` as ``s -> 0`` (0 or inf when the lowest powers differ)."""
        n_low, d_low = _lowest(self.numerator), _lowest(self.denominator)
        if n_low is None:
            return 0.0
        if d_low is None or n_low < d_low:
            return math.inf
        if n_low > d_low:
            return 0.0
        with np.errstate(over="ignore", under="ignore"):
            return float(self.numerator[n_low] / self.denominator[d_low]
                         * np.exp(self.numerator_scale[n_low] - self.denominator_scale[d_low]))

    def roots(self, side: int) -> np.ndarray:
        """Roots (rad/s) of the numerator (side 0, the zeros) or denominator (side 1, the poles)."""
        mantissa, scale = (self.numerator, self.numerator_scale) if side == 0 else \
            (self.denominator, self.denominator_scale)
        return _roots(mantissa, scale)


def _lowest(mantissa: np.ndarray) -> int | None:
    nonzero = np.flatnonzero(mantissa)
    return int(nonzero[0]) if len(nonzero) else None


def evaluate_polynomial(mantissa: np.ndarray, scale: np.ndarray, s: Any) -> tuple[np.ndarray, np.ndarray]:
    """``sum mantissa[k] exp(scale[k]) s^k`` as (complex mantissa, log scale), for arrays of ``s``.

    Examples
    --------
    >>> value, log = evaluate_polynomial(np.array([1.0, 1.0]), np.array([0.0, 0.0]), 2j)
    >>> complex(np.round(value * np.exp(log), 12))
    (1+2j)
    """
    s = np.asarray(s, dtype=complex)
    used = np.flatnonzero(mantissa)
    if not len(used):
        return np.zeros(s.shape, dtype=complex), np.zeros(s.shape)
    k = used.astype(float)
    with np.errstate(divide="ignore"):
        log_s = np.log(np.abs(s))[..., None]
    # a term's size in log: its scale plus k log|s|; s = 0 keeps only the lowest power
    logs = np.where(np.isfinite(log_s), scale[used] + k * log_s, np.where(k == k[0], scale[used], -np.inf))
    top = logs.max(axis=-1)
    phase = np.exp(1j * np.angle(s)[..., None] * k)
    with np.errstate(under="ignore"):
        value = (mantissa[used] * np.exp(logs - top[..., None]) * phase).sum(axis=-1)
    return value, top


def _roots(mantissa: np.ndarray, scale: np.ndarray) -> np.ndarray:
    used = np.flatnonzero(mantissa)
    if len(used) < 2:
        return np.zeros(int(used[0]) if len(used) else 0, dtype=complex)
    low, high = int(used[0]), int(used[-1])
    # scale s by w0 so the lowest and highest coefficients are equal: roots near |x| = 1
    log_w0 = (scale[low] - scale[high] + math.log(abs(mantissa[low] / mantissa[high]))) / (high - low)
    k = np.arange(low, high + 1)
    logs = scale[low:high + 1] + k * log_w0
    with np.errstate(under="ignore"):
        scaled = mantissa[low:high + 1] * np.exp(logs - logs[mantissa[low:high + 1] != 0].max())
    x = np.roots(scaled[::-1])
    origin = np.zeros(low, dtype=complex)
    return np.concatenate([origin, np.sort_complex(x.astype(complex) * math.exp(log_w0))])


def coefficients_at(terms: LaplaceTerms, values: Mapping[str, Any]) -> Coefficients:
    """The coefficients of ``s`` of numerator and denominator at one numeric point.

    They are those of the ring polynomials (in generators such as ``1/RA``),
    so both sides may carry a common factor against the user form; ratios,
    roots and responses are the same.

    Parameters
    ----------
    terms : LaplaceTerms
    values : mapping of str to float
        A number for every symbol of the formula except ``s``.

    Raises
    ------
    AnalysisError
        When a symbol has no number, or a number is not finite.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> z = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nC1 a 0 CA\\n"), "a")
    >>> [v.round(12).tolist() for v in coefficients_at(laplace_terms(z), {"RA": 2.0, "CA": 3.0}).values()]
    [[1.0], [0.5, 3.0]]
    """
    formula = terms.formula
    point = {k: v for k, v in values.items() if k != LAPLACE}
    point[LAPLACE] = 1.0  # the power of s is read from the exponents; s itself counts as 1
    generators = formula.generator_values(point)
    numbers = np.array([float(np.real(g)) if np.ndim(g) == 0 else math.nan for g in generators])
    if not np.all(np.isfinite(numbers)):
        bad = [v.name for v, g in zip(formula.variables, numbers) if not math.isfinite(g)]
        raise AnalysisError(f"{formula.label}: no single finite number for {', '.join(bad)}")
    for index in terms.laplace:
        if index >= 0:
            numbers[index] = 1.0
    with np.errstate(divide="ignore"):
        log_g, sign_g = np.log(np.abs(numbers)), np.sign(numbers)
    sides = []
    for columns, power in zip(formula.term_columns, terms.powers):
        sides.append(_side_coefficients(columns, power, log_g, sign_g))
    (n, n_scale), (d, d_scale) = sides
    return Coefficients(n, n_scale, d, d_scale)


def _side_coefficients(columns, power: np.ndarray, log_g: np.ndarray, sign_g: np.ndarray):
    """Mantissas and log scales of one side's coefficients, cancellation checked per coefficient."""
    exponents = columns.exponents.astype(float)
    coefficient = columns.numerators.astype(float) / columns.denominators.astype(float)
    with np.errstate(invalid="ignore"):
        used = exponents > 0
        term_logs = np.log(np.abs(coefficient)) + np.where(used, exponents * log_g, 0.0).sum(axis=1)
        signs = np.sign(coefficient) * np.prod(np.where(used & (sign_g < 0), (-1.0) ** exponents, 1.0), axis=1)
    size = int(power.max(initial=0)) + 1
    mantissa, scale = np.zeros(size), np.zeros(size)
    for k in range(size):
        chosen = (power == k) & np.isfinite(term_logs)
        if not chosen.any():
            continue
        logs = term_logs[chosen]
        top = logs.max()
        parts = signs[chosen] * np.exp(logs - top)
        total, magnitude = parts.sum(), np.abs(parts).sum()
        if abs(total) > CANCELLATION * magnitude:
            mantissa[k], scale[k] = total, top
    return mantissa, scale


@dataclass(frozen=True, eq=False)
class FrequencyResponse:
    """A transfer or impedance over frequency at one operating point.

    Parameters
    ----------
    label, unit, quantity : str
        Of the formula.
    frequencies : numpy.ndarray
        Hz.
    values : numpy.ndarray
        Complex ``H(j 2 pi f)``.
    low_frequency : float
        The value as ``f -> 0`` (``inf`` for a pole at the origin).
    poles, zeros : numpy.ndarray
        Complex, rad/s, sorted by magnitude.
    corner : float or None
        Hz where ``|H|`` first falls 3 dB below ``|low_frequency|``; None when it never does.
    coefficients : Coefficients
        To evaluate at any other frequency (:meth:`at`).
    """

    label: str
    unit: str
    quantity: str
    frequencies: np.ndarray
    values: np.ndarray
    low_frequency: float
    poles: np.ndarray
    zeros: np.ndarray
    corner: float | None
    coefficients: Coefficients

    @property
    def magnitude(self) -> np.ndarray:
        """``|H|`` at :attr:`frequencies`."""
        return np.abs(self.values)

    @property
    def phase(self) -> np.ndarray:
        """Phase in degrees, unwrapped along frequency."""
        return np.degrees(np.unwrap(np.angle(self.values)))

    def at(self, frequency: float) -> complex:
        """``H(j 2 pi f)`` at one frequency (Hz)."""
        return complex(self.coefficients.at(2j * math.pi * float(frequency)))

    @property
    def pole_frequencies(self) -> np.ndarray:
        """``|p|/(2 pi)`` of every pole, Hz."""
        return np.abs(self.poles) / (2 * math.pi)

    @property
    def zero_frequencies(self) -> np.ndarray:
        """``|z|/(2 pi)`` of every zero, Hz."""
        return np.abs(self.zeros) / (2 * math.pi)


@dataclass(frozen=True)
class Root:
    """A pole or zero as a designer reads it.

    Parameters
    ----------
    hz : float
        ``|r| / (2 pi)``.
    where : str
        ``real, left half-plane``, ``real, RIGHT half-plane``, ``at the origin`` or ``complex pair``.
    q : float or None
        The quality factor ``|r| / (2 |Re r|)`` of a complex pair.
    """

    hz: float
    where: str
    q: float | None = None


def describe_roots(roots: np.ndarray) -> tuple[Root, ...]:
    """Poles or zeros (rad/s) as :class:`Root` records, a complex pair once.

    Examples
    --------
    >>> describe_roots(np.array([-2 * np.pi * 1.5e3 + 0j, -1 + 1j, -1 - 1j]))[0]
    Root(hz=1500.0, where='real, left half-plane', q=None)
    >>> round(describe_roots(np.array([-1 + 1j, -1 - 1j]))[0].q, 4)
    0.7071
    """
    out = []
    seen: set[int] = set()
    for i, root in enumerate(roots):
        if i in seen:
            continue
        frequency = float(abs(root) / (2 * math.pi))
        if abs(root.imag) > 1e-9 * abs(root):
            pair = next((j for j in range(i + 1, len(roots)) if abs(roots[j] - root.conjugate()) <= 1e-9 * abs(root)),
                        None)
            if pair is not None:
                seen.add(pair)
            out.append(Root(frequency, "complex pair", float(abs(root) / (2 * abs(root.real))) if root.real else math.inf))
        elif root == 0:
            out.append(Root(0.0, "at the origin"))
        else:
            out.append(Root(frequency, "real, " + ("left" if root.real < 0 else "RIGHT") + " half-plane"))
    return tuple(out)


def log_frequencies(start: float, stop: float, per_decade: int = 20) -> np.ndarray:
    """Logarithmically spaced frequencies from ``start`` to ``stop`` (Hz), both included.

    Raises
    ------
    UsageError
        For a start that is not positive, a stop not above the start, or fewer than 1 point per decade.
    LimitError
        For more points than :data:`symbias.limits.MAX_SWEEP_POINTS`.

    Examples
    --------
    >>> log_frequencies(1.0, 100.0, 2).tolist()
    [1.0, 3.1622776601683795, 10.0, 31.622776601683793, 100.0]
    """
    if not (math.isfinite(start) and math.isfinite(stop)) or start <= 0:
        raise UsageError(f"frequencies must be finite and positive, got {start:g} to {stop:g}", path="--from")
    if stop <= start:
        raise UsageError(f"the last frequency ({stop:g} Hz) must be above the first ({start:g} Hz)", path="--to")
    if per_decade < 1:
        raise UsageError(f"points per decade must be at least 1, got {per_decade}", path="--points")
    from .limits import check_points

    count = check_points(max(2, int(math.ceil((math.log10(stop) - math.log10(start)) * per_decade)) + 1))
    return np.logspace(math.log10(start), math.log10(stop), count)


def frequency_response(formula: Formula, values: Mapping[str, Any], frequencies: Sequence[float]) -> FrequencyResponse:
    """``H(j 2 pi f)`` of an exact formula at a numeric point, with its poles, zeros and -3 dB point.

    A formula without ``s`` gives a flat response and no poles or zeros.

    Raises
    ------
    AnalysisError
        When a symbol has no number.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> z = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\n"), "a")
    >>> r = frequency_response(z, {"RA": 5.0}, [1.0, 10.0])
    >>> r.magnitude.round(12).tolist(), r.corner, len(r.poles)
    ([5.0, 5.0], None, 0)
    """
    terms = laplace_terms(formula)
    coefficients = coefficients_at(terms, values)
    frequencies = np.asarray(frequencies, dtype=float)
    response = coefficients.at(2j * np.pi * frequencies)
    poles, zeros = coefficients.roots(1), coefficients.roots(0)
    low = coefficients.low_frequency()
    return FrequencyResponse(formula.label, formula.unit, formula.quantity, frequencies, response, low,
                             _by_magnitude(poles), _by_magnitude(zeros), _corner(coefficients, low, poles, zeros),
                             coefficients)


def _by_magnitude(roots: np.ndarray) -> np.ndarray:
    return roots[np.argsort(np.abs(roots), kind="stable")]


def _corner(coefficients: Coefficients, low: float, poles: np.ndarray, zeros: np.ndarray) -> float | None:
    """The first frequency where ``|H|`` is 3 dB below its low-frequency magnitude (bisection in log f)."""
    if not math.isfinite(abs(low)) or low == 0:
        return None
    corners = np.abs(np.concatenate([poles, zeros]))
    corners = corners[corners > 0]
    if not len(corners):
        return None
    level = abs(low) / math.sqrt(2.0)
    lo, hi = math.log10(corners.min() / (2 * math.pi)) - 3, math.log10(corners.max() / (2 * math.pi)) + 3
    grid = np.linspace(lo, hi, int((hi - lo) * _SCAN_PER_DECADE) + 1)
    below = np.abs(coefficients.at(2j * np.pi * 10.0 ** grid)) < level
    if not below.any():
        return None
    first = int(np.argmax(below))
    if first == 0:
        return None
    a, b = grid[first - 1], grid[first]
    for _ in range(60):
        middle = 0.5 * (a + b)
        if abs(coefficients.at(2j * math.pi * 10.0 ** middle)) < level:
            b = middle
        else:
            a = middle
    return float(10.0 ** (0.5 * (a + b)))
