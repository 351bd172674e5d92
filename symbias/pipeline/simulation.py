"""Bias values from ngspice, and the target at a process corner.

Pipeline step behind :func:`~symbias.pipeline.bias.operating_point_of`: when
:class:`~symbias.pipeline.targets.DesignInputs` asks for ``models="ngspice"``,
the operating point comes from the simulator run on the netlist's own model
cards (:mod:`symbias.simulator`); when it names a corner, the netlist is read
again with that section of its ``.lib`` files (for either source of values).

Examples
--------
>>> from symbias.pipeline.targets import load_target, design_inputs
>>> target = load_target("examples/simple_mirror.cir")
>>> corner_target(target, design_inputs(target)) is target
True
"""

from __future__ import annotations

from dataclasses import replace

from ..errors import UsageError
from .targets import DesignInputs, Target

__all__ = ["corner_target", "simulated_point"]


def corner_target(target: Target, inputs: DesignInputs) -> Target:
    """The target read at the one corner ``inputs`` names (the target itself without a corner).

    Raises
    ------
    UsageError
        Several corners (each needs its own operating point: :func:`~symbias.pipeline.corners.corner_points`),
        or a corner no ``.lib`` file of the netlist has.
    """
    if not inputs.corners:
        return target
    if len(inputs.corners) > 1:
        raise UsageError(f"one corner at a time here, got {', '.join(inputs.corners)} (symbias bias tabulates "
                         "several)", path="--corner")
    from ..simulator.corners import at_corner

    return replace(target, circuit=at_corner(target.circuit, inputs.corners[0]))


def simulated_point(target: Target, inputs: DesignInputs):
    """ngspice's operating point of the target (at its corner), as an OperatingPoint.

    Raises
    ------
    SimulatorError
        ngspice missing or failing (its own message, and where the deck is kept).
    CircuitError
        A free symbol without a number; a model level symbias cannot read back.
    """
    from ..simulator.operating_point import SimulatorSettings, simulator_operating_point

    target = corner_target(target, inputs)
    return simulator_operating_point(target.circuit, inputs.process, inputs.temperature, inputs.values,
                                     guess=dict(inputs.guess) or None, settings=SimulatorSettings(keep=inputs.keep_deck))
