"""The DC operating point of a target and the small-signal symbol values it gives.

Pipeline step for numbers: a :class:`~symbias.pipeline.targets.Target` and
:class:`~symbias.pipeline.targets.DesignInputs` -> an
:class:`~symbias.dc.operating_point.OperatingPoint` (or every DC state), and
-> :class:`BiasPoint`: the operating point with the value of every formula
symbol there (device ``gm``, ``rpi``, ``ro``, ``gmb`` under the naming of the
chosen small-signal options, plus the numbers given for netlist symbols).

Examples
--------
>>> from symbias.pipeline.targets import load_target, design_inputs
>>> target = load_target("examples/simple_mirror.cir")
>>> point = bias_point(target, design_inputs(target))
>>> sorted(point.values)[:3], round(point.values["gm_Q1"] * 1e3, 2)
(['beta_Q1', 'beta_Q2', 'gm_Q1'], 0.76)
"""

from __future__ import annotations

from dataclasses import dataclass
from types import MappingProxyType
from typing import Any, Mapping

from ..devices.options import SmallSignalOptions
from .targets import DesignInputs, Target

__all__ = ["BiasPoint", "bias_point", "operating_point_of", "states_of"]


@dataclass(frozen=True, eq=False)
class BiasPoint:
    """An operating point and the formula symbol values it gives.

    Parameters
    ----------
    point : OperatingPoint
    values : mapping of str to float
        Symbol name -> value (device small-signal values and netlist numbers).
    inputs : DesignInputs
        What it was solved with.
    notes : tuple of str
        Where matched devices differ at the operating point (their shared symbols are then a poor fit).
    """

    point: Any
    values: Mapping[str, float]
    inputs: DesignInputs
    notes: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "values", MappingProxyType(dict(self.values)))

    def __reduce__(self):
        return (BiasPoint, (self.point, dict(self.values), self.inputs, self.notes))

    @property
    def temperature(self) -> float:
        """degC."""
        return self.inputs.temperature


def operating_point_of(target: Target, inputs: DesignInputs):
    """The DC operating point of a target: from the source ``inputs.models`` names, at its corner, on
    its conducting state, with the other states attached.

    The one place every command takes its operating point from: a
    self-biased cell is reported on the state that carries current (not on
    a zero-current state a plain solve may land on), and ``point.states``
    (:class:`~symbias.dc.states.StateSurvey`) lists every state found and
    whether a start-up circuit is needed.  A ``guess`` in the inputs picks
    the state instead.

    Raises
    ------
    CircuitError, ConvergenceError
        From the DC solve.
    SimulatorError
        From ngspice, with ``models="ngspice"``.

    Examples
    --------
    >>> from symbias.pipeline.targets import load_target, design_inputs
    >>> target = load_target("brokaw-bandgap")
    >>> point = operating_point_of(target, design_inputs(target))
    >>> round(point.voltage("vref"), 3), len(point.states.states), point.states.needs_startup
    (1.183, 3, True)
    """
    from ..dc.states import conducting_point
    from .simulation import corner_target, simulated_point

    if inputs.models == "ngspice":
        return simulated_point(target, inputs)
    target = corner_target(target, inputs)
    return conducting_point(target.circuit, inputs.process, inputs.temperature, inputs.values,
                            guess=dict(inputs.guess) or None)


def states_of(target: Target, inputs: DesignInputs):
    """Every DC state found from several starts (:class:`~symbias.dc.solutions.Solutions`), built-in models only.

    Raises
    ------
    UsageError
        With ``models="ngspice"`` (the simulator gives one operating point).
    """
    from ..dc.solutions import find_solutions
    from ..errors import UsageError
    from .simulation import corner_target

    if inputs.models != "built-in":
        raise UsageError("--all searches DC states with the built-in models; ngspice gives one operating point",
                         path="--models")
    target = corner_target(target, inputs)
    return find_solutions(target.circuit, inputs.process, inputs.temperature, inputs.values)


def bias_point(target: Target, inputs: DesignInputs, options: SmallSignalOptions | None = None) -> BiasPoint:
    """The operating point and the symbol values of a small-signal expansion there.

    Matched symbols take the values of the first device of their group,
    normalised by its multiplier (see :func:`symbias.linear.network.bias_values`).

    Examples
    --------
    >>> from symbias.devices.options import SmallSignalOptions
    >>> from symbias.pipeline.targets import load_target, design_inputs
    >>> target = load_target("bjt-simple-mirror")
    >>> point = bias_point(target, design_inputs(target), SmallSignalOptions(match=True, beta=True))
    >>> sorted(point.values)
    ['IREF', 'beta', 'gm', 'ro', 'rpi']
    """
    import warnings

    from ..errors import BiasWarning
    from ..linear.network import bias_values, matched_spread

    options = options or SmallSignalOptions()
    point = operating_point_of(target, inputs)
    per_device = point.small_signal_values()
    numbers = dict(inputs.values)
    numbers.update(bias_values(target.circuit, per_device, options, inputs.values))
    notes = tuple(matched_spread(target.circuit, per_device, options, numbers=inputs.values))
    for note in notes:
        warnings.warn(f"{target.where}: {note}", BiasWarning, stacklevel=2)
    return BiasPoint(point, numbers, inputs, notes)
