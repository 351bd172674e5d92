"""Fuzz run: malformed and random netlists through ``symbias derive``.

Every case must end in a result (exit 0, something on stdout) or a clean error
(exit 1 or 2, one stderr line ``file[:line]: cause`` besides one-line warnings,
no traceback) within a time limit; anything else is a finding.

Cases are of three kinds, drawn from a seeded generator:

* mild changes of the shipped netlists (a new value, an extra element), mostly valid;
* mutations of the shipped netlists (``examples/``, ``tests/decks/``): lines
  deleted, duplicated, truncated or shuffled, tokens deleted, swapped or replaced
  by hostile values (huge numbers, bad expressions, code, control characters);
* random netlists over every element letter with random nodes, values and
  models, valid and invalid alike;

each with random ``derive`` arguments (ports, gains, model options, output format).

Run ``python bench/fuzz_netlists.py --cases 10000`` (the issue's 10,000-netlist
run); ``tests/test_fuzz_netlists.py`` runs a short slice of the same generator
in the test suite.  ``--report FILE`` writes the findings as Markdown.
"""

from __future__ import annotations

import argparse
import contextlib
import io
import os
import random
import re
import signal
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SEEDS = sorted(ROOT.glob("examples/*.cir")) + sorted(ROOT.glob("tests/decks/**/*.cir"))

#: Hostile replacements for a token.
VALUES = [
    "", "0", "-1k", "1e999999", "1e-999999", "nan", "inf", "-0", "1meg", "1.2.3", "1e", "k", "{", "}", "{}",
    "{1/0}", "{x**}", "{2**2**2**2**2**2}", "{10**10**10}", "{RA**1000000000}", "{sqrt(-1)}", "{log(0)}",
    "{exp(1e6)}", "{exp(-1e6)}", "{(((((((((1)))))))))}", "{RA^-1}", "{a b}", "{__import__('os')}",
    "{RE.__class__}", "{lambda: 0}", "'2*RE'", "{1e-320}", "{-RE}", "{RE-RE}", "{abs(-RE)}", "{2,3}", "=",
    "(", ")", "()", "gnd", "0", "GND", "X1", "Q1", "Vout", "QN", "NM", "area=0", "m=-1", "W=", "L=0",
    "dc", "ac 1", "pulse(0 1)", "\x00", "\t", "\u00e9", "\u202e", "$", ";", "*", "+", "a" * 300, "9" * 5000,
]

#: Whole lines to insert.
LINES = [
    ".param RE={RE}", ".param a={b} b={a}", ".param x=", ".model", ".model QN", ".model QN npn (BF=)",
    ".model QN bogus", ".model NM nmos (VTO=0.5 LAMBDA={1/0})", ".subckt", ".subckt cell a b", ".ends",
    ".match", ".match G Q9", ".match G", ".end", ".endc", ".control", ".include other.cir", ".op",
    "X1 a b cell", "X1 a cell", "Xloop a b loop", "+", "+ 1k", "*", "R", "R1", "R1 a", "R9 a a 1k",
    "V9 a a 1", "I9 a a 1", "L9 a 0 0", "C9 a 0 0", "R9 a 0 0", "G9 a 0 a", "E9 a 0 a 0", "F9 a 0 V9 1",
    "H9 a 0 Vout 1", "Q9 a b", "Q9 a b c d e QN", "M9 a b c QN", "M9 a b c d e f NM", "V9 0 0 0",
]

LETTERS = "RCLVIGEFHQMX"


def _tokens(line: str) -> list[str]:
    return line.split()


