"""What a DC hook receives and what it returns: the stamp context and the stamp records.

Device layer of the numeric side.  Every element kind names a ``dc`` hook in
:mod:`symbias.elements`; :func:`symbias.dc.system.build_system` calls it as
``hook(element, context)`` and assembles the :class:`DcStamp` records it
returns into nodal (MNA) equations.  The context turns an element's values,
instance parameters and model parameters into numbers - floats, or arrays over
a batch of operating points (Monte Carlo samples, corners, sweep points) when a
symbol value, a sample or the temperature is an array.

Rows and columns of the nodal matrix are named: a node by its name, the
branch-current unknown of an element by :class:`Branch`.

Samples (what may vary over a batch; keys are case-insensitive):

* ``NAME`` - the primary value of element NAME (resistance at TNOM, source
  value, gain);
* ``NAME.param`` - an instance parameter of element NAME (``M1.w``, ``Q2.area``);
* ``NAME.PARAM`` - a model parameter of device NAME alone (``Q1.IS``), or of
  every device of the model NAME (``QN.BF``) when NAME is a model.  Instance
  parameters win over a model parameter of the same name.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist("t\\nV1 a 0 2\\nR1 a 0 {RX}\\n")
>>> context = StampContext.create(c, values={"RX": [1e3, 2e3]})
>>> context.batch, context.value(c.element("R1"), "resistance").tolist()
(2, [1000.0, 2000.0])
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any, Mapping

import numpy as np

from ..circuit import Circuit, Element
from ..elements import KINDS
from ..errors import CircuitError
from ..process import Process

__all__ = [
    "Branch",
    "SourceStamp",
    "DeviceStamp",
    "DcStamp",
    "Samples",
    "StampContext",
    "element_number",
    "resolved_model_parameters",
    "batch_size",
]


@dataclass(frozen=True)
class Branch:
    """The branch-current unknown of an element (a row and a column of the nodal matrix)."""

    element: str


@dataclass(frozen=True)
class SourceStamp:
    """An independent source: the right-hand side is ``value * pattern``.

    ``quantity`` is ``"voltage"`` or ``"current"``; ``pattern`` pairs a row with a coefficient.
    """

    quantity: str
    value: Any
    pattern: tuple[tuple[Any, float], ...]


@dataclass(frozen=True)
class DeviceStamp:
    """One nonlinear device: its model, where it is evaluated, and its numbers.

    Attributes
    ----------
    model : DeviceModel
        The device interface of :mod:`symbias.devices.nonlinear`.
    type : str
        Model type (npn, nmos, d, ...).
    terminals : tuple of str
        Nodes the model is evaluated at, in the model's terminal order (an
        internal node where a series resistance was split off).
    pins : tuple of str
        The element's own nodes (reported voltages are taken between them).
    params : mapping
        Every number the model's ``numbers`` function reads (floats or batch arrays).
    """

    model: Any
    type: str
    terminals: tuple[str, ...]
    pins: tuple[str, ...]
    params: Mapping[str, Any]

    def __post_init__(self) -> None:
        object.__setattr__(self, "params", MappingProxyType(dict(self.params)))

    def __reduce__(self):
        return (DeviceStamp, (self.model, self.type, self.terminals, self.pins, dict(self.params)))


@dataclass(frozen=True)
class DcStamp:
    """What one element contributes to the DC nodal equations.

    Attributes
    ----------
    entries : tuple of (row, col, value)
        Constant matrix entries (nodes by name, branch currents by :class:`Branch`).
    branch : bool
        The element has a branch-current unknown ``Branch(element.key)``.
    source : SourceStamp or None
    current : tuple of (unknown, coefficient) or None
        The element's current (first node through it to the second) as a
        linear function of the unknowns; a current source reports its value.
    device : DeviceStamp or None
    internal_nodes : tuple of str
        Nodes the element adds (a device's series-resistance node).
    off : tuple of (from, to, offset)
        Relations ``V(to) = V(from) + offset`` that hold when nothing conducts.
    """

    entries: tuple[tuple[Any, Any, Any], ...] = ()
    branch: bool = False
    source: SourceStamp | None = None
    current: tuple[tuple[Any, Any], ...] | None = None
    device: DeviceStamp | None = None
    internal_nodes: tuple[str, ...] = ()
    off: tuple[tuple[str, str, Any], ...] = ()


def batch_size(*arrays, what: str = "batch", path: str | None = None) -> int:
    """Common length of the 1-d arrays among ``arrays`` (scalars ignored); 1 when there are none.

    Raises
    ------
    CircuitError
        When two arrays differ in length or one has more than one dimension.

    Examples
    --------
    >>> batch_size(1.0, np.zeros(4), [1, 2, 3, 4])
    4
    """
    size = 1
    for item in arrays:
        shape = np.shape(item)
        if len(shape) == 0:
            continue
        if len(shape) > 1:
            raise CircuitError(f"{what}: values must be numbers or 1-d arrays, got shape {shape}", path=path)
        if size not in (1, shape[0]) and shape[0] != 1:
            raise CircuitError(f"{what}: arrays of lengths {size} and {shape[0]} in one batch", path=path)
        size = max(size, shape[0])
    return size


def _as_value(value):
    """A float, or a float array for a batch."""
    if np.ndim(value) == 0:
        return float(value)
    return np.asarray(value, dtype=float)


@dataclass(frozen=True)
class Samples:
    """Per-batch overrides, sorted by what they replace (see the module docstring).

    Attributes
    ----------
    values : mapping
        Element key -> primary value.
    instance : mapping
        (element key, parameter) -> instance parameter.
    device : mapping
        (element key, PARAMETER) -> model parameter of one device.
    model : mapping
        (model key, PARAMETER) -> model parameter of every device of a model.
    """

    values: Mapping[str, Any] = field(default_factory=dict)
    instance: Mapping[tuple[str, str], Any] = field(default_factory=dict)
    device: Mapping[tuple[str, str], Any] = field(default_factory=dict)
    model: Mapping[tuple[str, str], Any] = field(default_factory=dict)

    @classmethod
    def parse(cls, circuit: Circuit, samples: Mapping[str, Any] | None) -> "Samples":
        """Sort ``samples`` keys against the circuit.

        Raises
        ------
        CircuitError
            For a key that names no element, instance parameter or model.

        Examples
        --------
        >>> from symbias.netlist import parse_netlist
        >>> c = parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn\\n")
        >>> s = Samples.parse(c, {"qn.bf": [90, 110], "Q1.area": 2, "I1": 2e-3})
        >>> dict(s.model), dict(s.instance), dict(s.values)
        ({('qn', 'BF'): array([ 90., 110.])}, {('q1', 'area'): 2.0}, {'i1': 0.002})
        """
        values, instance, device, model = {}, {}, {}, {}
        for key, raw in (samples or {}).items():
            value = _as_value(raw)
            owner, dot, parameter = str(key).partition(".")
            if not dot:
                element = _element_or_none(circuit, owner)
                if element is None or element.value is None:
                    raise CircuitError(f"sample {key!r}: no element {owner!r} with a value", path=circuit.path)
                values[element.key] = value
                continue
            element = _element_or_none(circuit, owner)
            if element is not None:
                if parameter.lower() in KINDS[element.kind].parameters:
                    instance[(element.key, parameter.lower())] = value
                elif element.model is not None:
                    device[(element.key, parameter.upper())] = value
                else:
                    raise CircuitError(f"sample {key!r}: {element.name} has no parameter {parameter!r}",
                                       path=circuit.path, line=element.line)
                continue
            if owner.lower() in circuit.models:
                model[(owner.lower(), parameter.upper())] = value
                continue
            raise CircuitError(f"sample {key!r}: no element or model named {owner!r}", path=circuit.path)
        return cls(values, instance, device, model)

    def arrays(self) -> list:
        """Every sampled value (to size the batch)."""
        return [*self.values.values(), *self.instance.values(), *self.device.values(), *self.model.values()]

    def __reduce__(self):
        return (Samples, (dict(self.values), dict(self.instance), dict(self.device), dict(self.model)))

    def __post_init__(self) -> None:
        for name in ("values", "instance", "device", "model"):
            object.__setattr__(self, name, MappingProxyType(dict(getattr(self, name))))


def _element_or_none(circuit: Circuit, name: str) -> Element | None:
    return circuit.element(name) if circuit.has_element(name) else None


@dataclass(frozen=True)
class StampContext:
    """What a ``dc`` hook may ask for: numbers of an element at the temperature of the solve.

    Build one with :meth:`create`.  Every number is a float, or an array of
    length :attr:`batch` when something it depends on varies over the batch.
    """

    circuit: Circuit
    process: Process | None
    temperature: Any
    values: Mapping[str, Any]
    samples: Samples
    batch: int

    @classmethod
    def create(cls, circuit: Circuit, process: Process | None = None, temperature=27.0,
               values: Mapping[str, Any] | None = None, samples: Mapping[str, Any] | None = None) -> "StampContext":
        """Context for ``circuit``; ``values`` give free symbols, ``samples`` per-batch overrides.

        Raises
        ------
        CircuitError
            For sample keys the circuit does not have, or arrays of different lengths.
        """
        lookup = {str(k).lower(): _as_value(v) for k, v in (values or {}).items()}
        parsed = Samples.parse(circuit, samples)
        temperature = _as_value(temperature)
        size = batch_size(temperature, *lookup.values(), *parsed.arrays(), what="samples", path=circuit.path)
        return cls(circuit, process, temperature, MappingProxyType(lookup), parsed, size)

    def __reduce__(self):
        return (StampContext, (self.circuit, self.process, self.temperature, dict(self.values), self.samples,
                               self.batch))

    @property
    def tnom(self) -> float:
        """Nominal temperature of the process (degC), 27 without one."""
        return self.process.tnom if self.process is not None else 27.0

    def number(self, element: Element, expr, what: str):
        """``expr`` (an element's value or parameter) as a number, using the symbol values.

        Raises
        ------
        CircuitError
            Naming the element and its line when a symbol has no value or the
            result is not finite.
        """
        return element_value(element, expr, self.values, self.circuit.path, what)

    def value(self, element: Element, what: str):
        """The primary value of ``element`` (sampled when the samples name it)."""
        if element.key in self.samples.values:
            return _checked(element, self.samples.values[element.key], self.circuit.path, what)
        return self.number(element, element.value, what)

    def instance(self, element: Element, key: str, default: float | None = None):
        """Instance parameter ``key`` of ``element`` (sampled, from the netlist, or ``default``)."""
        sampled = self.samples.instance.get((element.key, key))
        if sampled is not None:
            return _checked(element, sampled, self.circuit.path, key)
        if key in element.params:
            return self.number(element, element.params[key], key)
        return default

    def has_instance(self, element: Element, key: str) -> bool:
        """True when the netlist or the samples give ``key`` for ``element``."""
        return key in element.params or (element.key, key) in self.samples.instance

    def multiplier(self, element: Element, keys: tuple[str, ...]):
        """Product of the instance parameters ``keys`` (``m``, ``area``), each 1 when absent.

        Raises
        ------
        CircuitError
            When the product is not positive.
        """
        factor = 1.0
        for key in keys:
            factor = factor * self.instance(element, key, 1.0)
        if np.any(np.asarray(factor) <= 0):
            raise CircuitError(f"{element.name}: {'/'.join(keys)} must be positive", path=self.circuit.path,
                               line=element.line)
        return factor

    def model_parameters(self, element: Element) -> tuple[str, dict[str, Any], Any]:
        """Model type, parameters and TNOM (degC) of a device, samples applied.

        Order: the process entry, the ``.model`` card, then sampled values for
        the model (``QN.BF``) and for the device (``Q1.IS``).
        """
        type_, params, tnom = resolved_model_parameters(self.circuit, element, self.process, self.values)
        model_key = self.circuit.model_of(element).key
        for (owner, key), value in self.samples.model.items():
            if owner == model_key:
                params[key] = value
        for (owner, key), value in self.samples.device.items():
            if owner == element.key:
                params[key] = value
        if "TNOM" in params:
            tnom = params.pop("TNOM")
        return type_, params, tnom


def _checked(element: Element, value, path: str | None, what: str):
    if not np.all(np.isfinite(value)):
        raise CircuitError(f"{element.name}: sampled {what} is not finite", path=path, line=element.line)
    return value


def element_value(element: Element, expr, values: Mapping[str, Any] | None, path: str | None, what: str):
    """``expr`` as a float, or an array when a symbol value is an array.

    Raises
    ------
    CircuitError
        Naming the element and its line when a symbol has no value or the
        result is not a finite real number.
    """
    if isinstance(expr, (int, float)):
        return float(expr)
    free = sorted(expr.names)
    lookup = {str(k).lower(): v for k, v in (values or {}).items()}
    missing = [s for s in free if s.lower() not in lookup]
    if missing:
        raise CircuitError(
            f"{element.name}: {what} {expr} has no number for {', '.join(missing)} "
            f"(give it in the netlist or pass values for it)",
            path=path,
            line=element.line,
        )
    try:
        with np.errstate(all="ignore"):
            number = expr.evaluate({s: _as_value(lookup[s.lower()]) for s in free})
        number = _as_value(number)
    except (TypeError, ValueError, OverflowError, ZeroDivisionError):
        number = math.nan
    if np.iscomplexobj(number) or not np.all(np.isfinite(number)):
        raise CircuitError(f"{element.name}: {what} {expr} is not a finite real number", path=path,
                           line=element.line)
    return number


def element_number(element: Element, expr, values: Mapping[str, float] | None, path: str | None, what: str) -> float:
    """A float for ``expr`` (an element's value or parameter), using ``values`` for free symbols.

    Raises
    ------
    CircuitError
        Naming the element and its line when a symbol has no value.

    Examples
    --------
    >>> from symbias.expressions import Symbol
    >>> e = Element("R1", "R", ("a", "0"), Symbol("RE"), line=3)
    >>> element_number(e, e.value, {"RE": 1e3}, "x.cir", "value")
    1000.0
    """
    number = element_value(element, expr, values, path, what)
    if np.ndim(number) != 0:
        raise CircuitError(f"{element.name}: {what} {expr} must be one number here, not an array", path=path,
                           line=element.line)
    return float(number)


def resolved_model_parameters(circuit: Circuit, element: Element, process: Process | None,
                              values: Mapping[str, Any] | None) -> tuple[str, dict[str, Any], float]:
    """Model type, parameters (process entry overridden by the ``.model`` card) and TNOM (degC).

    The process entry is the device of the model's name, or failing that the
    only process device of the model's type.

    Raises
    ------
    CircuitError
        When the process device is of another type than the model.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nV1 c 0 1\\nQ1 c c 0 QX\\n.model QX npn (BF=50)\\n")
    >>> resolved_model_parameters(c, c.element("Q1"), None, None)
    ('npn', {'BF': 50.0}, 27.0)
    """
    model = circuit.model_of(element)
    params: dict[str, Any] = {}
    tnom = 27.0
    if process is not None:
        tnom = process.tnom
        entry = process.device(model.name, model.type)
        if entry is not None:
            if entry.type != model.type:
                raise CircuitError(
                    f"{element.name}: model {model.name} is {model.type} but the process device is {entry.type}",
                    path=circuit.path, line=model.line or element.line,
                )
            params.update(entry.params)
    for key, expr in model.params.items():
        params[key] = element_value(element, expr, values, circuit.path, f"model parameter {key}")
    if "TNOM" in params:
        tnom = params.pop("TNOM")
    return model.type, params, tnom
