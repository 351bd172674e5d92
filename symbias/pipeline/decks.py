"""A SPICE deck of a target for the sign-off simulation: numbers filled in, models resolved.

Pipeline step for the simulator: a target and design inputs -> deck text.
The deck is :func:`symbias.simulator.deck.write_deck`'s: the netlist's own
model cards and ``.include``/``.lib`` lines as written, flattened subcircuit
elements under the names ngspice gives them, ``m`` as ``m``, the tolerances of
the project's ngspice checks and a comment header saying what symbias assumed.
Where the circuit has several DC states, the deck carries a ``.nodeset`` of
the conducting one (the state every command reports) and says so in a
comment, with the start-up finding.

The sign-off analysis (``analysis="signoff"``) adds DC sweeps to the
operating point: each :class:`~symbias.pipeline.sweeps.SweepRequest` becomes
``dc SOURCE START STOP STEP`` (``dc temp ...`` for the temperature) and a
``wrdata <stem>_<n>.data`` of its output (``Iout(Vout)`` as the signed branch
current, ``V(node)`` as the node voltage), so ``ngspice -b deck.cir`` in the
deck's folder writes the curves a design note plots (:func:`sweep_files`).

Examples
--------
>>> from symbias.pipeline import load_target, design_inputs
>>> target = load_target("examples/simple_mirror.cir")
>>> signoff_deck(target, design_inputs(target)).splitlines()[1].startswith("* written by symbias")
True
"""

from __future__ import annotations

from typing import Sequence

from ..errors import CircuitError, UsageError
from .targets import DesignInputs, Target

__all__ = ["ANALYSES", "signoff_deck", "sweep_files", "sweep_control"]

#: Control blocks: "op" solves, prints every node voltage and source current, and
#: exits so ``ngspice -b deck.cir`` finishes with status 0; "none" leaves it empty.
ANALYSES = {
    "op": "op\nprint all\nquit",
    "signoff": "op\nprint all",
    "none": "",
}


def signoff_deck(target: Target, inputs: DesignInputs, analysis: str = "op", sweeps: Sequence = (),
                 stem: str = "signoff") -> str:
    """Deck text of the target's circuit with numbers, resolved models and a control block.

    Parameters
    ----------
    analysis : {"op", "signoff", "none"}
        The control block (see :data:`ANALYSES`); ``signoff`` runs ``sweeps`` after the operating point.
    sweeps : sequence of SweepRequest
        With ``signoff``: each sweep and its output, written to ``<stem>_<n>.data`` (:func:`sweep_files`).
    stem : str
        Stem of the files the sweeps write.

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
    circuit = corner_target(target, inputs).circuit
    control = ANALYSES[analysis]
    if analysis == "signoff":
        control = "\n".join([control, *sweep_control(circuit, sweeps, stem), "quit"])
    deck = write_deck(circuit, inputs.process, inputs.temperature, inputs.values, control=control,
                      guess=nodeset).text
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


def sweep_files(sweeps: Sequence, stem: str = "signoff") -> tuple[str, ...]:
    """Names of the files the sign-off sweeps write, in order: ``signoff_1.data`` ...

    Examples
    --------
    >>> from symbias.pipeline import SweepRequest
    >>> sweep_files([SweepRequest("Vout", 0, 5, 11), SweepRequest("temp", -40, 125, 34)])
    ('signoff_1.data', 'signoff_2.data')
    """
    return tuple(f"{stem}_{n}.data" for n in range(1, len(sweeps) + 1))


def sweep_control(circuit, sweeps: Sequence, stem: str = "signoff") -> list[str]:
    """Control lines of the sign-off sweeps: ``dc``, the output as a vector, ``wrdata``.

    Raises
    ------
    CircuitError
        For a sweep without an explicit output, or an output that is neither ``Iout(V...)``, ``I(V...)``
        nor ``V(node)``.

    Examples
    --------
    >>> from symbias.pipeline import SweepRequest, load_target
    >>> circuit = load_target("bjt-simple-mirror").circuit
    >>> sweep_control(circuit, [SweepRequest("Vout", 0, 5, 11, "Iout(Vout)")])
    ['dc Vout 0.0 5.0 0.5', 'let out1 = -1 * vout#branch', 'wrdata signoff_1.data out1']
    """
    from ..conventions import OUTPUT_PROBE, output_current
    from ..simulator.cards import number_text
    from ..simulator.deck import deck_names

    names = deck_names(circuit)
    lines = []
    for n, sweep in enumerate(sweeps, start=1):
        step = (sweep.stop - sweep.start) / (sweep.points - 1)
        source = "temp" if sweep.varies_temperature else names.element(sweep.vary)
        lines.append(f"dc {source} {number_text(sweep.start)} {number_text(sweep.stop)} {number_text(step)}")
        probe = (sweep.output or "").replace(" ", "")
        inner = probe[probe.index("(") + 1:-1] if probe.endswith(")") and "(" in probe else ""
        if probe.lower().startswith(OUTPUT_PROBE.lower() + "("):
            current = output_current(circuit, inner)
            vector = f"{current.sign} * {names.branch(current.source)}"
        elif probe.lower().startswith("i(") and circuit.has_element(inner) and circuit.element(inner).kind == "V":
            vector = names.branch(inner)
        elif probe.lower().startswith("v(") and inner.lower() in circuit.nodes:
            vector = names.voltage(inner)
        else:
            raise CircuitError(f"a sign-off sweep needs its output as Iout(V...), I(V...) or V(node), got "
                               f"{sweep.output!r}", path=circuit.path)
        lines += [f"let out{n} = {vector}", f"wrdata {stem}_{n}.data out{n}"]
    return lines
