"""Symbolic headroom: the minimum (or maximum) output voltage of a current source or sink.

Last step of the DC side.  From the active-region conditions of the devices
in the output branch - ``VCE >= VCE,sat`` for a BJT, ``VDS >= Vov`` for a MOS
device - and the node voltages that the bias network fixes (junction drops
from ground or from a supply, resistor drops; never the collector-emitter or
drain-source voltages, which move with the output), derive the output-voltage
limit as a formula, e.g. ``VBE + VCEsat`` for a BJT cascode or ``2*Vov`` for
a wide-swing MOS cascode.

Two forms are returned:

* ``expression``: per-device symbols (``VBE_Q1``, ``VCEsat_Q4``, ``VGS_M3``,
  ``Vov_M4``, ``V_R1`` for the drop across R1 from its first node to its
  second, source names for supplies), exact for the model's conditions and
  evaluated at the operating point;
* ``simplified``: the hand-analysis form, with devices of one model taken as
  matched (``VBE``, ``VCEsat``, ``VTH``), a MOS gate-source voltage written
  ``VTH + Vov`` and each overdrive written as a multiple of the output
  device's (``Vov*sqrt(k)``, ``k`` the current ratio over the size ratio read
  from the operating point and rounded to a simple fraction); this neglects
  the body effect and the spread of VBE with current.

Check it against a swept compliance (``compliance(...).by_region_low``).

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist('''cascode
... Iref 0 x 100u
... Q3 x x y QN
... Q1 y y 0 QN
... Q2 z y 0 QN
... Q4 out x z QN
... Vout out 0 2.5
... .model QN npn (IS=1e-16 BF=100 VAF=50)
... ''')
>>> h = headroom(c, "Vout")
>>> h.simplified, h.kind
(VBE + VCEsat, 'minimum')
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass, field
from fractions import Fraction
from types import MappingProxyType
from typing import Mapping

import sympy

from ..circuit import GROUND, Circuit, Element
from ..devices.nonlinear import HeadroomRole, device_model
from ..elements import KINDS
from ..errors import CircuitError
from ..process import Process
from .operating_point import OperatingPoint, operating_point

__all__ = ["Headroom", "headroom", "fixed_node_voltages"]


@dataclass(frozen=True)
class Headroom:
    """The output-voltage limit of a current source or sink.

    Attributes
    ----------
    output : str
        The output node.
    kind : str
        ``"minimum"`` for a sink (npn/nmos output device), ``"maximum"`` for a source.
    expression : sympy.Expr
        The limit in per-device symbols.
    simplified : sympy.Expr
        Hand-analysis form with matched symbols.
    value : float
        ``expression`` at the operating point (V).
    values : mapping
        Number of every symbol of ``expression`` at the operating point.
    simplified_values : mapping
        Number of every symbol of ``simplified``: VBE, VCEsat and Vov of the
        output device, the smallest threshold among the devices involved.
    device : str
        The output device whose condition sets the limit.
    conditions : tuple of (str, sympy.Expr, bool)
        Every device of the output branch: name, the condition as
        ``lhs >= 0`` (its left side), and whether it holds at the operating point.
    """

    output: str
    kind: str
    expression: sympy.Expr
    simplified: sympy.Expr
    value: float
    values: Mapping[str, float] = field(default_factory=dict)
    simplified_values: Mapping[str, float] = field(default_factory=dict)
    device: str = ""
    conditions: tuple = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "values", MappingProxyType(dict(self.values)))
        object.__setattr__(self, "simplified_values", MappingProxyType(dict(self.simplified_values)))

    @property
    def simplified_value(self) -> float:
        """``simplified`` evaluated with the output device's numbers."""
        return float(self.simplified.subs({sympy.Symbol(k): v for k, v in self.simplified_values.items()}))

    def to_dict(self) -> dict:
        """Plain-dict form for JSON (expressions as sympy-parseable strings)."""
        return {
            "output": self.output, "kind": self.kind, "expression": str(self.expression),
            "simplified": str(self.simplified), "value": self.value, "simplified_value": self.simplified_value,
            "values": dict(self.values), "device": self.device,
            "conditions": [{"device": d, "margin": str(e), "holds": ok} for d, e, ok in self.conditions],
        }