def mutate(text: str, rng: random.Random) -> str:
    """One to four random mutations of a netlist text."""
    lines = text.splitlines()
    for _ in range(rng.choice([1, 1, 1, 2, 2, 3, 4])):
        if not lines:
            lines = [""]
        k = rng.randrange(len(lines))
        tokens = _tokens(lines[k])
        choice = rng.randrange(12)
        if choice == 0:
            del lines[k]
        elif choice == 1:
            lines.insert(k, lines[k])
        elif choice == 2 and tokens:
            del tokens[rng.randrange(len(tokens))]
            lines[k] = " ".join(tokens)
        elif choice == 3 and tokens:
            tokens[rng.randrange(len(tokens))] = rng.choice(VALUES)
            lines[k] = " ".join(tokens)
        elif choice == 4 and len(tokens) > 1:
            i, j = rng.sample(range(len(tokens)), 2)
            tokens[i], tokens[j] = tokens[j], tokens[i]
            lines[k] = " ".join(tokens)
        elif choice == 5:
            lines.insert(k, rng.choice(LINES))
        elif choice == 6:
            where = rng.randrange(len(lines[k]) + 1)
            garbage = "".join(chr(rng.choice([rng.randrange(32, 127), rng.randrange(0, 32), rng.randrange(128, 0x3000)]))
                              for _ in range(rng.randint(1, 6)))
            lines[k] = lines[k][:where] + garbage + lines[k][where:]
        elif choice == 7:
            return "\n".join(lines)[: rng.randrange(len("\n".join(lines)) + 1)]
        elif choice == 8:
            lines[k] = lines[k].swapcase()
        elif choice == 9 and tokens:
            tokens[0] = rng.choice(LETTERS) + tokens[0][1:]
            lines[k] = " ".join(tokens)
        elif choice == 10 and k + 1 < len(lines):
            lines[k + 1] = "+ " + lines[k + 1]
        elif choice == 11:
            rng.shuffle(lines)
    return "\n".join(lines) + rng.choice(["\n", "", "\r\n", "\n\n\n"])


def tweak(text: str, rng: random.Random) -> str:
    """A mild change that usually keeps the netlist valid: a new value or an extra element."""
    lines = text.splitlines()
    elements = [k for k, line in enumerate(lines[1:], 1) if line[:1].upper() in "RCLVI" and len(line.split()) >= 4]
    nodes = sorted({n for k in elements for n in lines[k].split()[1:3]}) or ["0"]
    if elements and rng.random() < 0.5:
        k = rng.choice(elements)
        tokens = lines[k].split()
        tokens[3] = rng.choice(["2.2k", "{RE*2}", "RX", "1meg", "{2*RX+1k}", "10p", "47", "{sqrt(RX*RY)}"])
        lines[k] = " ".join(tokens)
    else:
        a, b = rng.choice(nodes), rng.choice(nodes)
        lines.insert(rng.randint(1, len(lines)), rng.choice([f"R99 {a} {b} RX", f"C99 {a} 0 1p", f"R98 {a} 0 10k"]))
    return "\n".join(lines) + "\n"


def random_netlist(rng: random.Random) -> str:
    """A random netlist over every element kind; often invalid."""
    nodes = ["0"] * rng.randint(0, 2) + [f"n{k}" for k in range(rng.randint(1, 5))] + ["gnd"] * rng.randint(0, 1)
    pick = lambda: rng.choice(nodes)  # noqa: E731

    def value() -> str:
        return rng.choice(["1k", "10u", "RA", "{RA/2}", "2", "gm1", "0", "-3", "1p", rng.choice(VALUES)])

    lines = [rng.choice(["random netlist", "", "* title", "R1 a 0 1k"])]
    vnames = []
    for index in range(rng.randint(0, 9)):
        letter = rng.choice(LETTERS)
        name = f"{letter}{index}"
        if letter in "RCLVI":
            lines.append(f"{name} {pick()} {pick()} {value()}")
            if letter == "V":
                vnames.append(name)
        elif letter in "GE":
            lines.append(f"{name} {pick()} {pick()} {pick()} {pick()} {value()}")
        elif letter in "FH":
            control = rng.choice(vnames + ["Vnone"])
            lines.append(f"{name} {pick()} {pick()} {control} {value()}")
        elif letter == "Q":
            extra = f" {pick()}" if rng.random() < 0.3 else ""
            lines.append(f"{name} {pick()} {pick()} {pick()}{extra} {rng.choice(['QN', 'QP', 'NM', 'QX'])}"
                         + rng.choice(["", " 2", " area=3", " m=2"]))
        elif letter == "M":
            lines.append(f"{name} {pick()} {pick()} {pick()} {pick()} {rng.choice(['NM', 'PM', 'QN'])}"
                         + rng.choice(["", " W=10u L=1u", " m=2", " W={RA}"]))
        else:
            lines.append(f"{name} {pick()} {pick()} cell")
    if rng.random() < 0.4:
        lines += [".subckt cell a b", f"R1 a b {value()}", ".ends"]
    models = [".model QN npn (BF=100 VAF=50)", ".model QP pnp (BF=50)", ".model NM nmos (VTO=0.5)",
              ".model PM pmos (VTO=-0.5)"]
    lines += [m for m in models if rng.random() < 0.7]
    if rng.random() < 0.2:
        lines.append(".match G " + " ".join(rng.sample([f"Q{i}" for i in range(9)], 2)))
    if rng.random() < 0.2:
        lines.insert(rng.randrange(1, len(lines) + 1), rng.choice(LINES))
    return "\n".join(lines) + "\n"


