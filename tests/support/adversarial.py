"""A seeded generator of adversarial command lines, and the run that judges them.

Each case is a ``symbias`` command line with its files (:class:`~support.harness.Case`),
drawn from one of these families:

``mutated``     a shipped netlist with one to four random mutations (lines deleted,
                duplicated, shuffled, cut; tokens swapped or replaced by hostile
                values; garbage bytes), with random ``derive`` arguments
``tweaked``     a shipped netlist with a mild change (mostly still valid)
``random``      a random netlist over every element letter, valid or not
``circuits``    a random valid bias circuit (grounded, connected) under every command
``invalid``     a shipped netlist with one change that makes it invalid for sure
                (an unknown letter, a duplicate name, a self-referring or
                misnamed ``.param``, a subcircuit defined twice, ``.match`` on a
                resistor, ``m=0``, division by zero, code in a value, a missing
                model or include, an include cycle, no ground, a loop of
                voltage sources, a cut set of current sources, name collisions,
                bytes that are not UTF-8...), under derive, bias, deck or sweep
``unicode``     names and values outside ASCII, control characters, a byte-order
                mark, CR line ends, very long lines
``size``        growth: parameter chains, long sums, deep nesting, many
                elements, subcircuit bombs, dense or fully symbolic networks
``process``     the demo process file mutated (a bad ``tnom``, negative, infinite
                or missing parameters, unknown sections, broken TOML)
``library``     a library topology file mutated, read by ``show``, ``derive`` and ``list``
``spec``        the example spec file of a ranking mutated, and hostile options, ranked by ``rank``
``options``     a valid netlist under hostile options: sweeps (points, ranges,
                sources), temperatures, ``--set``, ``--guess``, ``--assume``,
                tolerances, model levels, output forms
``outputs``     output paths: a missing folder, a folder, a read-only place, a
                name without the right suffix, an existing file that must
                survive a failure, stdout on a full device

A case built invalid on purpose carries the reason (``Case.invalid``); its exit
status 0 is a *wrong success*.  :func:`cases` is reproducible from its seed;
:func:`fuzz` runs them with :func:`~support.harness.run_cases`; :func:`report`
writes the Markdown summary kept in ``bench/results-fuzz.md``.

Run ``python -m support.adversarial --cases 1500`` from ``tests/`` (or
``python bench/fuzz_netlists.py``, which writes the report).

Examples
--------
>>> sample = list(cases(40, seed=3))
>>> len(sample), len({c.family for c in sample}) > 5
(40, True)
>>> [c.argv[0] for c in sample][:3] == [c.argv[0] for c in list(cases(3, seed=3))]
True
"""

from __future__ import annotations

import argparse
import random
import re
import sys
import time
from pathlib import Path
from typing import Callable, Iterator

from .families import (INVALID_EDITS, circuit_case, library_case, option_case, output_case, process_case, size_case,
                       spec_case, unicode_case)
from .harness import BAD_KINDS, Case, Outcome, prewarm, run_cases
from .netlists import GOOD, SEEDS, any_command, derive_arguments, mutate, random_netlist, text_of, tweak

__all__ = ["cases", "fuzz", "report", "FAMILIES", "main"]

Family = Callable[[random.Random, int], Case]


def _mutated(rng: random.Random, index: int) -> Case:
    text = mutate(text_of(rng.choice(SEEDS)), rng)
    return Case(index, "mutated", ("derive", "deck.cir", *derive_arguments(text, rng)), {"deck.cir": text})


def _tweaked(rng: random.Random, index: int) -> Case:
    text = tweak(text_of(rng.choice(SEEDS)), rng)
    return Case(index, "tweaked", tuple(any_command(text, rng)), {"deck.cir": text})


def _random(rng: random.Random, index: int) -> Case:
    text = random_netlist(rng)
    return Case(index, "random", ("derive", "deck.cir", *derive_arguments(text, rng)), {"deck.cir": text})


def _invalid(rng: random.Random, index: int) -> Case:
    text = text_of(rng.choice(GOOD + SEEDS))
    edit = rng.choice(INVALID_EDITS)
    content, why, extra = edit(text, rng)
    shown = content.decode("utf-8", "replace") if isinstance(content, bytes) else content
    argv = any_command(shown, rng)
    if "(derive" in why or "device symbol" in why:  # invalid as unmatched names only (--match shares on purpose)
        argv = ["derive", "deck.cir", "--json"]
    if "--symbolic" in why and "--symbolic" not in argv:
        argv.append("--symbolic")
    files = {"deck.cir": content, **extra}
    return Case(index, "invalid", tuple(argv), files, invalid=why)


#: Family name -> (weight, maker).
FAMILIES: dict[str, tuple[float, Family]] = {
    "mutated": (0.15, _mutated),
    "tweaked": (0.05, _tweaked),
    "random": (0.07, _random),
    "circuits": (0.10, circuit_case),
    "invalid": (0.18, _invalid),
    "unicode": (0.06, unicode_case),
    "size": (0.03, size_case),
    "process": (0.09, process_case),
    "library": (0.06, library_case),
    "spec": (0.02, spec_case),
    "options": (0.14, option_case),
    "outputs": (0.07, output_case),
}


