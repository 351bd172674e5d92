"""The one interface every nonlinear DC device model implements (BJT, MOS, diode, ...).

Device layer of the numeric side.  A :class:`DeviceModel` is a frozen record
of functions; the DC solver (:mod:`symbias.dc`) knows devices only through
it, so adding a device kind is one entry in :mod:`symbias.elements` plus a
module that builds one ``DeviceModel`` and names it as the kind's ``dc`` hook
(a ``DeviceModel`` is callable as ``hook(element, context)``).

Shapes: a device model is evaluated for a *bank* of ``ndev`` devices of its
kind at once, over ``A`` batch samples.  Per-device numbers are arrays of
shape ``(B, ndev)`` with ``B`` either 1 (the same for every sample) or the
batch size; controlling voltages have shape ``(A, ndev, C)``, the currents
into the terminals that carry current ``(A, ndev, R)`` (R of them, see
:attr:`DeviceModel.current_terminals`) and their Jacobian ``(A, ndev, R, C)``.

Frames: the model works in its own frame (npn, nmos); a device of the other
polarity has its controlling voltages and currents negated by the solver,
which builds controls as ``polarity * (v[plus] - v[minus])`` for each
``(name, plus, minus)`` of :attr:`DeviceModel.controls`.

Examples
--------
>>> from symbias.devices.bjt import BJT
>>> BJT.terminals, [c[0] for c in BJT.controls], BJT.output
(('c', 'b', 'e'), ['vbe', 'vbc'], 'c')
>>> device_model("M").letter, device_model("R") is None
('M', True)
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields, replace
from typing import Any, Callable, Mapping

import numpy as np

from ..elements import KINDS

__all__ = [
    "DeviceModel",
    "Description",
    "HeadroomRole",
    "Violation",
    "device_model",
    "device_models",
    "working_regions",
    "stack_parameters",
    "take",
    "pn_limit",
    "pn_critical_voltage",
    "safe_exp",
    "safe_exp_slope",
    "GMIN",
    "ION_MIN",
    "MAX_CURRENT",
]

#: Conductance across each junction (siemens), as circuit simulators add.
GMIN = 1e-12
#: A device carrying less than this current (A) is reported as cut off.
ION_MIN = 1e-12
#: A terminal current above this (A) means a junction is forced on hard: refused.
MAX_CURRENT = 1.0

_EXP_LIMIT = 80.0


def safe_exp(x):
    """exp(x), continued linearly above x = 80 so a wild Newton step cannot overflow.

    Examples
    --------
    >>> float(safe_exp(0.0)), bool(np.isfinite(safe_exp(1e4)))
    (1.0, True)
    """
    x = np.asarray(x, dtype=float)
    clipped = np.minimum(x, _EXP_LIMIT)
    return np.exp(clipped) * (1.0 + np.maximum(x - _EXP_LIMIT, 0.0))


def safe_exp_slope(x):
    """d/dx of :func:`safe_exp`."""
    return np.exp(np.minimum(np.asarray(x, dtype=float), _EXP_LIMIT))


def safe_exp_and_slope(x):
    """:func:`safe_exp` and its derivative with one exponential (the Newton loop's hot path).

    Examples
    --------
    >>> value, slope = safe_exp_and_slope(np.array([0.0, 100.0]))
    >>> bool(value[0] == slope[0] == 1.0), bool(value[1] > slope[1])
    (True, True)
    """
    x = np.asarray(x, dtype=float)
    top = x.max() if x.size else 0.0
    if top <= _EXP_LIMIT:  # one reduction instead of a clipped copy and a mask (nan falls through)
        slope = np.exp(x)
        return slope, slope
    slope = np.exp(np.minimum(x, _EXP_LIMIT))
    return slope * (1.0 + np.maximum(x - _EXP_LIMIT, 0.0)), slope


def pn_critical_voltage(vte, saturation_current):
    """SPICE's critical voltage of a pn junction, above which Newton steps are limited.

    Examples
    --------
    >>> round(float(pn_critical_voltage(0.025, 1e-16)), 4)
    0.8201
    """
    return vte * np.log(vte / (math.sqrt(2.0) * saturation_current))


def pn_limit(v_new, v_old, vte, vcrit):
    """The logarithmic pn-junction limiter: limit a Newton update of a junction voltage.

    Above the critical voltage a step of more than two emission voltages is
    replaced by the step that changes the junction current by the same factor
    a linear step in current would, so the exponential cannot run away.

    Examples
    --------
    >>> float(pn_limit(5.0, 0.6, 0.025, 0.8)) < 0.8
    True
    """
    v_new = np.asarray(v_new, dtype=float)
    v_old = np.asarray(v_old, dtype=float)
    big = (v_new > vcrit) & (np.abs(v_new - v_old) > 2.0 * vte)
    if not big.any():
        return v_new
    arg = 1.0 + (v_new - v_old) / vte
    from_on = np.where(arg > 0, v_old + vte * np.log(np.maximum(arg, 1e-300)), vcrit)
    from_off = vte * np.log(np.maximum(v_new / vte, 1e-300))
    limited = np.where(v_old > 0, from_on, from_off)
    return np.where(big, limited, v_new)


@dataclass(frozen=True)
class Description:
    """What a device does at a point: region, small-signal values and limits (arrays ``(..., ndev)``).

    ``nan`` in a small-signal or limit array marks a value the device does
    not have (a diode without capacitance parameters has no ``cj``).
    ``currents``, when given, are those ``evaluate`` would give (the report
    then need not evaluate the device again).
    """

    region: np.ndarray
    small_signal: Mapping[str, np.ndarray]
    limits: Mapping[str, np.ndarray]
    currents: np.ndarray | None = None


@dataclass(frozen=True)
class Violation:
    """A condition under which a solution lies outside what the model describes.

    ``mask``, ``value`` and ``limit`` have shape ``(A, ndev)``; ``message`` is
    formatted with ``name`` (the device), ``value`` and ``limit``.
    """

    mask: np.ndarray
    value: np.ndarray
    message: str
    limit: np.ndarray | None = None


@dataclass(frozen=True)
class HeadroomRole:
    """How a device takes part in the headroom formula of a current source.

    Attributes
    ----------
    output : (int, int)
        Pin indices of the output pair (collector-emitter, drain-source): the
        chain of output devices runs from the output node through them.
    control : int
        Pin index of the control terminal (base, gate).
    drop : (str, str)
        Symbol prefix and voltage key of the control-to-low drop (``VBE``, ``vbe``).
    saturation : (str, str)
        Symbol prefix and limit key of the least output-pair voltage (``VCEsat``, ``vcesat``).
    matched : callable
        ``matched(prefix, device_point, reference_point, size_ratio)`` -> (sympy
        expression, {symbol: value}): the hand-analysis form of one of this
        device's symbols with devices taken as matched.
    size : callable
        ``size(element)`` -> the device's relative size (W/L m for MOS, 1 otherwise).
    smallest : tuple of str
        Matched symbols that take the smallest value met over the devices (MOS ``VTH``).
    """

    output: tuple[int, int]
    control: int
    drop: tuple[str, str]
    saturation: tuple[str, str]
    matched: Callable[..., Any]
    size: Callable[..., float]
    smallest: tuple[str, ...] = ()


@dataclass(frozen=True)
class DeviceModel:
    """A nonlinear device kind as the DC solver sees it (see the module docstring).

    Attributes
    ----------
    letter : str
        Element letter in :mod:`symbias.elements`.
    terminals : tuple of str
        Terminals the model is evaluated at (BJT ``c b e``), names of the reported currents.
    controls : tuple of (str, int, int)
        Controlling voltages in the device frame: name, plus and minus terminal.
    current_terminals : tuple of int
        Terminals that can carry current (the MOS gate and bulk carry none); the
        others' currents are zero.
    output : str
        Terminal whose current is the device's output current.
    voltages : tuple of (str, int, int)
        Reported voltages between the element's own pins, circuit frame.
    parameters : tuple of str
        Model parameters the model uses (upper case).
    stamp : callable
        ``stamp(model, element, context) -> DcStamp`` (see :mod:`symbias.devices.dc_context`).
    numbers : callable
        ``numbers(params, celsius)``: stacked parameters ``(B, ndev)`` -> the
        model's numbers at temperature (a frozen dataclass of arrays).
    evaluate : callable
        ``evaluate(numbers, controls) -> (currents, jacobian)``: into the current
        terminals, in their order, with exact derivatives.
    limit : callable
        ``limit(numbers, new, old) -> controls``: junction limiting of a Newton update.
    start : callable
        ``start(numbers, kind, raw) -> controls``: the starting state ``"on"`` or
        ``"off"``; ``raw`` are the controls the start's node voltages give.
    describe : callable
        ``describe(numbers, controls) -> Description``.
    check : callable
        ``check(numbers, controls, currents) -> list of Violation``, in the order they are
        reported (``currents`` as ``evaluate`` gives them).
    working_regions : frozenset of str
        Regions in which the device acts as a current source (BJT active, MOS saturation).
    fields : tuple of (str, str, str, str)
        Report table columns: label, section (currents, voltages,
        small_signal, limits), key, unit.
    headroom : HeadroomRole or None
    mismatch : callable or None
        ``mismatch(params, element, context) -> {PARAM: (nominal, sigma)}``:
        Gaussian per-device variation of model parameters (Pelgrom's law).
    """

    letter: str
    terminals: tuple[str, ...]
    controls: tuple[tuple[str, int, int], ...]
    current_terminals: tuple[int, ...]
    output: str
    voltages: tuple[tuple[str, int, int], ...]
    parameters: tuple[str, ...]
    stamp: Callable[..., Any]
    numbers: Callable[..., Any]
    evaluate: Callable[..., tuple[np.ndarray, np.ndarray]]
    limit: Callable[..., np.ndarray]
    start: Callable[..., np.ndarray]
    describe: Callable[..., Description]
    check: Callable[..., list]
    working_regions: frozenset = frozenset()
    fields: tuple[tuple[str, str, str, str], ...] = ()
    headroom: HeadroomRole | None = None
    mismatch: Callable[..., Mapping[str, tuple[Any, Any]]] | None = None

    def __call__(self, element, context):
        """The ``dc`` hook: the stamp of one element of this kind."""
        return self.stamp(self, element, context)

    def __reduce__(self):
        # one object per kind: unpickle to the registered model
        return (device_model, (self.letter,))

    @property
    def plus(self) -> np.ndarray:
        """Plus terminal index of each control."""
        return np.array([c[1] for c in self.controls], dtype=int)

    @property
    def minus(self) -> np.ndarray:
        """Minus terminal index of each control."""
        return np.array([c[2] for c in self.controls], dtype=int)


def device_model(letter: str) -> DeviceModel | None:
    """The nonlinear device model of an element letter (its ``dc`` hook), or None for linear kinds.

    Examples
    --------
    >>> device_model("Q").output
    'c'
    """
    kind = KINDS.get(letter.upper())
    if kind is None or not kind.is_device:
        return None
    hook = kind.hook("dc")
    return hook if isinstance(hook, DeviceModel) else None


def device_models() -> tuple[DeviceModel, ...]:
    """Every registered nonlinear device model."""
    found = (device_model(kind.letter) for kind in KINDS.values() if kind.is_device)
    return tuple(m for m in found if m is not None)


def working_regions() -> frozenset:
    """Regions in which some device acts as a current source (union over the device models).

    Examples
    --------
    >>> sorted(working_regions())
    ['active', 'saturation']
    """
    return frozenset().union(*(m.working_regions for m in device_models()))


def stack_parameters(items: list[Mapping[str, Any]]) -> dict[str, np.ndarray]:
    """Per-device parameter mappings -> one ``(B, ndev)`` array per name.

    ``B`` is 1 when no device's value of that name varies over the batch,
    else the batch size.

    Examples
    --------
    >>> s = stack_parameters([{"IS": 1e-16}, {"IS": np.array([1e-16, 2e-16])}])
    >>> s["IS"].shape
    (2, 2)
    """
    out: dict[str, np.ndarray] = {}
    for name in items[0]:
        columns = [np.asarray(item[name], dtype=float) for item in items]
        rows = max(c.size if c.ndim else 1 for c in columns)
        out[name] = np.stack([np.broadcast_to(c, (rows,)) for c in columns], axis=1)
    return out


def take(numbers, index):
    """The numbers of a subset of the batch: each ``(B, ndev)`` field with ``B > 1`` indexed by ``index``.

    Examples
    --------
    >>> from symbias.devices.bjt import BjtModel, stack_bjts
    >>> t = stack_bjts([BjtModel.from_params("npn", {}).at(27.0)])
    >>> take(t, np.array([0, 0])).is_.shape
    (1,)
    """
    changes = {}
    for item in fields(numbers):
        value = getattr(numbers, item.name)
        if isinstance(value, np.ndarray) and value.ndim == 2 and value.shape[0] > 1:
            changes[item.name] = value[index]
    return replace(numbers, **changes) if changes else numbers
