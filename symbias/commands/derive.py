"""``symbias derive``: exact small-signal formulas of a netlist or library topology.

Wires: arguments -> :func:`symbias.pipeline.derive` -> a renderer of
:mod:`symbias.render` (text, LaTeX, Markdown, JSON or Python).

Examples
--------
>>> from symbias.cli import main
>>> main(["derive", "examples/simple_mirror.cir", "--rout", "Vout", "--json"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse
import sys

from ..errors import UsageError
from .common import add_bias_source_arguments, add_design_arguments, add_target_argument

__all__ = ["register", "run", "request_of", "output_format", "options_of", "band_of", "add_model_arguments"]

#: Flag -> quantity kind of :mod:`symbias.pipeline.quantities`.
_FLAGS = {
    "rout": "output_resistance",
    "gain": "current_gain",
    "vgain": "voltage_gain",
    "gm": "transconductance",
    "zt": "transimpedance",
}
_LEVELS = ("simple", "default", "full")


def register(subparsers) -> None:
    """Add the ``derive`` sub-command."""
    p = subparsers.add_parser(
        "derive",
        help="exact small-signal output resistance, gains and transfers",
        description="Derive exact closed-form small-signal quantities of a bias circuit.",
        epilog="Ports: an element name (removed; impedance between its terminals), a node, or a,b. "
        "Pairs OUT/IN: OUT a voltage source (current outputs) or node (voltage outputs), IN a source. "
        "Results are design aids; sign-off needs full simulation and measurement.",
    )
    add_target_argument(p)
    p.add_argument("--rout", action="append", metavar="PORT", default=[], help="output resistance at PORT")
    p.add_argument("--gain", action="append", metavar="OUT/IN", default=[],
                   help="current gain: current out of V source OUT per unit current of I source IN")
    p.add_argument("--vgain", action="append", metavar="OUT/IN", default=[],
                   help="voltage gain: v(OUT) per unit voltage of V source IN")
    p.add_argument("--gm", action="append", metavar="OUT/IN", default=[],
                   help="transconductance: current out of V source OUT per volt of V source IN")
    p.add_argument("--zt", action="append", metavar="OUT/IN", default=[],
                   help="transimpedance: v(OUT) per unit current of I source IN")
    _model_arguments(p.add_argument_group("model"))
    _approximation_arguments(p.add_argument_group("approximation and sensitivities"))
    bias = p.add_argument_group("numbers at the DC operating point")
    bias.add_argument("--at-bias", action="store_true",
                      help="solve the DC operating point and evaluate each result with its gm, rpi, ro, gmb")
    add_design_arguments(bias)
    add_bias_source_arguments(bias)
    out = p.add_argument_group("output")
    out.add_argument("--format", choices=("text", "latex", "markdown", "json", "python"), default=None,
                     help="output form (default text)")
    out.add_argument("--json", action="store_true", help="same as --format json")
    out.add_argument("--latex", action="store_true", help="same as --format latex")
    p.set_defaults(func=run)


def _model_arguments(model) -> None:
    model.add_argument("--match", nargs="?", const=True, default=False, metavar="MODELS",
                       help="matched devices share symbols (all models, or a comma list of models/.match groups)")
    model.add_argument("--beta", action="store_true", help="write rpi as beta/gm")
    model.add_argument("--level", choices=_LEVELS, default="default",
                       help="device model level: simple (no ro, no gmb), default, full (+rmu, rb, re, capacitances)")
    model.add_argument("--parasitics", metavar="LIST", default=None,
                       help="BJT parasitic resistances to include, a comma list of rb, re, rmu")
    model.add_argument("--no-ro", action="store_true", help="omit ro")
    model.add_argument("--no-gmb", action="store_true", help="omit the MOS body transconductance")
    model.add_argument("--capacitances", action="store_true", help="include device capacitances (s appears)")
    model.add_argument("--symbolic", action="store_true", help="turn numeric R, C, L values into symbols")
    model.add_argument("--backend", choices=("flint", "sympy"), default=None, help="polynomial arithmetic")


#: The model flags (--match, --beta, --level, ...), for the other commands that derive.
add_model_arguments = _model_arguments


def _approximation_arguments(approx) -> None:
    approx.add_argument("--approx", action="store_true",
                        help="dominant-term form with its worst relative error over the assumed ranges")
    approx.add_argument("--assume", action="append", default=[], metavar="STATEMENT",
                        help='magnitude assumption, e.g. "RE >> 1/gm", "beta in [50, 200]", "A ~ B" (repeatable)')
    approx.add_argument("--no-default-assumptions", action="store_true",
                        help="drop the hand-analysis defaults (gm*ro >> 1, beta >> 1, ro >> rpi, 0.05 < gmb/gm < 0.4)")
    approx.add_argument("--tolerance", type=float, default=0.10, metavar="REL",
                        help="largest accepted worst relative error of --approx (default 0.10)")
    approx.add_argument("--samples", type=int, default=2000, metavar="N", help="random points for the error search")
    approx.add_argument("--seed", type=int, default=0, help="seed of the random points")
    approx.add_argument("--band", metavar="F1,F2", default="1,1e9",
                        help="for results in s (--capacitances): frequencies in Hz over which the approximation's "
                             "error is measured (default 1,1e9)")
    approx.add_argument("--sensitivity", action="store_true",
                        help="normalised sensitivities (x/F) dF/dx, at the operating point with --at-bias, "
                             "else at the centre of the assumed ranges")
    approx.add_argument("--mirror-error", action="store_true",
                        help="for current gains: small-signal error 1 - gain/ideal, to leading order and split by "
                             "cause; with --at-bias also the DC ratio Iout/Iin and its error by cause")


def options_of(args: argparse.Namespace):
    """SmallSignalOptions from the model flags."""
    from ..devices.options import SmallSignalOptions

    match = args.match
    if isinstance(match, str):
        match = tuple(m.strip() for m in match.split(",") if m.strip())
    overrides = dict(match=match, beta=args.beta, symbolic_passives=args.symbolic)
    if args.parasitics is not None:
        overrides["parasitics"] = tuple(p.strip() for p in args.parasitics.split(",") if p.strip())
    if args.no_ro:
        overrides["ro"] = False
    if args.no_gmb:
        overrides["gmb"] = False
    if args.capacitances:
        overrides["capacitances"] = True
    return SmallSignalOptions.level(args.level, **overrides)


def request_of(args: argparse.Namespace, target):
    """The pipeline's DeriveRequest from the arguments."""
    from ..pipeline import DeriveRequest, parse_quantity
    from .common import inputs_of

    quantities = [parse_quantity(kind, text, f"--{flag}") for flag, kind in _FLAGS.items()
                  for text in getattr(args, flag)]
    if not args.at_bias:
        given = [flag for flag, value in (("--process", args.process), ("--temp", args.temp), ("--set", args.set))
                 if value is not None and value != []]
        if given:
            raise UsageError(f"{given[0]} is used with --at-bias: add it or leave {given[0]} out", path=given[0])
        if args.models != "built-in" or args.corner or args.keep_deck:
            raise UsageError("--models, --corner and --keep-deck choose the bias values: add --at-bias",
                             path="--models")
    return DeriveRequest(
        quantities=tuple(quantities),
        options=options_of(args),
        backend=args.backend,
        approximate=args.approx,
        assumptions=tuple(args.assume),
        default_assumptions=not args.no_default_assumptions,
        tolerance=args.tolerance,
        samples=args.samples,
        seed=args.seed,
        sensitivities=args.sensitivity,
        transfer_error=args.mirror_error,
        at_bias=inputs_of(args, target) if args.at_bias else None,
        band=band_of(args.band, "--band"),
    )


