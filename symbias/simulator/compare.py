"""The model check: the built-in models' operating point beside the simulator's, value by value.

The hand-analysis models (Ebers-Moll with Early effect, the square law) give
the right closed forms; whether they give the right *numbers* for a process
depends on how well they describe its devices.  :func:`compare_operating_points`
puts two operating points of one circuit side by side - per device its output
current and every small-signal value, and every node voltage - with the
relative difference taken against the simulator's value, so a designer sees
where the built-in models stop describing the process (a ``ro`` off by a
factor of ten under a level-54 card, say).

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.dc.operating_point import operating_point
>>> c = parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn (BF=100)\\n")
>>> check = compare_operating_points(operating_point(c), operating_point(c, temperature=37.0))
>>> row = check.row("Q1", "gm")
>>> round(row.relative, 3)
0.033
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..symbols import BJT_PARAMETERS, DIODE_PARAMETERS, MOS_PARAMETERS, PARAMETERS

__all__ = ["ValueComparison", "ModelComparison", "compare_operating_points"]

_ORDER = {"Q": BJT_PARAMETERS, "M": MOS_PARAMETERS, "D": DIODE_PARAMETERS}
_OUTPUT_LABEL = {"Q": "IC", "M": "ID", "D": "ID"}


@dataclass(frozen=True)
class ValueComparison:
    """One value from both sources.

    Attributes
    ----------
    item : str
        A device name, or ``node`` for a node voltage.
    quantity : str
        ``IC``/``ID``, a small-signal parameter (``gm``, ``ro`` ...) or the node's name.
    unit : str
    built_in, simulator : float
        ``nan`` where a source gives no such value.
    """

    item: str
    quantity: str
    unit: str
    built_in: float
    simulator: float

    @property
    def relative(self) -> float:
        """``(built-in - simulator) / |simulator|``; nan where either is missing or the simulator's is 0."""
        if not (math.isfinite(self.built_in) and math.isfinite(self.simulator)) or self.simulator == 0:
            return math.nan
        return (self.built_in - self.simulator) / abs(self.simulator)


@dataclass(frozen=True)
class ModelComparison:
    """Two operating points of one circuit compared, with the corner and temperature they are at.

    Attributes
    ----------
    title : str
    corner : str or None
        The ``.lib`` section, None as written.
    temperature : float
    rows : tuple of ValueComparison
        Devices first (output current, then small-signal values in their usual order), then node voltages.
    """

    title: str
    corner: str | None
    temperature: float
    rows: tuple[ValueComparison, ...]

    def row(self, item: str, quantity: str) -> ValueComparison:
        """The row of ``item`` (device or ``node``) and ``quantity`` (any case); a row of nan when there is none."""
        for row in self.rows:
            if row.item.lower() == item.lower() and row.quantity.lower() == quantity.lower():
                return row
        return ValueComparison(item, quantity, "", math.nan, math.nan)

    @property
    def largest(self) -> ValueComparison | None:
        """The device row with the largest relative difference (None when no value is in both)."""
        rows = [r for r in self.rows if r.item != "node" and math.isfinite(r.relative)]
        return max(rows, key=lambda r: abs(r.relative)) if rows else None

    def to_dict(self) -> dict:
        """Plain form for JSON."""
        return {"corner": self.corner, "temperature": self.temperature,
                "rows": [{"item": r.item, "quantity": r.quantity, "unit": r.unit, "built_in": r.built_in,
                          "simulator": r.simulator, "relative": r.relative} for r in self.rows]}


def compare_operating_points(built_in, simulated, corner: str | None = None) -> ModelComparison:
    """Compare the built-in models' operating point with the simulator's (the reference).

    Parameters
    ----------
    built_in, simulated : OperatingPoint
        Of the same circuit.
    corner : str, optional
        Recorded with the result.
    """
    rows: list[ValueComparison] = []
    for name, theirs in simulated.devices.items():
        ours = built_in.devices.get(name)
        rows.append(ValueComparison(name, _OUTPUT_LABEL.get(theirs.kind, "I"), "A",
                                    ours.output_current if ours is not None else math.nan, theirs.output_current))
        mine = dict(ours.small_signal) if ours is not None else {}
        keys = [k for k in _ORDER.get(theirs.kind, ()) if k in mine or k in theirs.small_signal]
        keys += [k for k in theirs.small_signal if k not in keys]
        for key in keys:
            unit = PARAMETERS[key].unit if key in PARAMETERS else ""
            rows.append(ValueComparison(name, key, unit, float(mine.get(key, math.nan)),
                                        float(theirs.small_signal.get(key, math.nan))))
    for node, volts in simulated.node_voltages.items():
        if node != "0":
            rows.append(ValueComparison("node", node, "V", float(built_in.node_voltages.get(node, math.nan)), volts))
    return ModelComparison(simulated.title, corner, simulated.temperature, tuple(rows))