def _symbol(name: str) -> sympy.Symbol:
    return sympy.Symbol(name)


def _role(element: Element) -> HeadroomRole | None:
    model = device_model(element.kind)
    return model.headroom if model is not None else None


def _is_supply(element: Element) -> bool:
    kind = KINDS[element.kind]
    return kind.fixes_voltage and kind.value_unit == "V"


def _is_resistor(element: Element) -> bool:
    kind = KINDS[element.kind]
    return kind.value_unit == "ohm" and not kind.controlled_by_source


def _edges(circuit: Circuit, op: OperatingPoint, exclude: str):
    """(from, to, delta, numbers) with V(to) = V(from) + delta, for every relation fixed by the bias."""
    edges = []
    for element in circuit.elements:
        n = element.nodes
        role = _role(element)
        if _is_supply(element) and element.key != exclude.lower():
            sym = _symbol(element.name)
            value = {element.name: op.voltage(n[0]) - op.voltage(n[1])}
            edges += [(n[1], n[0], sym, value), (n[0], n[1], -sym, value)]
        elif _is_resistor(element):
            sym = _symbol(f"V_{element.name}")
            value = {sym.name: op.voltage(n[0]) - op.voltage(n[1])}
            edges += [(n[1], n[0], sym, value), (n[0], n[1], -sym, value)]
        elif role is not None:
            # control-to-low drop (base-emitter, gate-source), a magnitude symbol signed by the polarity
            dev = op.device(element.name)
            prefix, key = role.drop
            sym = _symbol(f"{prefix}_{element.name}")
            value = {sym.name: dev.polarity * dev.voltages[key]}
            low, control = n[role.output[1]], n[role.control]
            edges += [(low, control, dev.polarity * sym, value), (control, low, -dev.polarity * sym, value)]
    return edges


def fixed_node_voltages(circuit: Circuit, op: OperatingPoint, exclude: str = "") -> tuple[dict, dict]:
    """Node voltages the bias network fixes, as expressions, and the numbers of their symbols.

    A breadth-first search from ground over supply sources, resistors and
    base-emitter / gate-source drops (the voltage source ``exclude``, the
    swept output, is left out); the first path found - the one with the
    fewest drops - gives each node's expression.
    """
    graph: dict[str, list] = {}
    for a, b, delta, numbers in _edges(circuit, op, exclude):
        graph.setdefault(a, []).append((b, delta, numbers))
    expr: dict[str, sympy.Expr] = {GROUND: sympy.Integer(0)}
    numbers: dict[str, float] = {}
    queue = deque([GROUND])
    while queue:
        node = queue.popleft()
        for target, delta, values in graph.get(node, []):
            if target not in expr:
                expr[target] = expr[node] + delta
                numbers.update(values)
                queue.append(target)
    return expr, numbers


def _output_chain(circuit: Circuit, out: str) -> list[Element]:
    chain: list[Element] = []
    node = out
    seen = set()
    while True:
        device = next((e for e in circuit.devices if (role := _role(e)) is not None
                       and e.nodes[role.output[0]] == node and e.nodes[role.control] != node
                       and e.key not in seen), None)
        if device is None:
            return chain
        chain.append(device)
        seen.add(device.key)
        node = device.nodes[_role(device).output[1]]