def random_arguments(text: str, rng: random.Random) -> list[str]:
    """Random derive arguments naming things that may or may not be in the netlist."""
    if rng.random() < 0.4:  # what a designer types most: the defaults, or Rout at the output
        return rng.choice([[], ["--json"], ["--rout", "Vout", "--json"], ["--latex"]])
    words = re.findall(r"[A-Za-z_][A-Za-z0-9_]*", text) or ["a"]
    names = [w for w in words if w[0].upper() in LETTERS] or words
    thing = lambda: rng.choice(names + words[:5] + ["0", "gnd", "nowhere", ""])  # noqa: E731
    arguments: list[str] = []
    for _ in range(rng.choice([0, 1, 1, 1, 2])):
        flag = rng.choice(["--rout", "--rout", "--gain", "--vgain", "--gm", "--zt"])
        if flag == "--rout":
            port = thing() if rng.random() < 0.8 else f"{thing()},{thing()}"
            arguments += [flag, port]
        else:
            arguments += [flag, rng.choice([f"{thing()}/{thing()}", thing(), "a/b/c", "/"])]
    devices = len(re.findall(r"^\s*[QqMm]\S*\s", text, flags=re.M))
    if rng.random() < 0.3:
        arguments += ["--match"] if rng.random() < 0.7 else ["--match", thing()]
    if rng.random() < 0.2:
        arguments.append("--beta")
    if rng.random() < 0.3:
        levels = ["simple", "default"] + (["full"] if devices <= 3 else [])
        arguments += ["--level", rng.choice(levels)]
    for flag in ("--no-ro", "--no-gmb", "--symbolic"):
        if rng.random() < 0.1:
            arguments.append(flag)
    if devices <= 3 and rng.random() < 0.1:
        arguments.append("--capacitances")
    arguments += rng.choice([["--json"], ["--json"], ["--latex"], []])
    return arguments


class Hang(BaseException):
    """Raised by the alarm: a BaseException, so no ``except Exception`` can swallow it."""


@dataclass
class Outcome:
    index: int
    status: int | None
    seconds: float
    problem: str | None
    text: str
    arguments: list[str]
    message: str = ""


def _raise_hang(signum, frame):
    raise Hang()


def run_case(index: int, text: str, arguments: list[str], folder: Path, limit: float) -> Outcome:
    """Run one case in process; return what went wrong, if anything."""
    from symbias.cli import main

    path = folder / "fuzz.cir"
    path.write_bytes(text.encode("utf-8", "surrogatepass"))
    out, err = io.StringIO(), io.StringIO()
    status: int | None = None
    problem = None
    previous = signal.signal(signal.SIGALRM, _raise_hang)
    signal.setitimer(signal.ITIMER_REAL, limit)
    start = time.perf_counter()
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            try:
                status = main(["derive", str(path), *arguments])
            except SystemExit as stop:  # argparse usage errors
                status = stop.code if isinstance(stop.code, int) else 2
    except Hang:
        problem = f"no answer within {limit:g} s"
    except Exception as exc:  # noqa: BLE001 - any escape is the finding
        problem = f"traceback: {type(exc).__name__}: {str(exc)[:200]}"
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)
    seconds = time.perf_counter() - start
    if problem is None:
        problem = _judge(status, out.getvalue(), err.getvalue(), str(path))
    errors = [line for line in err.getvalue().splitlines() if not _WARNING.match(line)]
    return Outcome(index, status, seconds, problem, text, arguments, errors[0] if errors else "")


_WARNING = re.compile(r"^\S.*: warning: .+$")


def _judge(status: int | None, out: str, err: str, path: str) -> str | None:
    """What is wrong with a finished case, or None: see the module docstring."""
    if "Traceback" in err:
        return "traceback on stderr"
    lines = [line for line in err.splitlines() if not _WARNING.match(line)]
    if status == 0:
        return None if out.strip() else "exit 0 with nothing on stdout"
    if status not in (1, 2):
        return f"exit status {status!r}"
    if len(lines) != 1:
        return f"{len(lines)} error lines on stderr: {err[:300]!r}"
    # the netlist's own location, or argparse's "symbias derive: error: ..." for a usage error
    if not re.match(rf"({re.escape(path)}(:\d+)?|symbias derive: error): \S", lines[0]):
        return f"error line not 'file:line: cause': {lines[0][:200]!r}"
    return None


