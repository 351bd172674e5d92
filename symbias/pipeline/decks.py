"""A SPICE deck of a target for the sign-off simulation: numbers filled in, models resolved.

Pipeline step for the simulator: a target and design inputs -> deck text.
The deck uses the same model mapping as the ngspice checks (docs/dc.md): it
is a starting point, and sign-off uses the foundry's models.

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
        For an unknown analysis.
    """
    from ..dc.reference import reference_deck

    if analysis not in ANALYSES:
        raise UsageError(f"unknown analysis {analysis!r} (choose from {', '.join(ANALYSES)})", path="--analysis")
    header = "* written by symbias: models mapped as in docs/dc.md; sign-off needs the foundry's models"
    text = reference_deck(target.circuit, inputs.process, inputs.temperature, inputs.values,
                          control=ANALYSES[analysis], options="")
    title, _, rest = text.partition("\n")
    return f"{title}\n{header}\n{rest}"
