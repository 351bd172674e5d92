"""Operating points over process corners, and the model check (built-in models beside ngspice's).

Pipeline step for ``symbias bias --corner A --corner B`` and ``--compare-models``:

* :func:`corner_points`: one operating point per corner named in
  :class:`~symbias.pipeline.targets.DesignInputs` (the netlist as written when
  none is), from the source of values the inputs name;
* :func:`model_check`: at each corner, the built-in models' operating point
  and ngspice's, compared value by value
  (:func:`symbias.simulator.compare.compare_operating_points`).

Examples
--------
>>> from symbias.pipeline.targets import load_target, design_inputs
>>> target = load_target("examples/simple_mirror.cir")
>>> points = corner_points(target, design_inputs(target))
>>> [corner for corner, _ in points.points], points.models
([None], 'built-in')
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

from .bias import operating_point_of
from .targets import DesignInputs, Target

__all__ = ["CornerPoints", "corner_points", "model_check"]


@dataclass(frozen=True, eq=False)
class CornerPoints:
    """Operating points of one target, one per corner.

    Attributes
    ----------
    points : tuple of (str or None, OperatingPoint)
        Corner (None: the ``.lib`` sections as written) and its operating point.
    models : str
        Source of the values (``built-in`` or ``ngspice``).
    temperature : float
    """

    points: tuple[tuple[str | None, Any], ...]
    models: str
    temperature: float


def _per_corner(inputs: DesignInputs) -> list[tuple[str | None, DesignInputs]]:
    """The inputs of each corner alone (one entry, corner None, when none is named)."""
    return [(c, replace(inputs, corners=(c,) if c else ())) for c in inputs.corners or (None,)]


def corner_points(target: Target, inputs: DesignInputs) -> CornerPoints:
    """The operating point at each corner of ``inputs`` (from its source of values).

    Raises
    ------
    UsageError
        A corner no ``.lib`` file of the netlist has.
    CircuitError, ConvergenceError, SimulatorError
        From the solve or the simulator.
    """
    points = tuple((corner, operating_point_of(target, each)) for corner, each in _per_corner(inputs))
    return CornerPoints(points, inputs.models, inputs.temperature)


def model_check(target: Target, inputs: DesignInputs) -> tuple[Any, ...]:
    """At each corner, the built-in models' operating point compared with ngspice's.

    Returns
    -------
    tuple of ModelComparison

    Raises
    ------
    CircuitError, ConvergenceError, SimulatorError
        From either solve.
    """
    from ..simulator.compare import compare_operating_points

    out = []
    for corner, each in _per_corner(inputs):
        built_in = operating_point_of(target, replace(each, models="built-in"))
        simulated = operating_point_of(target, replace(each, models="ngspice"))
        out.append(compare_operating_points(built_in, simulated, corner))
    return tuple(out)
