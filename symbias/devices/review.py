"""Model parameters read against what a device model covers: valid ranges, parameters and levels not modelled.

Device layer of the numeric side, called by each device model's stamp with
its own tables (``RANGES``, the parameters it reads, the levels it is).  A
value outside its range (``IS=0``, ``NF=-1``, ``PHI=-0.6``) is a one-line
:class:`~symbias.errors.CircuitError` at the line that gave it - the
``.model`` card, the process file entry, or the sample - naming the
parameter and its valid range.  Parameters the model does not use, and a
``LEVEL`` it is not, are named in a :class:`~symbias.errors.ModelWarning`;
a ``LEVEL`` it is not, with none of the parameters the model cannot do
without, is an error: the result would be meaningless (a BSIM card with
``VTH0`` but no ``VTO`` would silently become a level-1 device with a
threshold of 0 V).

Examples
--------
>>> Range(0.0).text("IS"), Range(0.0, closed_low=True).text("VAF"), Range(0.0, 1.0, True).text("M")
('IS > 0', 'VAF >= 0', '0 <= M < 1')
>>> bool(Range(0.0).holds(np.array([1e-16, 0.0])))
False
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from typing import Any, Collection, Mapping

import numpy as np

from ..errors import CircuitError, ModelWarning

__all__ = ["Range", "review_parameters", "POSITIVE", "NON_NEGATIVE", "ABOVE_ZERO_KELVIN"]


@dataclass(frozen=True)
class Range:
    """An interval of valid values: ``low < x < high`` (``<=`` where closed); None is unbounded."""

    low: float | None = None
    high: float | None = None
    closed_low: bool = False
    closed_high: bool = False

    def holds(self, value: Any) -> bool:
        """True when every value (a number or an array over a batch) lies in the range; infinity only
        where the range is unbounded on that side."""
        array = np.asarray(value, dtype=float)
        ok = ~np.isnan(array)
        if self.low is not None:
            ok &= array >= self.low if self.closed_low else array > self.low
        if self.high is not None:
            ok &= array <= self.high if self.closed_high else array < self.high
        return bool(np.all(ok))

    def text(self, name: str) -> str:
        """The range as a condition on ``name``."""
        low = "" if self.low is None else f"{self.low:g} {'<=' if self.closed_low else '<'} "
        high = "" if self.high is None else f" {'<=' if self.closed_high else '<'} {self.high:g}"
        if self.low is not None and self.high is None:
            return f"{name} {'>=' if self.closed_low else '>'} {self.low:g}"
        return f"{low}{name}{high}"


POSITIVE = Range(0.0)
NON_NEGATIVE = Range(0.0, closed_low=True)
#: TNOM in degC.
ABOVE_ZERO_KELVIN = Range(-273.15)


def _origin(element, context, name: str) -> tuple[str | None, int | None]:
    """Where a model parameter's value came from: a sample, the ``.model`` card, the process file."""
    model = context.circuit.model_of(element)
    if (model.key, name) in context.samples.model:
        return f"sample {model.name}.{name}", None
    if (element.key, name) in context.samples.device:
        return f"sample {element.name}.{name}", None
    if name in model.params:
        return context.circuit.path, model.line or element.line
    if context.process is not None:
        entry = context.process.device(model.name, model.type)
        if entry is not None and name in entry.params:
            return context.process.path, entry.line or None
    return context.circuit.path, element.line


def _shown(value: Any) -> str:
    array = np.atleast_1d(np.asarray(value, dtype=float))
    return f"{array[0]:g}" if array.size == 1 else f"{array.min():g}..{array.max():g} (over the batch)"


def review_parameters(element, context, params: Mapping[str, Any], *, model_name: str,
                      ranges: Mapping[str, tuple[Range, str]], modelled: Collection[str],
                      essentials: Collection[str] = (), levels: Collection[int] = (1,)) -> None:
    """Check a device's resolved model parameters; warn about what the model does not use.

    Parameters
    ----------
    element, context
        The device and its :class:`~symbias.devices.dc_context.StampContext`.
    params : mapping
        Upper-case parameter -> value (process entry, card and samples merged).
    model_name : str
        The model, for messages (``"bipolar model"``).
    ranges : mapping
        Parameter -> (valid range, what the parameter is).
    modelled : collection of str
        Every parameter the model reads (others are named in a warning).
    essentials : collection of str
        Parameters without which a card of another ``LEVEL`` gives a meaningless result.
    levels : collection of int
        The ``LEVEL`` values this model is.

    Raises
    ------
    CircuitError
        A value out of range, or a ``LEVEL`` not modelled without the essential parameters.
    """
    card = context.circuit.model_of(element)
    for name, (valid, meaning) in ranges.items():
        if name in params and not valid.holds(params[name]):
            path, line = _origin(element, context, name)
            raise CircuitError(f"model {card.name}: {name} = {_shown(params[name])} is out of range: "
                               f"{valid.text(name)} ({meaning})", path=path, line=line)
    level = params.get("LEVEL")
    foreign = level is not None and not all(int(v) == v and int(v) in levels
                                            for v in np.atleast_1d(np.asarray(level, dtype=float)))
    ignored = sorted(k for k in params if k not in modelled and k != "LEVEL")
    where = f"{context.circuit.path or '<input>'}:{card.line or element.line}"
    shown_level = _shown(level) if level is not None else ""
    if foreign:
        missing = [k for k in essentials if k not in params]
        if missing:
            raise CircuitError(f"model {card.name}: LEVEL={shown_level} is not modelled (the {model_name} is "
                               f"level {'/'.join(str(v) for v in levels)}) and the card gives no "
                               f"{', '.join(missing)}: the result would be meaningless; write a level-"
                               f"{min(levels)} card or give the device in a process file (see docs/dc.md)",
                               path=context.circuit.path, line=card.line or element.line)
        warnings.warn(ModelWarning(f"{where}: model {card.name}: LEVEL={shown_level} is not modelled; solved "
                                   f"with the {model_name} from its parameters "
                                   f"{', '.join(sorted(k for k in params if k in modelled))}"
                                   + (f"; ignored: {', '.join(ignored)}" if ignored else "")), stacklevel=5)
    elif ignored:
        warnings.warn(ModelWarning(f"{where}: model {card.name}: {', '.join(ignored)} not modelled by the "
                                   f"{model_name} (ignored; see docs/dc.md)"), stacklevel=5)
