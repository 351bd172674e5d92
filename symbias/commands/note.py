"""``symbias note``: the design note of a circuit, with its figures and the sign-off deck, in one folder.

Wires: arguments -> :func:`symbias.note.build_note` (everything computed
first) -> :func:`symbias.render.note_files.write_note` (figures, note.md,
note.html, note.tex) and :func:`symbias.pipeline.decks.signoff_deck`
(signoff.cir with the note's sweeps set up), every file written atomically.

Examples
--------
>>> from symbias.cli import main
>>> main(["note", "bjt-simple-mirror", "-o", "mirror-note"])  # doctest: +SKIP
"""

from __future__ import annotations

import argparse
import shlex

from .common import add_bias_source_arguments, add_design_arguments, add_target_argument

__all__ = ["register", "run", "command_line", "DECK_NAME"]

#: File name of the sign-off deck beside the note.
DECK_NAME = "signoff.cir"


def register(subparsers) -> None:
    """Add the ``note`` sub-command."""
    p = subparsers.add_parser(
        "note",
        help="write the design note (Markdown, HTML, LaTeX, figures) and its sign-off deck into a folder",
        description="Write the design note of a circuit into a folder: purpose, schematic, netlist and roles, "
        "exact and leading-order output resistance and transfer, the DC ratio and its error budget (systematic "
        "by cause, random by device with a Monte Carlo histogram), sensitivities, operating points per corner, "
        "compliance, temperature and supply curves, cautions; as note.md, note.html (standalone, math as "
        "MathML), note.tex (a body for \\input) and PNG/SVG figures, with signoff.cir for ngspice beside them.",
        epilog="Sign-off rests on your foundry's models in your simulator, and on measurement.",
    )
    add_target_argument(p)
    add_design_arguments(p)
    add_bias_source_arguments(p)
    p.add_argument("--spec", metavar="FILE",
                   help="rank the library against this spec and add the ranking section (its process and the "
                        "candidate's sizing are used where --process and --set give none)")
    p.add_argument("--samples", type=int, default=400, metavar="N",
                   help="Monte Carlo samples of the note (and per candidate of the ranking; default 400)")
    p.add_argument("--seed", type=int, default=1, help="seed of the Monte Carlo samples (default 1)")
    p.add_argument("--output", "-o", metavar="DIR", required=True,
                   help="folder to write into (made when missing; its parent must exist)")
    p.set_defaults(func=run)


def command_line(args: argparse.Namespace) -> str:
    """The command as it would be typed again (the options that change the note), recorded in the note."""
    words = ["symbias", "note", args.netlist]
    for folder in args.library:
        words += ["--library", folder]
    if args.process:
        words += ["--process", args.process]
    if args.spec:
        words += ["--spec", args.spec]
    if args.temp is not None:
        words += ["--temp", f"{args.temp:g}"]
    for item in args.set:
        words += ["--set", item]
    if args.models != "built-in":
        words += ["--models", args.models]
    for corner in args.corner:
        words += ["--corner", corner]
    words += ["--samples", str(args.samples), "--seed", str(args.seed), "-o", args.output]
    return shlex.join(words)


def run(args: argparse.Namespace) -> int:
    """Build the note and its deck, then write them."""
    from pathlib import Path

    from ..note import NoteRequest, build_note
    from ..pipeline.decks import signoff_deck
    from ..render.files import check_folder, write_folder, write_text
    from ..render.note_files import write_note
    from .common import inputs_of, target_of

    folder = Path(args.output)
    check_folder(folder)  # before any work
    target = target_of(args)
    inputs = inputs_of(args, target)
    ranking = None
    if args.spec:
        ranking, inputs = _ranked(args, target, inputs)
    files = tuple(f for f in (args.process, args.spec) if f)
    request = NoteRequest(monte_carlo=args.samples, seed=args.seed, command=command_line(args), input_files=files)
    note = build_note(target, inputs, request, ranking)
    deck = signoff_deck(target, inputs, "signoff", note.sweeps)

    def fill(staging: Path) -> tuple[Path, ...]:
        written = write_note(note, staging)
        write_text(staging / DECK_NAME, deck, "--output")
        return written

    written = write_folder(folder, fill, "--output")
    print(f"wrote {len(written) + 1} files to {folder}: {', '.join(p.name for p in written[-3:])}, {DECK_NAME} "
          "and the figures")
    return 0


def _ranked(args: argparse.Namespace, target, inputs):
    """The ranking against ``--spec`` and the inputs the note then uses (:func:`symbias.note.ranking.ranked_inputs`)."""
    from ..design.spec import load_spec
    from ..note.ranking import ranked_inputs
    from .common import parse_assignments

    return ranked_inputs(load_spec(args.spec), target, inputs, library=args.library, samples=args.samples,
                         seed=args.seed, process_given=bool(args.process), settings=parse_assignments(args.set, "--set"))
