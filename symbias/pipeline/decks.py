"""A SPICE deck of a target for the sign-off simulation: numbers filled in, models resolved.

Pipeline step for the simulator: a target and design inputs -> deck text.
The deck is :func:`symbias.simulator.deck.write_deck`'s: the netlist's own
model cards and ``.include``/``.lib`` lines as written, flattened subcircuit
elements under the names ngspice gives them, ``m`` as ``m``, the tolerances of
the project's ngspice checks and a comment header saying what symbias assumed.
Where the circuit has several DC states, the deck carries a ``.nodeset`` of
the conducting one (the state every command reports) and says so in a
comment, with the start-up finding.

Examples
--------
>>> from symbias.pipeline import load_target, design_inputs
>>> target = load_target("examples/simple_mirror.cir")
>>> signoff_deck(target, design_inputs(target)).splitlines()[1].startswith("* written by symbias")
True
"""

from __future__ import annotations

from ..errors import UsageError
from .targets import DesignInputs, Target

__all__ = ["ANALYSES", "signoff_deck"]

#: Control blocks: "op" solves, prints every node voltage and source current, and
#: exits so ``ngspice -b deck.cir`` finishes with status 0; "none" leaves it empty.
ANALYSES = {
    "op": "op\nprint all\nquit",
    "none": "",
}


def signoff_deck(target: Target, inputs: DesignInputs, analysis: str = "op") -> str:
    """Deck text of the target's circuit with numbers, resolved models and a control block.

    Raises
    ------
    CircuitError
        When a free symbol has no number.
    UsageError
        For an unknown analysis, several corners or one the netlist's ``.lib`` files lack.
    """
    from ..simulator.deck import write_deck
    from .simulation import corner_target

    if analysis not in ANALYSES:
        raise UsageError(f"unknown analysis {analysis!r} (choose from {', '.join(ANALYSES)})", path="--analysis")
    notes, nodeset = _states(target, inputs)
    deck = write_deck(corner_target(target, inputs).circuit, inputs.process, inputs.temperature, inputs.values,
                      control=ANALYSES[analysis], guess=nodeset).text
    if not notes:
        return deck
    lines = deck.split("\n")
    header_end = next(i for i, line in enumerate(lines[1:], start=1) if not line.startswith("*"))
    return "\n".join(lines[:header_end] + notes + lines[header_end:])


def _states(target: Target, inputs: DesignInputs) -> tuple[list[str], dict[str, float] | None]:
    """Comment lines on the DC states and the node voltages of the conducting one (None: one state)."""
    from ..errors import SymbiasError
    from .bias import operating_point_of

    if inputs.guess:
        return [], dict(inputs.guess)
    try:
        point = operating_point_of(target, inputs)
    except SymbiasError as err:  # the deck is still worth writing; say why it has no nodeset
        return [f"* symbias found no DC operating point ({err.reason}); no .nodeset written"], None
    states = point.states
    if states is None or not states.several:
        return [], None
    notes = [f"* {len(states.states)} DC states found; .nodeset puts the simulator on the {states.reason} "
             f"({point.supply_current:.4g} A from the supplies)"]
    if states.needs_startup:
        notes.append("* a zero-current state exists: the circuit needs a start-up circuit")
    return notes, {node: value for node, value in point.node_voltages.items() if node != "0"}