def band_of(text: str, flag: str) -> tuple[float, float]:
    """``"F1,F2"`` (SPICE suffixes allowed) -> (F1, F2) in Hz.

    Raises
    ------
    UsageError
        Unless both are positive numbers with F1 < F2.

    Examples
    --------
    >>> band_of("10,1meg", "--band")
    (10.0, 1000000.0)
    """
    from .common import parse_assignments

    first, _, second = text.partition(",")
    numbers = parse_assignments([f"f1={first}", f"f2={second}"], flag) if second else {}
    low, high = numbers.get("f1", 0.0), numbers.get("f2", 0.0)
    if not 0 < low < high:
        raise UsageError(f"expects F1,F2 with 0 < F1 < F2 (Hz), got {text!r}", path=flag)
    return low, high


def output_format(args: argparse.Namespace) -> str:
    """The output form from ``--format`` and the ``--json``/``--latex`` shorthands."""
    chosen = {f for f, flag in (("json", args.json), ("latex", args.latex)) if flag}
    if args.format:
        chosen.add(args.format)
    if len(chosen) > 1:
        raise UsageError(f"choose one output form, got {', '.join(sorted(chosen))}", path="--format")
    return chosen.pop() if chosen else "text"


def run(args: argparse.Namespace) -> int:
    """Derive, then print as text, LaTeX, Markdown, JSON or Python (everything computed first)."""
    from ..pipeline import derive
    from ..pipeline.derivation import check_printable
    from .common import print_json, print_renderables, target_of

    form = output_format(args)
    target = target_of(args)
    derivation = derive(target, request_of(args, target))
    check_printable(derivation, form)
    if form == "json":
        from ..render.json import derivation_record, write_json

        # streamed from the terms: a result of a million terms is never held as one string
        write_json(sys.stdout, derivation_record(derivation, streamed=True))
        sys.stdout.write("\n")
    elif form == "latex":
        from ..render.latex import derivation_latex

        print(derivation_latex(derivation))
    elif form == "markdown":
        from ..render.markdown import derivation_markdown

        print(derivation_markdown(derivation))
    elif form == "python":
        from ..render.python import derivation_python

        sys.stdout.write(derivation_python(derivation))
    else:
        from ..render.text import derivation_renderables

        print_renderables(derivation_renderables(derivation))
    return 0
