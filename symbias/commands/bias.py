"""``symbias bias``: the DC operating point of a netlist or library topology.

Wires: arguments -> :func:`symbias.pipeline.operating_point_of` (or
:func:`~symbias.pipeline.states_of` with ``--all``,
:func:`~symbias.pipeline.corner_points` with several ``--corner``,
:func:`~symbias.pipeline.model_check` with ``--compare-models``) ->
:mod:`symbias.render.dc`, :mod:`symbias.render.simulator` or
:mod:`symbias.render.json`.  ``--models ngspice`` takes the operating point
from ngspice run on the netlist's own model cards.  The JSON object holds ``node_voltages``
{node: V}, ``branch_currents`` {voltage source: A, SPICE sign: positive into
the + terminal}, ``element_currents`` and ``devices`` {name: {type, region,
currents, voltages, small_signal, limits}}; infinite values (``ro`` without an
Early voltage) are ``null``.  With ``--all`` every DC solution found from
several starts is listed, and a zero-current one is flagged.

Examples
--------
>>> from symbias.cli import main
>>> main(["bias", "tests/decks/bjt_simple_mirror.cir", "--json"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse

from ..render.console import CAUTION
from .common import add_bias_source_arguments, add_dc_arguments

__all__ = ["register", "run"]


def register(subparsers) -> None:
    """Add the ``bias`` sub-command."""
    p = subparsers.add_parser(
        "bias",
        help="DC operating point: node voltages, currents, device regions, gm/rpi/ro",
        description="Solve the DC operating point of a bias circuit.",
        epilog=CAUTION,
    )
    add_dc_arguments(p)
    p.add_argument("--all", action="store_true",
                   help="search for every DC solution (several starts) and flag a zero-current state")
    source = p.add_argument_group("source of the bias values")
    add_bias_source_arguments(source)
    source.add_argument("--compare-models", action="store_true",
                        help="the built-in models' operating point beside ngspice's, per device and value")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Solve and print the operating point (or every solution with ``--all``)."""
    from ..pipeline import operating_point_of, states_of
    from .common import inputs_of, print_json, print_renderables, target_of

    target = target_of(args)
    inputs = inputs_of(args, target)
    if args.all:
        found = states_of(target, inputs)
        if args.json:
            from ..render.json import states_record

            print_json(states_record(target, found))
        else:
            from ..render.dc import states_renderables

            print_renderables(states_renderables(target, found, inputs.temperature))
        return 0
    if args.compare_models or len(inputs.corners) > 1:
        return _several(args, target, inputs)
    op = operating_point_of(target, inputs)
    if args.json:
        from ..render.json import operating_point_record

        print_json({**operating_point_record(target, op), "models": inputs.models,
                    "corner": inputs.corners[0] if inputs.corners else None})
    else:
        from ..render.dc import operating_point_renderables

        print_renderables(operating_point_renderables(target, op))
    return 0


def _several(args: argparse.Namespace, target, inputs) -> int:
    """The model check, or the operating points over several corners."""
    from ..pipeline import corner_points, model_check
    from ..render import simulator as shown
    from .common import print_json, print_renderables

    if args.compare_models:
        checks = model_check(target, inputs)
        if args.json:
            print_json(shown.model_check_record(target, checks))
        else:
            print_renderables(shown.model_check_renderables(target, checks))
        return 0
    points = corner_points(target, inputs)
    if args.json:
        print_json(shown.corner_record(target, points))
    else:
        print_renderables(shown.corner_renderables(target, points))
    return 0
