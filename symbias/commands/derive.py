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
from pathlib import Path

from ..errors import CircuitError, NetlistError

__all__ = ["register", "run", "load_target", "options_from_args", "requested_quantities"]

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
    out = p.add_argument_group("output")
    out.add_argument("--json", action="store_true", help="print one JSON object")
    out.add_argument("--latex", action="store_true", help="print LaTeX")
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
    from ..network import SmallSignalOptions

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


def run(args: argparse.Namespace) -> int:
    """Derive, then print as text, LaTeX or JSON."""
    from ..analyses import QUANTITIES

    circuit, topology = load_target(args.netlist, args.library)
    options = options_from_args(args)
    formulas = []
    for quantity, arguments in requested_quantities(args, circuit, topology):
        function = QUANTITIES[quantity][0]
        formulas.append(function(circuit, *arguments, options=options, backend=args.backend))
    if args.json:
        from ..render.json import dumps, formula_record

        records = [formula_record(f) for f in formulas]
        header = {"circuit": circuit.title, "source": circuit.path or args.netlist}
        if len(records) == 1:
            print(dumps({**header, **records[0]}))
        else:
            print(dumps({**header, "results": records}))
        return 0
    if args.latex:
        from ..render.latex import formula_latex

        for formula in formulas:
            print(formula_latex(formula))
        return 0
    from rich.console import Console

    from ..render.text import formula_panel

    console = Console(file=sys.stdout)
    console.print(f"[bold]{circuit.title}[/bold]  ({circuit.path or args.netlist})")
    for formula in formulas:
        console.print(formula_panel(formula))
    console.print("[dim]Design aid: sign-off needs full simulation and measurement.[/dim]")
    return 0
