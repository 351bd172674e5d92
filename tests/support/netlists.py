"""Netlist text for the adversarial run: the shipped netlists, their mutations, random netlists, command lines.

Part of :mod:`support.adversarial` (read its docstring first).

Examples
--------
>>> import random
>>> text = random_netlist(random.Random(1))
>>> text.endswith("\\n") and any_command(text, random.Random(2))[1] == "deck.cir"
True
"""

from __future__ import annotations

import random
import re
from pathlib import Path

__all__ = ["ROOT", "SEEDS", "GOOD", "PROCESS", "TOPOLOGIES", "VALUES", "LINES", "mutate", "tweak", "random_netlist",
           "derive_arguments", "any_command", "text_of"]

ROOT = Path(__file__).resolve().parents[2]
SEEDS = sorted(ROOT.glob("examples/*.cir")) + sorted(ROOT.glob("tests/decks/**/*.cir"))
#: Netlists that solve under bias, deck and a temperature sweep without a process file.
GOOD = ["examples/simple_mirror.cir", "examples/wilson_mirror.cir", "examples/widlar_source.cir",
        "examples/mos_cascode.cir", "tests/decks/bjt_cascode_mirror.cir", "tests/decks/mos_cascode_mirror.cir"]
PROCESS = ROOT / "symbias" / "data" / "demo_process.toml"
TOPOLOGIES = sorted(ROOT.glob("topologies/*.toml"))

#: Hostile replacements for a token.
VALUES = [
    "", "0", "-1k", "1e999999", "1e-999999", "nan", "inf", "-0", "1meg", "1.2.3", "1e", "k", "{", "}", "{}",
    "{1/0}", "{x**}", "{2**2**2**2**2**2}", "{10**10**10}", "{RA**1000000000}", "{sqrt(-1)}", "{log(0)}",
    "{exp(1e6)}", "{exp(-1e6)}", "{(((((((((1)))))))))}", "{RA^-1}", "{a b}", "{__import__('os')}",
    "{RE.__class__}", "{lambda: 0}", "'2*RE'", "{1e-320}", "{-RE}", "{RE-RE}", "{abs(-RE)}", "{2,3}", "=",
    "(", ")", "()", "gnd", "0", "GND", "X1", "Q1", "Vout", "QN", "NM", "area=0", "m=-1", "W=", "L=0",
    "dc", "ac 1", "pulse(0 1)", "\x00", "\t", "\u00e9", "\u202e", "$", ";", "*", "+", "a" * 300, "9" * 5000,
    '"""', "'''", "\\", "${HOME}", "$(touch pwned)", "`touch pwned`", "\u0661\u0662", "1e308", "{1e308*10}",
]

#: Whole lines to insert.
LINES = [
    ".param RE={RE}", ".param a={b} b={a}", ".param x=", ".model", ".model QN", ".model QN npn (BF=)",
    ".model QN bogus", ".model NM nmos (VTO=0.5 LAMBDA={1/0})", ".subckt", ".subckt cell a b", ".ends",
    ".match", ".match G Q9", ".match G", ".end", ".endc", ".control", ".include other.cir", ".op",
    "X1 a b cell", "X1 a cell", "Xloop a b loop", "+", "+ 1k", "*", "R", "R1", "R1 a", "R9 a a 1k",
    "V9 a a 1", "I9 a a 1", "L9 a 0 0", "C9 a 0 0", "R9 a 0 0", "G9 a 0 a", "E9 a 0 a 0", "F9 a 0 V9 1",
    "H9 a 0 Vout 1", "Q9 a b", "Q9 a b c d e QN", "M9 a b c QN", "M9 a b c d e f NM", "V9 0 0 0",
    ".lib", ".lib x.lib", ".endl", ".include", ".temp 1e308", ".model QN npn (TNOM=-300)", "G9 a 0 a 0 1m",
]

LETTERS = "RCLVIGEFHQMX"


def text_of(name: str | Path) -> str:
    """The text of a shipped file, by path relative to the repository or absolute."""
    return (ROOT / name).read_text(encoding="utf-8")


