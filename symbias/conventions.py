"""Sign conventions every command uses, written once: which way an output current counts.

Device layer (it needs the circuit and which devices are transistors); the
analyses, the DC side and the renderers take their signs from here, and
``docs/conventions.md`` states them for the designer.

The *output current* of a current source or mirror is the current through the
voltage source that holds its output node (``Vout``), counted positive in the
direction the output transistor drives it:

* a **sink** - an npn collector or an nmos drain at the output node - pulls
  current from the load into the output node;
* a **source** - a pnp collector or a pmos drain at the output node - pushes
  current out of the output node into the load.

So a working mirror of either polarity has a positive output current and a
positive current gain, however its output source is written.  The output node
is the node of the output source that a transistor's output terminal (collector,
drain) touches; where both or neither do, the source's ``+`` node is taken
when no transistor decides, and the current counts as the current out of the
source's ``+`` terminal into the circuit (SPICE's branch current negated).

Every other current keeps SPICE's sign and says so: a voltage source's branch
current is positive into its ``+`` terminal (``I(Vx)``), a current source's
value flows from its first node through the source to its second, and an
element's current from its first node to its second.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> pnp = parse_netlist("t\\nVcc vcc 0 5\\nIref in 0 1m\\nQ1 in in vcc QP\\nQ2 out in vcc QP\\n"
...                     "Vout out 0 2\\n.model QP pnp\\n")
>>> out = output_current(pnp, "Vout")
>>> out.direction, out.node, out.sign, out.label
('sources', 'out', 1, 'Iout(Vout)')
>>> out.meaning
'current Q2 (pnp collector) sources out of node out into Vout'
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Mapping

from .circuit import GROUND, Circuit
from .devices.nonlinear import device_model
from .errors import CircuitError

__all__ = ["OutputCurrent", "output_current", "output_currents", "SPICE_BRANCH", "OUTPUT_PROBE"]
#: How a voltage source's branch current is signed wherever it is shown.
SPICE_BRANCH = "SPICE sign: positive into the + terminal"
#: Name of the output-current probe: ``Iout(<source>)``.
OUTPUT_PROBE = "Iout"


@dataclass(frozen=True)
class OutputCurrent:
    """How the output current through one voltage source is counted.

    Attributes
    ----------
    source : str
        The voltage source, as written.
    node : str
        The output node (one of the source's nodes).
    direction : str or None
        ``"sinks"`` or ``"sources"``; None when no transistor output touches the source.
    sign : int
        ``Iout = sign * I(source)``, with ``I(source)`` SPICE's branch current.
    device : str or None
        The transistor whose output terminal decides the direction.
    device_type : str or None
        Its model type (npn, pnp, nmos, pmos).
    """

    source: str
    node: str
    direction: str | None
    sign: int
    device: str | None = None
    device_type: str | None = None

    @property
    def label(self) -> str:
        """The probe name, ``Iout(Vout)``."""
        return f"{OUTPUT_PROBE}({self.source})"

    @property
    def meaning(self) -> str:
        """One line saying which way the current counts."""
        if self.direction is None:
            return f"current out of the + terminal of {self.source} into the circuit (no transistor output at it)"
        terminal = "collector" if self.device_type in ("npn", "pnp") else "drain"
        who = f"{self.device} ({self.device_type} {terminal})"
        if self.direction == "sinks":
            return f"current {who} sinks from {self.source} into node {self.node}"
        return f"current {who} sources out of node {self.node} into {self.source}"

    def to_dict(self) -> dict:
        """Plain-dict form for JSON."""
        return {"probe": self.label, "source": self.source, "node": self.node, "direction": self.direction,
                "sign_vs_spice": self.sign, "device": self.device, "meaning": self.meaning, "unit": "A"}


def _output_devices(circuit: Circuit, node: str) -> list[tuple[str, Any]]:
    """(device name, model card) of every transistor whose output terminal is at ``node``."""
    found = []
    for element in circuit.devices:
        model = device_model(element.kind)
        if model is None or not model.working_regions:  # a diode is not a current-source output
            continue
        if element.nodes[model.terminals.index(model.output)] == node:
            found.append((element.name, circuit.model_of(element)))
    return found


def output_current(circuit: Circuit, source: str) -> OutputCurrent:
    """How the output current through voltage source ``source`` counts (see the module docstring).

    Raises
    ------
    CircuitError
        When ``source`` is not a voltage source of the circuit.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> npn = parse_netlist("t\\nIref 0 in 1m\\nQ1 in in 0 QN\\nQ2 out in 0 QN\\nVout out 0 2\\n.model QN npn\\n")
    >>> output_current(npn, "vout").direction, output_current(npn, "vout").sign
    ('sinks', -1)
    """
    if not circuit.has_element(source) or circuit.element(source).kind != "V":
        raise CircuitError(f"no voltage source named {source!r} to measure an output current", path=circuit.path)
    element = circuit.element(source)
    plus, minus = element.nodes[:2]
    sides = [(node, _output_devices(circuit, node)) for node in (plus, minus) if node != GROUND]
    deciding = [(node, devices) for node, devices in sides if devices]
    if len(deciding) != 1:
        return OutputCurrent(element.name, plus, None, -1)
    node, devices = deciding[0]
    name, card = devices[0]
    direction = "sources" if card.polarity < 0 else "sinks"  # pnp and pmos outputs source current
    # I(source) enters the + terminal from the circuit: the current the circuit delivers into the source at +
    delivered = 1 if node == plus else -1
    sign = delivered if direction == "sources" else -delivered
    return OutputCurrent(element.name, node, direction, sign, name, card.type)


def output_currents(circuit: Circuit, branch_currents: Mapping[str, float]) -> list[tuple[OutputCurrent, float]]:
    """Every voltage source a transistor output drives, with its output current from SPICE branch currents.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> npn = parse_netlist("t\\nIref 0 in 1m\\nQ1 in in 0 QN\\nQ2 out in 0 QN\\nVout out 0 2\\n.model QN npn\\n")
    >>> [(o.label, value) for o, value in output_currents(npn, {"Vout": -1e-3})]
    [('Iout(Vout)', 0.001)]
    """
    found = []
    for element in circuit.elements_of("V"):
        out = output_current(circuit, element.name)
        if out.direction is not None and element.name in branch_currents:
            found.append((out, out.sign * branch_currents[element.name]))
    return found