def cases(count: int, seed: int = 1) -> Iterator[Case]:
    """``count`` cases, reproducible from ``seed``."""
    rng = random.Random(seed)
    names = list(FAMILIES)
    weights = [FAMILIES[n][0] for n in names]
    for index in range(count):
        family = rng.choices(names, weights)[0]
        yield FAMILIES[family][1](random.Random(rng.getrandbits(64)), index)


def fuzz(count: int, seed: int = 1, limit: float = 20.0, jobs: int = 2, progress: bool = False) -> list[Outcome]:
    """Run ``count`` cases and return every outcome (the parent imports symbias once, first)."""
    prewarm()
    started = time.monotonic()

    def show(done: int) -> None:
        if progress and done % 500 == 0:
            print(f"{done} cases, {time.monotonic() - started:.0f} s", file=sys.stderr, flush=True)

    return run_cases(cases(count, seed), limit=limit, jobs=jobs, progress=show)


def report(outcomes: list[Outcome], seed: int, seconds: float, command: str) -> str:
    """Markdown summary: counts per class and family, peak memory, time, and each finding with its case."""
    kinds = ["success", "error", *BAD_KINDS]
    count = {k: sum(o.kind == k for o in outcomes) for k in kinds}
    families = sorted({o.case.family for o in outcomes})
    peak = max((o.peak_kib for o in outcomes), default=0)
    times = sorted(o.seconds for o in outcomes)
    bad = [o for o in outcomes if o.bad]
    lines = [f"# Adversarial run: {len(outcomes)} cases", "",
             f"`{command}` (seed {seed}): {len(bad)} findings in {seconds / 60:.1f} min on 2 workers; "
             f"peak resident memory of any case {peak / 2**20:.2f} GiB (ceiling 2 GiB).", "",
             "| class | cases |", "|---|---|", *[f"| {k} | {count[k]} |" for k in kinds], "",
             "| family | cases | success | clean error | findings | invalid on purpose |", "|---|---|---|---|---|---|"]
    for family in families:
        mine = [o for o in outcomes if o.case.family == family]
        lines.append(f"| {family} | {len(mine)} | {sum(o.kind == 'success' for o in mine)} | "
                     f"{sum(o.kind == 'error' for o in mine)} | {sum(o.bad for o in mine)} | "
                     f"{sum(bool(o.case.invalid) for o in mine)} |")
    if times:
        lines += ["", f"Time per case: median {times[len(times) // 2] * 1e3:.0f} ms, slowest {times[-1]:.2f} s."]
    lines += ["", "Slowest cases:", "", "| case | family | seconds | class | command |", "|---|---|---|---|---|"]
    for o in sorted(outcomes, key=lambda o: -o.seconds)[:5]:
        lines.append(f"| {o.case.index} | {o.case.family} | {o.seconds:.2f} | {o.kind} | `{_shown(o.case.argv)}` |")
    causes: dict[str, int] = {}
    for o in outcomes:
        if o.kind == "error":
            cause = re.sub(r"'[^']*'|\d+(\.\d+)?", "_", o.message.split(": ", 1)[-1])[:90]
            causes[cause] = causes.get(cause, 0) + 1
    lines += ["", "Most frequent clean errors:", "", "| cases | cause (names and numbers blanked) |", "|---|---|"]
    lines += [f"| {n} | {c.replace('|', '/')} |" for c, n in sorted(causes.items(), key=lambda kv: -kv[1])[:15]]
    for o in bad[:50]:
        lines += ["", f"## case {o.case.index} ({o.case.family}): {o.kind}", "", f"command: `{_shown(o.case.argv)}`",
                  "", f"{o.detail}", ""]
        for name, content in list(o.case.files.items())[:3]:
            shown = content if isinstance(content, str) else content.decode("utf-8", "replace")
            lines += [f"{name}:", "```", shown.encode("unicode_escape").decode("ascii")[:1500], "```"]
    return "\n".join(lines) + "\n"


def _shown(argv) -> str:
    return " ".join(a if a and " " not in a else repr(a) for a in argv).encode("unicode_escape").decode("ascii")


def main(argv: list[str] | None = None) -> int:
    """Run the cases and print (or write) the report; exit status 1 when anything was found."""
    parser = argparse.ArgumentParser(description="adversarial run of the symbias command line")
    parser.add_argument("--cases", type=int, default=10_000)
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--limit", type=float, default=20.0, help="seconds allowed per case")
    parser.add_argument("--jobs", type=int, default=2, help="cases run at once")
    parser.add_argument("--report", type=Path, help="write the Markdown report to this file")
    args = parser.parse_args(argv)
    start = time.monotonic()
    outcomes = fuzz(args.cases, args.seed, args.limit, args.jobs, progress=True)
    command = f"python bench/fuzz_netlists.py --cases {args.cases} --seed {args.seed}"
    text = report(outcomes, args.seed, time.monotonic() - start, command)
    if args.report:
        args.report.write_text(text)
    print(text)
    return 1 if any(o.bad for o in outcomes) else 0


if __name__ == "__main__":
    sys.exit(main())
