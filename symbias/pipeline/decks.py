"""A SPICE deck of a target for the sign-off simulation: numbers filled in, models resolved.

Pipeline step for the simulator: a target and design inputs -> deck text.
The deck is :func:`symbias.simulator.deck.write_deck`'s: the netlist's own
model cards and ``.include``/``.lib`` lines as written, flattened subcircuit
elements under the names ngspice gives them, ``m`` as ``m``, the tolerances of
the project's ngspice checks and a comment header saying what symbias assumed.

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
    return write_deck(corner_target(target, inputs).circuit, inputs.process, inputs.temperature, inputs.values,
                      control=ANALYSES[analysis], guess=dict(inputs.guess) or None).text
