"""``symbias derive``: exact small-signal formulas of a netlist or library topology.

Wires: read (netlist file or library id) -> analyses -> renderer.

Examples
--------
>>> from symbias.cli import main
>>> main(["derive", "examples/simple_mirror.cir", "--rout", "Vout", "--json"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import CircuitError, NetlistError

__all__ = ["register", "run", "load_target", "options_from_args", "requested_quantities", "output_format",
           "Result"]

_PAIR_QUANTITIES = {
    "gain": "current_gain",
    "vgain": "voltage_gain",
    "gm": "transconductance",
    "zt": "transimpedance",
}


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
    p.add_argument("netlist", help="netlist file, or a topology identifier from the library")
    p.add_argument("--rout", action="append", metavar="PORT", default=[], help="output resistance at PORT")
    p.add_argument("--gain", action="append", metavar="OUT/IN", default=[],
                   help="current gain: current out of V source OUT per unit current of I source IN")
    p.add_argument("--vgain", action="append", metavar="OUT/IN", default=[],
                   help="voltage gain: v(OUT) per unit voltage of V source IN")
    p.add_argument("--gm", action="append", metavar="OUT/IN", default=[],
                   help="transconductance: current out of V source OUT per volt of V source IN")
    p.add_argument("--zt", action="append", metavar="OUT/IN", default=[],
                   help="transimpedance: v(OUT) per unit current of I source IN")
    model = p.add_argument_group("model")
    model.add_argument("--match", nargs="?", const=True, default=False, metavar="MODELS",
                       help="matched devices share symbols (all models, or a comma list of models/.match groups)")
    model.add_argument("--beta", action="store_true", help="write rpi as beta/gm")
    model.add_argument("--level", choices=("simple", "default", "full"), default="default",
                       help="device model level: simple (no ro, no gmb), default, full (+rmu, rb, re, capacitances)")
    model.add_argument("--no-ro", action="store_true", help="omit ro")
    model.add_argument("--no-gmb", action="store_true", help="omit the MOS body transconductance")
    model.add_argument("--capacitances", action="store_true", help="include device capacitances (s appears)")
    model.add_argument("--symbolic", action="store_true", help="turn numeric R, C, L values into symbols")
    model.add_argument("--backend", choices=("flint", "sympy"), default=None, help="polynomial arithmetic")
    approx = p.add_argument_group("approximation and sensitivities")
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
    approx.add_argument("--sensitivity", action="store_true",
                        help="normalised sensitivities (x/F) dF/dx, ranked at the centre of the assumed ranges")
    approx.add_argument("--mirror-error", action="store_true",
                        help="for current gains: error 1 - gain/ideal, to leading order and split by cause")
    from .dc_common import add_design_arguments

    bias = p.add_argument_group("numbers at the DC operating point")
    bias.add_argument("--at-bias", action="store_true",
                      help="solve the DC operating point and evaluate each result with its gm, rpi, ro, gmb")
    add_design_arguments(bias)
    out = p.add_argument_group("output")
    out.add_argument("--format", choices=("text", "latex", "markdown", "json", "python"), default=None,
                     help="output form (default text)")
    out.add_argument("--json", action="store_true", help="same as --format json")
    out.add_argument("--latex", action="store_true", help="same as --format latex")
    out.add_argument("--library", action="append", default=[], metavar="DIR", help="extra topology folder")
    p.set_defaults(func=run)


def load_target(name: str, library_dirs: list[str] | None = None):
    """A (circuit, topology-or-None) pair from a netlist path or a library identifier."""
    from ..netlist import read_netlist

    path = Path(name)
    if path.exists() or any(sep in name for sep in ("/", "\\")) or path.suffix:
        return read_netlist(path), None
    try:
        from .. import library
    except ImportError:  # the library module arrives with the topology library
        return read_netlist(path), None
    return library.resolve(name, extra_dirs=library_dirs or [])


def options_from_args(args: argparse.Namespace):
    """SmallSignalOptions from the model flags."""
    from ..devices.options import SmallSignalOptions

    match = args.match
    if isinstance(match, str):
        match = tuple(m.strip() for m in match.split(",") if m.strip())
    overrides = dict(match=match, beta=args.beta, symbolic_passives=args.symbolic)
    if args.no_ro:
        overrides["ro"] = False
    if args.no_gmb:
        overrides["gmb"] = False
    if args.capacitances:
        overrides["capacitances"] = True
    return SmallSignalOptions.level(args.level, **overrides)


def requested_quantities(args: argparse.Namespace, circuit, topology) -> list[tuple[str, tuple[str, ...]]]:
    """The (quantity, arguments) pairs asked for, or the defaults of the topology/netlist."""
    wanted: list[tuple[str, tuple[str, ...]]] = [("output_resistance", (port,)) for port in args.rout]
    for flag, quantity in _PAIR_QUANTITIES.items():
        for pair in getattr(args, flag):
            if pair.count("/") != 1:
                raise NetlistError(f"--{flag} expects OUT/IN, got {pair!r}", path=circuit.path)
            out_name, in_name = (part.strip() for part in pair.split("/"))
            wanted.append((quantity, (out_name, in_name)))
    if wanted:
        return wanted
    return default_quantities(circuit, topology)


def default_quantities(circuit, topology) -> list[tuple[str, tuple[str, ...]]]:
    """Rout at the output element and the current gain from the input, from roles or names."""
    roles = dict(getattr(topology, "roles", {}) or {})
    output = roles.get("output")
    source = roles.get("input")
    if output is None:
        outputs = [e.name for e in circuit.elements_of("V") if e.name.lower() in ("vout", "vo")]
        output = outputs[0] if outputs else None
    if source is None:
        currents = circuit.elements_of("I")
        source = currents[0].name if len(currents) == 1 else None
    if output is None:
        raise CircuitError("name a quantity: --rout PORT or --gain OUT/IN (no output element 'Vout' found)",
                           path=circuit.path)
    wanted = [("output_resistance", (output,))]
    if source is not None and circuit.has_element(output) and circuit.element(output).kind == "V":
        wanted.append(("current_gain", (output, source)))
    return wanted


def output_format(args: argparse.Namespace) -> str:
    """The output form from ``--format`` and the ``--json``/``--latex`` shorthands."""
    chosen = {f for f, flag in (("json", args.json), ("latex", args.latex)) if flag}
    if args.format:
        chosen.add(args.format)
    if len(chosen) > 1:
        raise NetlistError(f"choose one output form, got {', '.join(sorted(chosen))}", path="--format")
    return chosen.pop() if chosen else "text"


@dataclass(frozen=True, eq=False)
class Result:
    """A derived formula with what was asked on top of it (approximation, sensitivities, error split)."""

    formula: Any
    approximation: Any = None
    sensitivities: Any = None
    point: Any = None
    error: Any = None


def _extras(args: argparse.Namespace, formula) -> Result:
    from ..approx import approximate, magnitude_model
    from ..errors import AssumptionError

    if not 0 < args.tolerance < 1:
        raise AssumptionError(f"tolerance must be between 0 and 1, got {args.tolerance:g}", path="--tolerance")
    if args.samples < 1:
        raise AssumptionError(f"samples must be at least 1, got {args.samples}", path="--samples")
    options = dict(defaults=not args.no_default_assumptions, tolerance=args.tolerance, samples=args.samples,
                   seed=args.seed)
    try:
        approximation = approximate(formula, args.assume, **options) if args.approx else None
        sensitivities = point = error = None
        if args.sensitivity:
            from ..sensitivity import sensitivities as table

            names = [s.name for s in formula.symbols]
            model = approximation.model if approximation is not None and approximation.model else None
            if model is None and names:
                model = magnitude_model(names, args.assume, defaults=options["defaults"], meanings=formula.meanings)
            point = model.centre() if model is not None else {}
            sensitivities = table(formula, point)
        if args.mirror_error and formula.quantity == "current_gain":
            from ..mirror_error import transfer_error

            error = transfer_error(formula, None, args.assume, **options)
    except AssumptionError as err:
        raise err.located(path="--assume") from None
    return Result(formula, approximation, sensitivities, point, error)


def _error_record(error) -> dict:
    return {
        "ideal": str(error.ideal.expr),
        "exact": error.exact.exact_string(),
        "leading": error.leading.text,
        "leading_error": float(error.leading.error),
        "causes": {c.name: {"leading": c.leading.text, "leading_error": float(c.leading.error)} for c in error.causes},
    }


def run(args: argparse.Namespace) -> int:
    """Derive, then print as text, LaTeX, Markdown, JSON or Python."""
    from ..analyses import QUANTITIES

    form = output_format(args)
    circuit, topology = load_target(args.netlist, args.library)
    options = options_from_args(args)
    results = []
    for quantity, arguments in requested_quantities(args, circuit, topology):
        function = QUANTITIES[quantity][0]
        formula = function(circuit, *arguments, options=options, backend=args.backend)
        results.append(_extras(args, formula))
    at_bias = bias_point(args, circuit, topology, options) if args.at_bias else None
    # everything is computed before anything is printed: a failure writes nothing
    if form == "json":
        from ..render.json import formula_record, write_json

        records = []
        for r in results:
            # exact fields are written from the terms while printing: never held whole
            record = formula_record(r.formula, r.approximation, r.sensitivities, r.point, streamed=True)
            if r.error is not None:
                record["transfer_error"] = _error_record(r.error)
            if at_bias is not None:
                record["at_bias"] = _value_at(r.formula, at_bias)
            records.append(record)
        header = {"circuit": circuit.title, "source": circuit.path or args.netlist}
        write_json(sys.stdout, {**header, **records[0]} if len(records) == 1 else {**header, "results": records})
        sys.stdout.write("\n")
        return 0
    if form == "latex":
        from ..render.latex import approximation_latex, formula_latex

        lines = []  # rendered in full first: a result too big to print leaves no partial output
        for r in results:
            lines.append(formula_latex(r.formula))
            if r.approximation is not None:
                lines.append(approximation_latex(r.approximation))
            if r.error is not None:
                lines.append(approximation_latex(r.error.leading))
        print("\n".join(lines))
        return 0
    if form == "markdown":
        from ..render.markdown import formula_markdown

        sections = [f"## {circuit.title}\n"]
        for r in results:
            sections.append(formula_markdown(r.formula, r.approximation, r.sensitivities))
            if r.error is not None:
                sections.append(formula_markdown(r.error.exact, r.error.leading, title=r.error.exact.label))
        print("\n".join(sections))
        return 0
    if form == "python":
        from ..render.python import python_source

        print("\n\n".join(python_source(r.formula, r.approximation) for r in results), end="")
        return 0
    from ..render.text import terminal_console

    from ..render.text import approximation_rows, formula_panel, sensitivity_table

    console = terminal_console()
    console.print(f"[bold]{circuit.title}[/bold]  ({circuit.path or args.netlist})")
    for r in results:
        rows = approximation_rows(r.approximation) if r.approximation is not None else []
        if at_bias is not None:
            rows.insert(0, ("at the operating point", _value_text(r.formula, at_bias, args.temp)))
        if r.error is not None:
            rows.append(("error 1 - gain/ideal", f"~ {r.error.leading.text}  (worst error "
                                                 f"{100 * r.error.leading.error:.3g} %; ideal {r.error.ideal.expr})"))
            for cause in r.error.causes:
                rows.append((f"  from {cause.name}", f"~ {cause.leading.text}"))
        console.print(formula_panel(r.formula, rows))
        if r.sensitivities:
            point = ", ".join(f"{k}={v:.3g}" for k, v in (r.point or {}).items())
            console.print(sensitivity_table(r.sensitivities, title=f"sensitivities S = (x/F) dF/dx at {point}"))
    console.print("[dim]Design aid: sign-off needs full simulation and measurement.[/dim]")
    return 0


def bias_point(args: argparse.Namespace, circuit, topology, options) -> dict[str, float]:
    """Symbol values at the DC operating point: device gm, rpi, ro, gmb plus netlist numbers.

    Matched symbols take the values of the first device of their group,
    normalised by its multiplier (see :func:`symbias.linear.network.bias_values`).
    """
    from ..dc.operating_point import operating_point
    from ..linear.network import bias_values
    from .dc_common import design_inputs

    values, process = design_inputs(args, topology)
    point = operating_point(circuit, process, args.temp, values)
    numbers = dict(values)
    numbers.update(bias_values(circuit, point.small_signal_values(), options))
    return numbers


def _value_at(formula, values: dict[str, float]) -> float | None:
    import math

    missing = [s.name for s in formula.symbols if s.name not in values]
    if missing:
        return None
    number = complex(formula.evaluate(values))
    value = number.real if abs(number.imag) <= 1e-12 * abs(number) else abs(number)
    return value if math.isfinite(value) else None


def _value_text(formula, values: dict[str, float], temperature: float) -> str:
    from ..render.text import engineering

    missing = [s.name for s in formula.symbols if s.name not in values]
    if missing:
        return f"needs {', '.join(missing)} (not set by the operating point; use --set)"
    value = _value_at(formula, values)
    if value is None:
        shown = "infinite"
    elif formula.unit in ("A/A", "V/V"):
        shown = f"{value:.6g}"  # a ratio reads better without an SI prefix
    else:
        shown = engineering(value)
    return f"{shown} {formula.unit} at {temperature:g} degC"
