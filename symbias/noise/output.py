"""Where output noise is observed: the current through a voltage source, or a node voltage.

Part of :mod:`symbias.noise`, below the transfers and the spectrum.  A
current source or mirror is read at its output port, the voltage source that
holds the output (short-circuit output noise current, A^2/Hz); a reference at
its output node (noise voltage, V^2/Hz).  Every noise source is a current
injected across two nodes (:func:`drive`).

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist("t\\nV1 a 0 1\\nR1 a b 1k\\nVout b 0 0\\n")
>>> o = noise_output(c, "Vout")
>>> o.kind, o.label, o.unit, o.observe
('current', 'i(Vout)', 'A^2/Hz', (('i:Vout', -1),))
>>> noise_output(c, "a").unit
'V^2/Hz'
"""

from __future__ import annotations

from dataclasses import dataclass

from ..analyses import parse_port
from ..circuit import GROUND, Circuit
from ..errors import CircuitError

__all__ = ["NoiseOutput", "noise_output", "drive"]


@dataclass(frozen=True)
class NoiseOutput:
    """The output of a noise analysis.

    Parameters
    ----------
    kind : {"current", "voltage"}
    name : str
        The voltage source, node or ``a,b`` pair as given.
    label : str
        ``i(Vout)`` or ``v(vref)``.
    observe : tuple
        The observation vector entries (:class:`~symbias.linear.mna.LinearProblem`).
    """

    kind: str
    name: str
    label: str
    observe: tuple[tuple[str, int], ...]

    @property
    def unit(self) -> str:
        """Unit of a noise density at this output."""
        return "A^2/Hz" if self.kind == "current" else "V^2/Hz"

    @property
    def transfer_unit(self) -> str:
        """Unit of a transfer from a noise current to this output."""
        return "A/A" if self.kind == "current" else "V/A"

    @property
    def root_unit(self) -> str:
        """Unit of the square root of a density (``A/sqrt(Hz)``)."""
        return "A/sqrt(Hz)" if self.kind == "current" else "V/sqrt(Hz)"


def noise_output(circuit: Circuit, output: str) -> NoiseOutput:
    """The output named by a voltage source (its current) or a node or ``a,b`` pair (the voltage).

    Raises
    ------
    CircuitError
        For an element that is not a voltage source, or an unknown node.
    """
    text = output.strip()
    if "," not in text and circuit.has_element(text):
        element = circuit.element(text)
        if element.kind != "V":
            raise CircuitError(f"the noise output {element.name} must be a voltage source (its current) or a node "
                               "(its voltage)", path=circuit.path, line=element.line)
        return NoiseOutput("current", element.name, f"i({element.name})", ((f"i:{element.name}", -1),))
    a, b = parse_port(circuit, text)
    observe = tuple((f"v:{n}", sign) for n, sign in ((a, 1), (b, -1)) if n != GROUND)
    if not observe:
        raise CircuitError(f"the noise output {text!r} is ground", path=circuit.path)
    return NoiseOutput("voltage", text, f"v({text})", observe)


def drive(nodes: tuple[str, str]) -> tuple[tuple[str, int], ...]:
    """Right-hand side of a unit current from ``nodes[0]`` through the source to ``nodes[1]``.

    Examples
    --------
    >>> drive(("c", "0"))
    (('v:c', -1),)
    """
    return tuple((f"v:{n}", sign) for n, sign in ((nodes[0], -1), (nodes[1], 1)) if n != GROUND)
