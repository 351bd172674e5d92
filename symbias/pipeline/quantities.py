"""Which small-signal quantities to derive: parsed requests and the defaults from a target's roles.

Pipeline step 2.  A :class:`Quantity` names an analysis of
:mod:`symbias.analyses` and its arguments (a port, or an output and an input
source).  Without a request, a library topology gives its output resistance
at the output role and its main transfer from the input role; a plain netlist
gives the output resistance at a source named ``Vout`` (or ``Vo``) and the
current gain from its only current source.

Examples
--------
>>> parse_quantity("current_gain", "Vout/Iref")
Quantity(kind='current_gain', arguments=('Vout', 'Iref'))
>>> from symbias.pipeline.targets import load_target
>>> [q.kind for q in default_quantities(load_target("examples/simple_mirror.cir"))]
['output_resistance', 'current_gain']
"""

from __future__ import annotations

from dataclasses import dataclass

from ..errors import CircuitError, UsageError
from .targets import Target

__all__ = ["Quantity", "QUANTITY_KINDS", "parse_quantity", "default_quantities"]

#: Quantity kind -> (unit, number of arguments, what the arguments are).
QUANTITY_KINDS: dict[str, tuple[str, int, str]] = {
    "output_resistance": ("ohm", 1, "PORT"),
    "current_gain": ("A/A", 2, "OUT/IN"),
    "voltage_gain": ("V/V", 2, "OUT/IN"),
    "transconductance": ("A/V", 2, "OUT/IN"),
    "transimpedance": ("V/A", 2, "OUT/IN"),
}

_OUTPUT_NAMES = ("vout", "vo")


@dataclass(frozen=True)
class Quantity:
    """One small-signal quantity to derive: its kind and arguments.

    Parameters
    ----------
    kind : str
        A key of :data:`QUANTITY_KINDS`.
    arguments : tuple of str
        ``(port,)`` for an output resistance, ``(output, input)`` for a transfer.

    Examples
    --------
    >>> Quantity("current_gain", ("Vout", "Iref")).arguments
    ('Vout', 'Iref')
    """

    kind: str
    arguments: tuple[str, ...]

    def __post_init__(self) -> None:
        if self.kind not in QUANTITY_KINDS:
            raise UsageError(f"unknown quantity {self.kind!r} (choose from {', '.join(QUANTITY_KINDS)})")
        object.__setattr__(self, "arguments", tuple(self.arguments))
        wanted = QUANTITY_KINDS[self.kind][1]
        if len(self.arguments) != wanted:
            raise UsageError(f"{self.kind} takes {QUANTITY_KINDS[self.kind][2]}, got {'/'.join(self.arguments)!r}")


def parse_quantity(kind: str, text: str, option: str | None = None) -> Quantity:
    """A quantity from command-line text: ``PORT`` or ``OUT/IN``; ``option`` names it in messages.

    Raises
    ------
    UsageError
        When a transfer is not written ``OUT/IN``.

    Examples
    --------
    >>> parse_quantity("output_resistance", "Vout").arguments
    ('Vout',)
    """
    if QUANTITY_KINDS.get(kind, (None, 1))[1] == 1:
        return Quantity(kind, (text.strip(),))
    if text.count("/") != 1 or not all(part.strip() for part in text.split("/")):
        raise UsageError(f"{option or kind.replace('_', ' ')} expects OUT/IN, got {text!r}")
    out_name, in_name = (part.strip() for part in text.split("/"))
    return Quantity(kind, (out_name, in_name))


def default_quantities(target: Target) -> tuple[Quantity, ...]:
    """Rout at the output and the main transfer, from the topology's roles or the netlist's names.

    Raises
    ------
    CircuitError
        When no output can be found (name a quantity instead).
    """
    circuit, topology = target.circuit, target.topology
    if topology is not None and topology.roles.get("output"):
        return tuple(Quantity(kind, arguments) for kind, arguments in topology.default_quantities(circuit))
    outputs = [e.name for e in circuit.elements_of("V") if e.name.lower() in _OUTPUT_NAMES]
    if not outputs:
        raise CircuitError("name a quantity: --rout PORT or --gain OUT/IN (no output element 'Vout' found)",
                           path=circuit.path)
    wanted = [Quantity("output_resistance", (outputs[0],))]
    currents = circuit.elements_of("I")
    if len(currents) == 1:
        wanted.append(Quantity("current_gain", (outputs[0], currents[0].name)))
    return tuple(wanted)
