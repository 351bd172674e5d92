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


def _edges(circuit: Circuit, op: OperatingPoint, exclude: str):
    """(from, to, delta, numbers) with V(to) = V(from) + delta, for every relation fixed by the bias."""
    edges = []
    for element in circuit.elements:
        n = element.nodes
        if element.kind == "V" and element.key != exclude.lower():
            sym = _symbol(element.name)
            value = {element.name: op.voltage(n[0]) - op.voltage(n[1])}
            edges += [(n[1], n[0], sym, value), (n[0], n[1], -sym, value)]
        elif element.kind == "R":
            sym = _symbol(f"V_{element.name}")
            value = {sym.name: op.voltage(n[0]) - op.voltage(n[1])}
            edges += [(n[1], n[0], sym, value), (n[0], n[1], -sym, value)]
        elif element.kind in ("Q", "M"):
            # base-emitter or gate-source drop, as a magnitude symbol signed by the polarity
            dev = op.device(element.name)
            pol = 1 if dev.type in ("npn", "nmos") else -1
            drop = "vbe" if element.kind == "Q" else "vgs"
            sym = _symbol(f"{drop.upper()}_{element.name}")
            value = {sym.name: pol * dev.voltages[drop]}
            edges += [(n[2], n[1], pol * sym, value), (n[1], n[2], -pol * sym, value)]
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
        device = next((e for e in circuit.devices if e.nodes[0] == node and e.nodes[1] != node
                       and e.key not in seen), None)
        if device is None:
            return chain
        chain.append(device)
        seen.add(device.key)
        node = device.nodes[2]


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
    if source.kind != "V":
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
    pol = 1 if dev.type in ("npn", "nmos") else -1
    low = top.nodes[2]
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
    if element.kind == "Q":
        name = f"VCEsat_{element.name}"
        return name, _symbol(name), dev.limits["vcesat"]
    name = f"Vov_{element.name}"
    return name, _symbol(name), dev.limits["vdsat"]


def _conditions(chain: list[Element], op: OperatingPoint, fixed: dict, numbers: dict, out: str):
    for element in chain:
        dev = op.device(element.name)
        pol = 1 if dev.type in ("npn", "nmos") else -1
        name, symbol, value = _saturation(element, dev)
        numbers.setdefault(name, value)
        hi = _symbol("Vout") if element.nodes[0] == out else fixed.get(element.nodes[0], _symbol(f"V_{element.nodes[0]}"))
        lo = fixed.get(element.nodes[2], _symbol(f"V_{element.nodes[2]}"))
        margin = pol * (hi - lo) - symbol
        ce = op.voltage(element.nodes[0]) - op.voltage(element.nodes[2])
        yield element.name, margin, bool(pol * ce >= value)


def _ratio(value: float) -> sympy.Expr:
    fraction = Fraction(value).limit_denominator(8)
    if abs(float(fraction) - value) > 0.05 * abs(value):
        return sympy.Float(value, 4)
    return sympy.Rational(fraction.numerator, fraction.denominator)


def _simplify(expression: sympy.Expr, circuit: Circuit, op: OperatingPoint, top: Element,
              numbers: Mapping[str, float]):
    """Matched-device form: VBE, VCEsat, VTH + sqrt(k)*Vov (see the module docstring)."""
    ref = op.device(top.name)
    ref_size = _size(top)
    vov = _symbol("Vov")
    subs: dict[sympy.Symbol, sympy.Expr] = {}
    # the matched symbols take the output device's numbers (or the first device of that kind)
    simple_values: dict[str, float] = dict(numbers)
    for symbol in sorted(expression.free_symbols, key=lambda s: s.name):
        kind, _, device = symbol.name.partition("_")
        if kind not in ("VBE", "VCEsat", "VGS", "Vov") or not device:
            continue
        element = circuit.element(device)
        dev = op.device(device)
        source = ref if element.kind == top.kind else dev
        if kind == "VBE":
            subs[symbol] = _symbol("VBE")
            simple_values.setdefault("VBE", abs(source.voltages["vbe"]))
        elif kind == "VCEsat":
            subs[symbol] = _symbol("VCEsat")
            simple_values.setdefault("VCEsat", source.limits["vcesat"])
        else:
            k = _ratio((abs(dev.output_current) / abs(ref.output_current)) * (ref_size / _size(element)))
            scaled = vov * sympy.sqrt(k)
            subs[symbol] = (_symbol("VTH") + scaled) if kind == "VGS" else scaled
            simple_values.setdefault("Vov", source.limits["vov"])
            # hand analysis means the zero-bias threshold: the smallest, since the body effect only raises it
            simple_values["VTH"] = min(simple_values.get("VTH", float("inf")), abs(dev.limits["vth"]))
    simplified = sympy.simplify(expression.subs(subs))
    used = {s.name for s in simplified.free_symbols}
    return simplified, {k: v for k, v in simple_values.items() if k in used}


def _size(element: Element) -> float:
    """W/L times m of a MOS device (1 for a BJT: area is folded into the current ratio)."""
    if element.kind != "M":
        return 1.0
    params = element.params
    w = float(params["w"]) if "w" in params else 1.0
    l = float(params["l"]) if "l" in params else 1.0
    m = float(params["m"]) if "m" in params else 1.0
    return w / l * m
