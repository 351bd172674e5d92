"""``symbias noise``: output noise at the bias point, ranked by source and device, with closed forms.

Wires: arguments -> :func:`symbias.pipeline.noise.noise_analysis` ->
:mod:`symbias.render.noise` (tables, JSON, Markdown, plot).

Examples
--------
>>> from symbias.cli import main
>>> main(["noise", "examples/simple_mirror.cir", "--from", "10", "--to", "1meg"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse

from ..render.console import CAUTION
from .common import add_design_arguments, add_target_argument
from .spectral import add_approximation_arguments, add_band_arguments, add_output_arguments, check_plot, emit, hertz

__all__ = ["register", "run"]


def register(subparsers) -> None:
    """Add the ``noise`` sub-command."""
    from .derive import add_model_arguments

    p = subparsers.add_parser(
        "noise",
        help="output noise at the bias point: each source's and device's share, total, integral, 1/f corner",
        description="Output noise of a current source, mirror or reference at its DC operating point: resistor "
                    "thermal, BJT shot and base-resistance thermal, MOS channel thermal, flicker and diode shot "
                    "noise, each through its exact transfer to the output.",
        epilog="Output: a voltage source (its short-circuit noise current) or a node (noise voltage); by default the "
               "output role, or a source named Vout. Flicker noise needs KF (and AF) in the model; the MOS channel "
               f"factor is NGAMMA (default 2/3). {CAUTION}",
    )
    add_target_argument(p)
    p.add_argument("--output", metavar="SOURCE|NODE", help="where the noise is read (default: the output)")
    add_band_arguments(p, "1", "100meg")
    p.add_argument("--at", type=hertz, default=hertz("1k"), metavar="F",
                   help="frequency of the ranked tables (default 1k)")
    p.add_argument("--no-closed-form", action="store_true", help="numbers only: skip the exact transfers")
    add_model_arguments(p.add_argument_group("model"))
    approx = p.add_argument_group("approximation")
    approx.add_argument("--approx", action="store_true",
                        help="leading-order form of every source's low-frequency transfer")
    approx.add_argument("--no-default-assumptions", action="store_true",
                        help="drop the hand-analysis defaults (gm*ro >> 1, beta >> 1, ...)")
    add_approximation_arguments(approx, 2000)
    add_design_arguments(p.add_argument_group("numbers at the DC operating point"))
    add_output_arguments(p.add_argument_group("output"))
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Compute the output noise, then print (and plot) it."""
    from ..pipeline.noise import NoiseRequest, noise_analysis
    from ..render.noise import noise_markdown, noise_plot, noise_record, noise_renderables
    from .common import inputs_of, target_of
    from .spectral import spectral_options

    check_plot(args)
    target = target_of(args)
    request = NoiseRequest(args.output, args.start, args.stop, args.points, args.at, spectral_options(args),
                           not args.no_closed_form, args.approx, tuple(args.assume), not args.no_default_assumptions,
                           args.tolerance, args.samples, args.seed, args.backend)
    result = noise_analysis(target, inputs_of(args, target), request)
    emit(args, result, {"text": noise_renderables, "json": noise_record, "markdown": noise_markdown}, noise_plot)
    return 0