def cases(count: int, seed: int):
    """The (index, text, arguments) cases of a run: reproducible from the seed."""
    rng = random.Random(seed)
    seeds = [p.read_text() for p in SEEDS]
    for index in range(count):
        draw = rng.random()
        if seeds and draw < 0.3:
            text = tweak(rng.choice(seeds), rng)
        elif seeds and draw < 0.7:
            text = mutate(rng.choice(seeds), rng)
        else:
            text = random_netlist(rng)
        yield index, text, random_arguments(text, rng)


def _worker(connection, limit: float) -> None:
    """Run cases sent over ``connection`` until it closes (in a child process)."""
    import warnings

    warnings.simplefilter("ignore")  # outside the CLI's own handling (e.g. numpy overflow)
    with tempfile.TemporaryDirectory() as folder:
        while True:
            try:
                index, text, arguments = connection.recv()
            except EOFError:
                return
            connection.send(run_case(index, text, arguments, Path(folder), limit))


def fuzz(count: int, seed: int = 1, limit: float = 20.0, progress: bool = False) -> list[Outcome]:
    """Run ``count`` cases; return every outcome.

    The cases run in a child process watched from here: a case that does not
    answer within ``limit`` seconds (even inside C code, where the in-process
    alarm cannot interrupt it) is recorded as a hang and the child replaced.
    """
    import multiprocessing

    context = multiprocessing.get_context("fork")

    def start():
        parent, child = context.Pipe()
        process = context.Process(target=_worker, args=(child, limit), daemon=True)
        process.start()
        return process, parent

    process, connection = start()
    results = []
    try:
        for index, text, arguments in cases(count, seed):
            connection.send((index, text, arguments))
            if connection.poll(limit + 5.0):
                results.append(connection.recv())
            else:
                process.kill()
                process.join()
                results.append(Outcome(index, None, limit + 5.0, f"no answer within {limit + 5:g} s (killed)",
                                       text, arguments))
                process, connection = start()
            if progress and (index + 1) % 500 == 0:
                bad = sum(r.problem is not None for r in results)
                print(f"{index + 1} cases, {bad} findings", file=sys.stderr, flush=True)
    finally:
        connection.close()
        process.join(timeout=10)
        if process.is_alive():
            process.kill()
    return results


def summary(results: list[Outcome]) -> str:
    """Markdown: counts by exit status, time, and each finding with its netlist."""
    statuses: dict[str, int] = {}
    for r in results:
        key = "finding" if r.problem else f"exit {r.status}"
        statuses[key] = statuses.get(key, 0) + 1
    times = sorted(r.seconds for r in results)
    lines = [
        f"# Fuzz run: {len(results)} netlists",
        "",
        "| outcome | cases |",
        "|---|---|",
        *[f"| {k} | {v} |" for k, v in sorted(statuses.items())],
        "",
        f"Time per case: median {times[len(times) // 2] * 1e3:.1f} ms, slowest {times[-1]:.2f} s."
        if times else "",
        "",
    ]
    causes: dict[str, int] = {}
    for r in results:
        if r.message and not r.problem:
            cause = re.sub(r"'[^']*'|\d+", "_", r.message.split(": ", 1)[-1])[:90]
            causes[cause] = causes.get(cause, 0) + 1
    lines += ["Most frequent clean errors:", "", "| cases | cause (names and numbers blanked) |", "|---|---|"]
    lines += [f"| {n} | {c} |" for c, n in sorted(causes.items(), key=lambda kv: -kv[1])[:15]] + [""]
    lines += ["Slowest cases:", "", "| case | seconds | exit | arguments |", "|---|---|---|---|"]
    for r in sorted(results, key=lambda r: -r.seconds)[:5]:
        lines.append(f"| {r.index} | {r.seconds:.2f} | {r.status} | `{' '.join(r.arguments)}` |")
    lines.append("")
    findings = [r for r in results if r.problem]
    for r in findings[:50]:
        lines += [f"## case {r.index}: {r.problem}", "", f"arguments: `{' '.join(r.arguments)}`", "", "```",
                  r.text.encode("unicode_escape").decode("ascii")[:2000], "```", ""]
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--cases", type=int, default=10_000)
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--limit", type=float, default=20.0, help="seconds allowed per case")
    parser.add_argument("--report", type=Path, help="write the summary as Markdown to this file")
    args = parser.parse_args(argv)
    os.environ.setdefault("COLUMNS", "100")
    results = fuzz(args.cases, args.seed, args.limit, progress=True)
    text = summary(results)
    print(text)
    if args.report:
        args.report.write_text(text)
    return 1 if any(r.problem for r in results) else 0


if __name__ == "__main__":
    sys.exit(main())