# -- netlist mutations (anything may come out) ---------------------------------------------------
def mutate(text: str, rng: random.Random) -> str:
    """One to four random mutations of a netlist text."""
    lines = text.splitlines()
    for _ in range(rng.choice([1, 1, 1, 2, 2, 3, 4])):
        if not lines:
            lines = [""]
        k = rng.randrange(len(lines))
        tokens = lines[k].split()
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
            garbage = "".join(chr(rng.choice([rng.randrange(32, 127), rng.randrange(0, 32),
                                               rng.randrange(128, 0x3000)])) for _ in range(rng.randint(1, 6)))
            lines[k] = lines[k][:where] + garbage + lines[k][where:]
        elif choice == 7:
            joined = "\n".join(lines)
            return joined[: rng.randrange(len(joined) + 1)]
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
            vnames += [name] if letter == "V" else []
        elif letter in "GE":
            lines.append(f"{name} {pick()} {pick()} {pick()} {pick()} {value()}")
        elif letter in "FH":
            lines.append(f"{name} {pick()} {pick()} {rng.choice(vnames + ['Vnone'])} {value()}")
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


def derive_arguments(text: str, rng: random.Random) -> list[str]:
    """Random derive arguments naming things that may or may not be in the netlist."""
    if rng.random() < 0.4:
        return rng.choice([[], ["--json"], ["--rout", "Vout", "--json"], ["--latex"], ["--format", "python"]])
    words = re.findall(r"[A-Za-z_][A-Za-z0-9_]*", text) or ["a"]
    names = [w for w in words if w[0].upper() in LETTERS] or words
    thing = lambda: rng.choice(names + words[:5] + ["0", "gnd", "nowhere", ""])  # noqa: E731
    arguments: list[str] = []
    for _ in range(rng.choice([0, 1, 1, 1, 2])):
        flag = rng.choice(["--rout", "--rout", "--gain", "--vgain", "--gm", "--zt"])
        if flag == "--rout":
            arguments += [flag, thing() if rng.random() < 0.8 else f"{thing()},{thing()}"]
        else:
            arguments += [flag, rng.choice([f"{thing()}/{thing()}", thing(), "a/b/c", "/"])]
    devices = len(re.findall(r"^\s*[QqMm]\S*\s", text, flags=re.M))
    if rng.random() < 0.3:
        arguments += ["--match"] if rng.random() < 0.7 else ["--match", thing()]
    if rng.random() < 0.2:
        arguments.append("--beta")
    if rng.random() < 0.3:
        arguments += ["--level", rng.choice(["simple", "default"] + (["full"] if devices <= 3 else []))]
    for flag in ("--no-ro", "--no-gmb", "--symbolic"):
        if rng.random() < 0.1:
            arguments.append(flag)
    if devices <= 3 and rng.random() < 0.1:
        arguments.append("--capacitances")
    if rng.random() < 0.1:
        arguments += rng.choice([["--approx"], ["--sensitivity"], ["--approx", "--sensitivity"]])
    arguments += rng.choice([["--json"], ["--json"], ["--latex"], [], ["--format", "markdown"],
                             ["--format", "python"]])
    return arguments


# -- commands over a netlist -------------------------------------------------------------------
def any_command(text: str, rng: random.Random, file: str = "deck.cir") -> list[str]:
    """derive, bias, deck, frequency, noise or sweep over ``file``, with plausible arguments."""
    choice = rng.random()
    if choice < 0.55:
        return ["derive", file, *derive_arguments(text, rng)]
    if choice < 0.75:
        return ["bias", file] + rng.choice([[], ["--json"], ["--all"]])
    if choice < 0.82:
        return ["deck", file]
    if choice < 0.88:
        return [rng.choice(["frequency", "noise"]), file, "--points", "3"] + rng.choice([[], ["--json"], ["--approx"]])
    sources = re.findall(r"^\s*([Vv]\S*)\s", text, flags=re.M) or ["temp"]
    vary = rng.choice(sources + ["temp"])
    low, high = ("-40", "125") if vary == "temp" else ("0", "5")
    return ["sweep", file, "--vary", vary, "--from", low, "--to", high, "--points", str(rng.choice([5, 11, 21]))]