def headroom(circuit: Circuit, output: str, process: Process | None = None, temperature: float = 27.0,
             values: Mapping[str, float] | None = None, *, op: OperatingPoint | None = None) -> Headroom:
    """Minimum (sink) or maximum (source) output voltage from the active-region conditions.

    Parameters
    ----------
    circuit : Circuit
    output : str
        The voltage source holding the output node (its first node is the output).
    op : OperatingPoint, optional
        Where to evaluate the symbols; solved here when not given.

    Raises
    ------
    CircuitError
        When ``output`` is not a voltage source, no transistor's collector or
        drain is on the output node, or the bias network does not fix the
        voltage the output device's emitter or source sits at.
    """
    source = circuit.element(output)
    if not _is_supply(source):
        raise CircuitError(f"{output}: headroom needs the voltage source on the output node", path=circuit.path,
                           line=source.line)
    out = source.nodes[0] if source.nodes[0] != GROUND else source.nodes[1]
    op = op or operating_point(circuit, process, temperature, values)
    chain = _output_chain(circuit, out)
    if not chain:
        raise CircuitError(f"no collector or drain on output node {out!r}", path=circuit.path, line=source.line)
    fixed, numbers = fixed_node_voltages(circuit, op, source.name)
    top = chain[0]
    dev = op.device(top.name)
    pol = dev.polarity
    low = top.nodes[_role(top).output[1]]
    if low not in fixed:
        raise CircuitError(f"{top.name}: the bias network does not fix node {low!r}, so the headroom has no "
                           f"closed form", path=circuit.path, line=top.line)
    sat_name, sat_symbol, sat_value = _saturation(top, dev)
    numbers[sat_name] = sat_value
    expression = fixed[low] + pol * sat_symbol
    conditions = tuple(_conditions(chain, op, fixed, numbers, out))
    value = float(expression.subs({_symbol(k): v for k, v in numbers.items()}))
    simplified, simple_values = _simplify(expression, circuit, op, top, numbers)
    used = {s.name for s in expression.free_symbols}
    return Headroom(
        output=out,
        kind="minimum" if pol > 0 else "maximum",
        expression=expression,
        simplified=simplified,
        value=value,
        values={k: v for k, v in numbers.items() if k in used},
        simplified_values=simple_values,
        device=top.name,
        conditions=conditions,
    )


def _saturation(element: Element, dev) -> tuple[str, sympy.Symbol, float]:
    prefix, key = _role(element).saturation
    name = f"{prefix}_{element.name}"
    return name, _symbol(name), dev.limits[key]


def _conditions(chain: list[Element], op: OperatingPoint, fixed: dict, numbers: dict, out: str):
    for element in chain:
        dev = op.device(element.name)
        pol = dev.polarity
        high, low = (element.nodes[i] for i in _role(element).output)
        name, symbol, value = _saturation(element, dev)
        numbers.setdefault(name, value)
        hi = _symbol("Vout") if high == out else fixed.get(high, _symbol(f"V_{high}"))
        lo = fixed.get(low, _symbol(f"V_{low}"))
        margin = pol * (hi - lo) - symbol
        across = op.voltage(high) - op.voltage(low)
        yield element.name, margin, bool(pol * across >= value)


def _ratio(value: float) -> sympy.Expr:
    fraction = Fraction(value).limit_denominator(8)
    if abs(float(fraction) - value) > 0.05 * abs(value):
        return sympy.Float(value, 4)
    return sympy.Rational(fraction.numerator, fraction.denominator)


def _simplify(expression: sympy.Expr, circuit: Circuit, op: OperatingPoint, top: Element,
              numbers: Mapping[str, float]):
    """Matched-device form (see the module docstring); each device kind gives its own hand-analysis terms."""
    ref = op.device(top.name)
    ref_size = _role(top).size(top)
    subs: dict[sympy.Symbol, sympy.Expr] = {}
    # the matched symbols take the output device's numbers (or the first device of that kind)
    simple_values: dict[str, float] = dict(numbers)
    for symbol in sorted(expression.free_symbols, key=lambda s: s.name):
        prefix, _, device = symbol.name.partition("_")
        if not device or not circuit.has_element(device):
            continue
        element = circuit.element(device)
        role = _role(element)
        if role is None or prefix not in (role.drop[0], role.saturation[0]):
            continue
        dev = op.device(device)
        source = ref if element.kind == top.kind else dev
        current_ratio = abs(dev.output_current) / abs(ref.output_current) if ref.output_current else 1.0
        ratio = _ratio(current_ratio * (ref_size / role.size(element)))
        subs[symbol], values = role.matched(prefix, dev, source, ratio)
        for key, value in values.items():
            if key in role.smallest:
                simple_values[key] = min(simple_values.get(key, float("inf")), value)
            else:
                simple_values.setdefault(key, value)
    simplified = sympy.simplify(expression.subs(subs))
    used = {s.name for s in simplified.free_symbols}
    return simplified, {k: v for k, v in simple_values.items() if k in used}
