"""Linear elements (R C L, independent and controlled sources): their small-signal primitives.

Device layer; the functions here are the ``small_signal`` hooks of the
linear kinds in :mod:`symbias.elements`.  Each takes an element and an
:class:`~symbias.devices.options.ExpansionContext` and returns the linear
primitives that stand for it and the meaning of every symbol it brings in.

* R -> an admittance ``1/R``; C -> ``s*C``; L -> an impedance branch ``s*L``;
* V, I -> zero-valued sources kept so that an analysis can drive the one it names
  (a V source is a short, an I source is open);
* G, E, F, H -> the controlled source itself.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.devices.options import ExpansionContext, SmallSignalOptions
>>> c = parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RL\\n")
>>> context = ExpansionContext(c, SmallSignalOptions(), {})
>>> parts, meanings = resistor_small_signal(c.element("R1"), context)
>>> [(p.kind, str(p.value)) for p in parts], str(meanings["RL"])
([('Y', '1/RL')], 'resistance of R1 [ohm]')
"""

from __future__ import annotations

from ..circuit import Element
from ..elements import Primitive
from ..errors import CircuitError
from ..expressions import ONE, Expr, Symbol
from ..symbols import LAPLACE, Meaning, controlled_meaning, identifier, passive_meaning
from .options import ExpansionContext

__all__ = [
    "resistor_small_signal",
    "capacitor_small_signal",
    "inductor_small_signal",
    "source_small_signal",
    "controlled_small_signal",
]

_LAPLACE_MEANING = Meaning("Laplace variable", "1/s")


def _passive_value(element: Element, context: ExpansionContext) -> Expr:
    value = element.value
    if context.options.symbolic_passives and value.is_number:
        return Symbol(identifier(element.name))
    return value


def _meanings(value: Expr, meaning: Meaning) -> dict[str, Meaning]:
    return {name: meaning for name in value.names}


def _primitive(kind: str, element: Element, value: Expr, control: str | None = None) -> Primitive:
    return Primitive(kind, element.name, element.nodes, value, control, element.name, element.line)


def resistor_small_signal(element: Element, context: ExpansionContext):
    """An admittance ``1/R``; a zero resistance is an error (a 0 V source is the short)."""
    value = _passive_value(element, context)
    if value == 0:
        raise CircuitError(f"{element.name}: zero resistance (use a 0 V source for a short)",
                           path=context.circuit.path, line=element.line)
    return [_primitive("Y", element, ONE / value)], _meanings(value, passive_meaning("R", element.name))


def capacitor_small_signal(element: Element, context: ExpansionContext):
    """An admittance ``s*C`` (nothing for a zero capacitance)."""
    value = _passive_value(element, context)
    if value == 0:
        return [], {}
    meanings = _meanings(value, passive_meaning("C", element.name))
    meanings[LAPLACE] = _LAPLACE_MEANING
    return [_primitive("Y", element, Symbol(LAPLACE) * value)], meanings


def inductor_small_signal(element: Element, context: ExpansionContext):
    """An impedance branch ``s*L`` (a short at DC, with its own current unknown)."""
    value = _passive_value(element, context)
    meanings = _meanings(value, passive_meaning("L", element.name))
    meanings[LAPLACE] = _LAPLACE_MEANING
    return [_primitive("Z", element, Symbol(LAPLACE) * value)], meanings


def source_small_signal(element: Element, context: ExpansionContext):
    """An independent source kept at unit value; analyses drive one and zero the others."""
    return [_primitive(element.kind, element, ONE)], {}


def controlled_small_signal(element: Element, context: ExpansionContext):
    """A controlled source (G, E, F, H) as itself; F and H name their controlling source."""
    control = context.circuit.element(element.control).name if element.control else None
    return ([_primitive(element.kind, element, element.value, control)],
            _meanings(element.value, controlled_meaning(element.kind, element.name)))
