"""``symbias frequency``: a quantity over frequency at the bias point (Zout(f), supply rejection, transfers).

Wires: arguments -> :func:`symbias.pipeline.frequency.frequency_analysis` ->
:mod:`symbias.render.frequency` (table, JSON, Markdown, plot).

Examples
--------
>>> from symbias.cli import main
>>> main(["frequency", "examples/simple_mirror.cir", "--to", "1g", "--json"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse

from ..render.console import CAUTION
from .common import add_design_arguments, add_target_argument
from .spectral import add_approximation_arguments, add_band_arguments, add_output_arguments, check_plot, emit

__all__ = ["register", "run"]

_FLAGS = {"rout": "output_resistance", "gain": "current_gain", "vgain": "voltage_gain", "gm": "transconductance",
          "zt": "transimpedance"}


def register(subparsers) -> None:
    """Add the ``frequency`` sub-command."""
    from .derive import add_model_arguments

    p = subparsers.add_parser(
        "frequency",
        help="Zout(f), supply rejection or a transfer over frequency at the bias point; poles, zeros, -3 dB",
        description="Evaluate a small-signal quantity with device capacitances over frequency at the DC operating "
                    "point: magnitude and phase, poles and zeros, and the frequency where it falls 3 dB.",
        epilog="Default quantity: the output impedance at the output, or for a reference (an output node) the supply "
               "rejection v(ref)/v(supply). Capacitances come from the model cards (CJE CJC CJS TF; TOX CGSO CGDO "
               f"CBD CBS). {CAUTION}",
    )
    add_target_argument(p)
    quantity = p.add_mutually_exclusive_group()
    quantity.add_argument("--rout", metavar="PORT", help="output impedance at PORT")
    quantity.add_argument("--gain", metavar="OUT/IN", help="current gain: current of V source OUT per I source IN")
    quantity.add_argument("--vgain", metavar="OUT/IN", help="voltage gain, e.g. vref/Vcc for supply rejection")
    quantity.add_argument("--gm", metavar="OUT/IN", help="transconductance: current of V source OUT per V source IN")
    quantity.add_argument("--zt", metavar="OUT/IN", help="transimpedance: v(OUT) per I source IN")
    add_band_arguments(p, "1", "1g")
    add_model_arguments(p.add_argument_group("model"))
    approx = p.add_argument_group("approximation")
    approx.add_argument("--approx", action="store_true",
                        help="cut each coefficient of s to its dominant terms around the bias point; dominant pole "
                             "and zero in closed form")
    approx.add_argument("--spread", type=float, default=0.3, metavar="REL",
                        help="each symbol's range around its bias value for --approx (default 0.3)")
    add_approximation_arguments(approx, 96)
    add_design_arguments(p.add_argument_group("numbers at the DC operating point"))
    add_output_arguments(p.add_argument_group("output"))
    p.set_defaults(func=run)


def _quantity(args: argparse.Namespace):
    from ..pipeline import parse_quantity

    for flag, kind in _FLAGS.items():
        text = getattr(args, flag)
        if text:
            return parse_quantity(kind, text, f"--{flag}")
    return None


def run(args: argparse.Namespace) -> int:
    """Evaluate over frequency, then print (and plot) it."""
    from ..pipeline.frequency import FrequencyRequest, frequency_analysis
    from ..render.frequency import frequency_markdown, frequency_plot, frequency_record, frequency_renderables
    from .common import inputs_of, target_of
    from .spectral import spectral_options

    check_plot(args)
    target = target_of(args)
    request = FrequencyRequest(_quantity(args), args.start, args.stop, args.points, spectral_options(args),
                               args.backend, args.approx, args.spread, tuple(args.assume), args.tolerance,
                               args.samples, args.seed)
    result = frequency_analysis(target, inputs_of(args, target), request)
    emit(args, result, {"text": frequency_renderables, "json": frequency_record, "markdown": frequency_markdown},
         frequency_plot)
    return 0
