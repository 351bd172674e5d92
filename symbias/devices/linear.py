"""Linear elements (R C L, independent and controlled sources): their small-signal and DC stamps.

Device layer; the functions here are the ``small_signal`` and ``dc`` hooks of
the linear kinds in :mod:`symbias.elements`.

Small signal: each takes an element and an
:class:`~symbias.devices.options.ExpansionContext` and returns the linear
primitives that stand for it and the meaning of every symbol it brings in.

* R -> an admittance ``1/R``; C -> ``s*C``; L -> an impedance branch ``s*L``;
* V, I -> zero-valued sources kept so that an analysis can drive the one it names
  (a V source is a short, an I source is open);
* G, E, F, H -> the controlled source itself.

DC: each takes an element and a :class:`~symbias.devices.dc_context.StampContext`
and returns a :class:`~symbias.devices.dc_context.DcStamp`: a resistor is a
conductance (at its temperature: layer or instance ``tc1``/``tc2``), a
capacitor is open, an inductor a short with a branch current, V, E and H a
branch equation, I a right-hand side, G and F entries on their control.
A branch current flows from the element's first node through it to the
second (for a voltage source SPICE's sign: positive into the + terminal).

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

import numpy as np

from ..circuit import Element
from ..elements import Primitive
from ..errors import CircuitError
from ..expressions import ONE, Expr, Symbol
from ..symbols import LAPLACE, Meaning, controlled_meaning, identifier, passive_meaning
from .dc_context import Branch, DcStamp, SourceStamp, StampContext
from .options import ExpansionContext

__all__ = [
    "resistor_small_signal",
    "capacitor_small_signal",
    "inductor_small_signal",
    "source_small_signal",
    "controlled_small_signal",
    "resistor_dc",
    "capacitor_dc",
    "branch_dc",
    "current_dc",
    "vccs_dc",
    "cccs_dc",
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


# -- DC stamps ---------------------------------------------------------------------------------------


def _conductance(a, b, g) -> tuple:
    return ((a, a, g), (b, b, g), (a, b, -g), (b, a, -g))


def resistor_dc(element: Element, context: StampContext) -> DcStamp:
    """A conductance ``1/R(T)``, ``R(T) = R (1 + TC1 dT + TC2 dT^2)``, ``dT = T - tnom``.

    TC1 and TC2 come from the resistor's ``layer`` in the process, overridden
    by the instance ``tc1``/``tc2``; neither means no temperature dependence.

    Raises
    ------
    CircuitError
        A zero resistance, or a layer without a process.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nV1 a 0 1\\nR1 a 0 1k tc1=1e-3\\n")
    >>> stamp = resistor_dc(c.element("R1"), StampContext.create(c, temperature=127.0))
    >>> round(stamp.entries[0][2] * 1.1e3, 12)
    1.0
    """
    path = context.circuit.path
    r = context.value(element, "resistance")
    if np.any(np.asarray(r) == 0):
        raise CircuitError(f"{element.name}: zero resistance (use a 0 V source for a short)", path=path,
                           line=element.line)
    tc1 = tc2 = 0.0
    if "layer" in element.params:
        if context.process is None:
            raise CircuitError(f"{element.name}: layer={element.params['layer']} needs a process file", path=path,
                               line=element.line)
        layer = context.process.resistor(str(element.params["layer"]))
        tc1, tc2 = layer.tc1, layer.tc2
    tc1 = context.instance(element, "tc1", tc1)
    tc2 = context.instance(element, "tc2", tc2)
    dt = context.temperature - context.tnom
    g = 1.0 / (r * (1.0 + tc1 * dt + tc2 * dt * dt))
    a, b = element.nodes
    return DcStamp(entries=_conductance(a, b, g), current=((a, g), (b, -g)), off=((a, b, 0.0), (b, a, 0.0)))


def capacitor_dc(element: Element, context: StampContext) -> DcStamp:
    """Nothing: a capacitor is open at DC."""
    return DcStamp()


def branch_dc(element: Element, context: StampContext) -> DcStamp:
    """A branch-current unknown and its equation: V (``v = value``), L (a short), E, H.

    E: ``v(n+, n-) = gain v(nc+, nc-)``; H: ``v(n+, n-) = r i(control)``.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nV1 a 0 2\\nR1 a 0 1k\\n")
    >>> stamp = branch_dc(c.element("V1"), StampContext.create(c))
    >>> stamp.source.value, stamp.source.pattern
    (2.0, ((Branch(element='v1'), 1.0),))
    """
    k = Branch(element.key)
    p, m = element.nodes[:2]
    entries = [(p, k, 1.0), (m, k, -1.0), (k, p, 1.0), (k, m, -1.0)]
    source, off = None, ()
    if element.kind == "V":
        value = context.value(element, "value")
        source = SourceStamp("voltage", value, ((k, 1.0),))
        off = ((m, p, value), (p, m, -value))
    elif element.kind == "E":
        gain = context.value(element, "gain")
        entries += [(k, element.nodes[2], -gain), (k, element.nodes[3], gain)]
    elif element.kind == "H":
        gain = context.value(element, "transresistance")
        entries.append((k, Branch(element.control.lower()), -gain))
    else:  # an inductor: a short at DC
        off = ((p, m, 0.0), (m, p, 0.0))
    return DcStamp(entries=tuple(entries), branch=True, source=source, off=off)


def current_dc(element: Element, context: StampContext) -> DcStamp:
    """An independent current source: ``value`` from n+ through the source to n- (the rhs)."""
    p, m = element.nodes
    return DcStamp(source=SourceStamp("current", context.value(element, "value"), ((p, -1.0), (m, 1.0))), current=())


def vccs_dc(element: Element, context: StampContext) -> DcStamp:
    """A VCCS: current ``g v(nc+, nc-)`` from n+ through the element to n-."""
    g = context.value(element, "transconductance")
    p, m, cp, cm = element.nodes
    return DcStamp(entries=((p, cp, g), (p, cm, -g), (m, cp, -g), (m, cm, g)), current=((cp, g), (cm, -g)))


def cccs_dc(element: Element, context: StampContext) -> DcStamp:
    """A CCCS: current ``gain i(control)`` from n+ through the element to n-."""
    gain = context.value(element, "gain")
    k = Branch(element.control.lower())
    p, m = element.nodes
    return DcStamp(entries=((p, k, gain), (m, k, -gain)), current=((k, gain),))
