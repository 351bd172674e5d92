"""Families of adversarial cases beyond netlist mutation: invalid edits, text, size, files, options, outputs.

Part of :mod:`support.adversarial` (read its docstring first).  Each family is
a function ``(rng, index) -> Case``; :data:`INVALID_EDITS` are the netlist
edits that make any netlist invalid for sure, each returning the new text, the
reason and any extra files it needs.

Examples
--------
>>> import random
>>> case = option_case(random.Random(4), 0)
>>> case.family, case.argv[1] in case.files
('options', True)
"""

from __future__ import annotations

import random
import re
from typing import Callable

from .harness import Case
from .netlists import GOOD, PROCESS, SEEDS, TOPOLOGIES, any_command, text_of

__all__ = ["INVALID_EDITS", "unicode_case", "size_case", "process_case", "library_case", "option_case",
           "output_case", "random_circuit", "circuit_case", "spec_case"]

Edit = Callable[[str, random.Random], tuple]
BAD_TEMPERATURES = ["-300", "-273.15", "1e308", "nan", "inf", "-inf", "1001", "-1e9"]
GOOD_TEMPERATURES = ["-40", "0", "27", "125", "-273.1", "1000"]


def _add(text: str, *lines: str) -> str:
    body = text.rstrip("\n").split("\n")
    end = next((i for i, line in enumerate(body) if line.strip().lower() == ".end"), len(body))
    return "\n".join(body[:end] + list(lines) + body[end:]) + "\n"


def _first_element(text: str) -> str:
    for line in text.splitlines()[1:]:
        if line[:1].isalpha():
            return line
    return "R1 a 0 1k"


def _simple(why: str, *lines: str) -> Edit:
    return lambda text, rng: (_add(text, *lines), why, {})


HOSTILE_VALUES = ["{1/0}", "{sqrt(-1)}", "{log(0)}", "1e999", "{2*", "{__import__('os')}", "{RE.__class__}",
                  "{exp(1e6)}", "9" * 5000, "1.2.3", "{x**}", '"""', "$(touch pwned)", "{lambda: 0}", "1k\u200b",
                  "\u0661\u0662", "\uff11\uff4b", "{" + "(" * 100 + "1" + ")" * 100 + "}", "{1e308*10}", "nan", "inf"]


def _hostile_value(text: str, rng: random.Random):
    value = rng.choice(HOSTILE_VALUES)
    return _add(text, f"R99 a99 0 {value}", "I99 0 a99 1m"), f"value {value[:20]!r}", {}


def _duplicate(text: str, rng: random.Random):
    line = _first_element(text).split()
    return _add(text, " ".join([line[0], "d1", "0"] + line[3:])), "duplicate element name", {}


def _undeclared_parameter(text: str, rng: random.Random):
    return (_add(text, ".subckt cp9 a b R=1k", "R1 a b {R}", ".ends", "X98 a98 0 cp9 RR=5", "R98 a98 0 1k"),
            "instance parameter the subcircuit does not declare", {})


def _include_cycle(text: str, rng: random.Random):
    return _add(text, ".include a.inc"), "include cycle", {"a.inc": ".include b.inc\n", "b.inc": ".include a.inc\n"}


def _missing_section(text: str, rng: random.Random):
    return _add(text, ".lib c.lib fast"), "missing .lib section", {"c.lib": ".lib typ\nR7 x7 0 1k\n.endl\n"}


def _error_in_include(text: str, rng: random.Random):
    return _add(text, ".include m.inc"), "error inside an included file", {"m.inc": "* models\n.model QX npn (BF=)\n"}


def _not_utf8(text: str, rng: random.Random):
    raw = text.encode("utf-8")
    cut = rng.randrange(len(raw) + 1)
    return raw[:cut] + rng.choice([b"\xff", b"\xfe\xff", b"\xc3\x28", b"\xed\xa0\x80"]) + raw[cut:], "not UTF-8", {}


def _no_ground(text: str, rng: random.Random):
    return "no ground\nI1 a b 1m\nR1 a b 1k\nR2 b c 2k\n", "no ground node", {}


def _bomb(text: str, rng: random.Random):
    depth = rng.randint(13, 20)
    lines = [f".subckt b{k} a c\nX1 a m b{k + 1}\nX2 m c b{k + 1}\n.ends" for k in range(depth)]
    return _add(text, "X97 a97 0 b0", "R97 a97 0 1k", *lines, f".subckt b{depth} a c\nR1 a c 1k\n.ends"), \
        "subcircuit bomb beyond MAX_ELEMENTS", {}


#: Edits that make any netlist invalid, whatever it was (reason texts with "derive" force that command).
INVALID_EDITS: list[Edit] = [
    _simple("unknown element letter", "Z9 a 0 1k"),
    _duplicate,
    _simple(".param refers to itself", ".param zz={zz+1}", "R96 a96 0 zz", "I96 0 a96 1m"),
    _simple(".param name is not a name", ".param 1abc=3"),
    _simple(".param uses a later one", ".param zz1={2*zz2}", ".param zz2=3"),
    _simple(".param defined twice", ".param zz=1", ".param zz=2"),
    _simple("subcircuit defined twice", ".subckt dup a b", "R1 a b 1", ".ends", ".subckt dup a b", "R1 a b 2",
            ".ends"),
    _simple(".match on resistors", "Rm9 a9 0 1k", "Rm8 a9 0 1k", ".match G9 Rm9 Rm8"),
    _simple(".match on no device", ".match G9 NOPE9"),
    _simple("m=0", "Q99 c99 c99 0 QZ9 m=0", "R99 c99 0 1k", ".model QZ9 npn"),
    _simple("negative area", "Q99 c99 c99 0 QZ9 -2", "R99 c99 0 1k", ".model QZ9 npn"),
    _simple("MOS length zero", "M99 d99 d99 0 0 NZ9 W=1u L=0", "R99 d99 0 1k", ".model NZ9 nmos"),
    _hostile_value,
    _simple("unknown control card", ".frobnicate 3"),
    _simple("missing include", ".include nowhere.inc"),
    _include_cycle,
    _missing_section,
    _error_in_include,
    _simple("undefined model", "Q98 c98 c98 0 NOPE98", "R98 c98 0 1k"),
    _no_ground,
    _simple("loop of voltage sources", "V98 a98 0 1", "V97 a98 0 2"),
    _simple("cut set of current sources", "I98 0 z98 1m", "I97 z98 0 2m"),
    _simple("island without ground", "R98 y98 z98 1k", "R97 z98 y98 2k"),
    _simple("device names collide (derive)", "Qa+ c97 c97 0 QZ7", "Qa- c97 c97 0 QZ7", "R97 c97 0 1k",
            ".model QZ7 npn"),
    _simple("symbolic names collide (derive --symbolic)", "Ra+ a95 0 1k", "Ra- a95 0 2k", "I95 0 a95 1m"),
    _simple("netlist symbol reads as a device symbol", "Q96 c96 c96 0 QZ6", "R96 c96 0 ro_Q96", ".model QZ6 npn"),
    _not_utf8,
    _simple("NUL byte in a value", "R99 a99 0 1k\x00", "I99 0 a99 1m"),
    _simple(".model TNOM below absolute zero", ".model QT9 npn (TNOM=-300)"),
    _bomb,
    _simple("expression of 3000 terms", "R99 a99 0 {" + "+".join(f"x{i}" for i in range(3000)) + "}"),
    _undeclared_parameter,
    _simple("VCCS with three nodes", "G98 a98 0 a98 1m", "R98 a98 0 1k"),
    _simple("missing controlling source", "F98 a98 0 Vnope98 2", "R98 a98 0 1k"),
    _simple("stray .endl", ".endl"),
    _simple(".lib without a section", ".lib c.lib"),
    _simple("continuation first", "+ 1k"),
]


def unicode_case(rng: random.Random, index: int) -> Case:
    """Text outside ASCII and unusual line structure, on a netlist that works."""
    text = text_of(rng.choice(GOOD))
    pick = rng.randrange(10)
    invalid = ""
    if pick == 9:  # terminal markup in names and the title
        text = "[bold]title[/] [/x]\n" + re.sub(r"^([RQMrqm]\w*)", r"\1[/y]", text.split("\n", 1)[1], flags=re.M)
    elif pick == 0:
        text = re.sub(r"^([RQMrqm])(\w+)", lambda m: m[1] + rng.choice(["\u00b5", "\u03a9", "\u0416", "\u4e2d"]) + m[2],
                      text, flags=re.M)
    elif pick == 1:
        text = text.replace(" out ", " \u00f6ut ").replace(" in ", " \u0438n ")
    elif pick == 2:
        text = "\ufeff" + text
    elif pick == 3:
        text = text.replace("\n", "\r\n")
    elif pick == 4:
        text = "\u202etitle with a right-to-left mark " + "x" * rng.choice([10, 100_000]) + "\n" + \
            text.split("\n", 1)[1] + "* " + "y" * rng.choice([10, 200_000]) + "\n"
    elif pick == 5:
        text = _add(text, "R" + "a" * rng.choice([100, 50_000]) + " vcc_9 0 1k", "V98 vcc_9 0 1")
    elif pick == 6:
        value = rng.choice(["1k\u200b", "\u0661\u0662", "\uff11\uff4b", "1k\u00a0"])
        text = _add(text, f"R99 a99 0 {value}", "I99 0 a99 1m")
        invalid = "" if value.endswith("\u00a0") else "value with characters outside ASCII digits"  # NBSP is a blank
    elif pick == 7:
        text = _add(text, "* a comment with \x00 and \x07 and \u2028 inside")
    else:
        text = text.replace("\n", "\r")
    return Case(index, "unicode", tuple(any_command(text, rng)), {"deck.cir": text}, invalid=invalid)


def _ladder(sections: int, series: str = "1k", shunt: str = "1k") -> str:
    return "ladder\nI1 0 n0 1m\n" + "".join(f"R{i} n{i} n{i + 1} {series}\nRg{i} n{i + 1} 0 {shunt}\n"
                                             for i in range(sections))


def _cascade(n: int) -> str:
    lines = ["cascade", "Iref 0 b0 1m", "Vout out 0 5"]
    for i in range(n):
        collector, emitter = ("out" if i == n - 1 else f"n{i + 1}"), ("0" if i == 0 else f"n{i}")
        lines += [f"Q{i} {collector} b{i} {emitter} QN", f"Rb{i} b{i} 0 10k"] + ([f"Rc{i} b{i} b{i - 1} 1k"] if i else [])
    return "\n".join(lines + [".model QN npn (BF=100 VAF=50)"]) + "\n"


def _dense(n: int) -> str:
    pairs = "".join(f"R{i}_{j} n{i} n{j} {1 + i + j}\n" for i in range(n) for j in range(i + 1, n))
    return "dense\nI1 0 n0 1m\n" + pairs + "".join(f"Rg{i} n{i} 0 1k\n" for i in range(n))


def size_case(rng: random.Random, index: int) -> Case:
    """Growth in every direction the tool has a limit for; invalid where a limit is surely passed."""
    pick = rng.randrange(10)
    invalid = ""
    if pick == 9:  # .param steps that each wrap the last: a deep tree from short lines
        n = rng.choice([10, 50, 70, 600])
        text = "wrapped\n.param a0=x\n" + "".join(f".param a{k + 1}={{(a{k}+1)*y}}\n" for k in range(n)) + \
            f"I1 0 n 1m\nR1 n 0 {{a{n}}}\n"
        argv = ["derive", "deck.cir", "--rout", "n"] + rng.choice([[], ["--json"], ["--latex"]])
        invalid = "a tree deeper than MAX_DEPTH" if n >= 70 else ""
    elif pick == 0:
        n = rng.choice([10, 100, 300, 399, 450, 2600])
        text, argv = _ladder(n), rng.choice([["derive", "deck.cir", "--rout", "n0"], ["bias", "deck.cir"]])
        invalid = "more than MAX_ELEMENTS" if 2 * n > 5000 else ""
    elif pick == 1:
        n = rng.randint(1, 8)
        text = _cascade(n)
        argv = ["derive", "deck.cir", "--rout", "Vout", "--level", rng.choice(["default", "full"])] + \
            rng.choice([[], ["--symbolic"]]) + rng.choice([[], ["--json"]])
    elif pick == 2:
        n = rng.choice([10, 200, 700, 2500])
        text = "parallel\nI1 0 a 1m\n" + "".join(f"Q{i} a a 0 QN\n" for i in range(n)) + "Vout a 0 1\n" \
            ".model QN npn (BF=100 VAF=50)\n"
        argv = rng.choice([["derive", "deck.cir", "--rout", "Vout"], ["bias", "deck.cir"]])
        invalid = "more than MAX_SYMBOLS" if n > 200 and argv[0] == "derive" else ""
    elif pick == 3:
        start = rng.choice(["2", "y", "1.5"])
        depth = rng.randint(3, 30)
        lines = [f".param a0={start}"] + [f".param a{k + 1}={{a{k}*a{k}}}" for k in range(depth)]
        text = "chain\n" + "\n".join(lines) + f"\nI1 0 x 1m\nR1 x 0 {{a{depth}}}\n"
        argv = ["derive", "deck.cir", "--rout", "x"]
        invalid = "a number or exponent past its limit" if depth >= 13 else ""
    elif pick == 4:
        n = rng.choice([10, 300, 900, 5000])
        text = "sum\nI1 0 x 1m\nR1 x 0 {" + "+".join(f"x{i}" for i in range(n)) + "}\n"
        argv = ["derive", "deck.cir", "--rout", "x"]
        invalid = "expression beyond MAX_NODES" if n > 1000 else ""
    elif pick == 5:
        n = rng.choice([5, 30, 61, 200])
        text = "nested\nI1 0 x 1m\nR1 x 0 {" + "(" * n + "1k" + ")" * n + "}\n"
        argv = ["derive", "deck.cir", "--rout", "x"]
        invalid = "nesting beyond MAX_NESTING" if n > 60 else ""
    elif pick == 6:
        n = rng.choice([5, 12, 15, 18])
        text, argv = _dense(n), ["derive", "deck.cir", "--rout", "n0"]
        invalid = "dense expansion beyond MAX_MINOR_STATES" if n >= 18 else ""
    elif pick == 7:
        n = rng.choice([5, 20])
        text, argv = _ladder(n, "1e300", "3e-300"), ["derive", "deck.cir", "--rout", "n0"]
        invalid = "numbers beyond MAX_RESULT_BITS" if n >= 20 else ""
    else:
        text = text_of(rng.choice(GOOD))
        points = rng.choice(["2", "1000", "10000", "10001", "200000", "1000000000", "99999999999999999999"])
        argv = ["sweep", "deck.cir", "--vary", "temp", "--from", "0", "--to", "50", "--points", points]
        invalid = "more than MAX_SWEEP_POINTS" if int(points) > 10_000 else ""
        if points in ("1000", "10000"):
            argv[5:7] = ["--to", "1"]
    return Case(index, "size", tuple(argv), {"deck.cir": text}, invalid=invalid)


PROCESS_EDITS = [
    (r"^tnom = 27", "tnom = -300", "tnom below absolute zero"), (r"^tnom = 27", "tnom = -273.15", "tnom at 0 K"),
    (r"^tnom = 27", "tnom = 1e308", "tnom beyond the range"), (r"^tnom = 27", "tnom = nan", "tnom nan"),
    (r"^tnom = 27", "tnom = inf", "tnom infinite"), (r"^tnom = 27", 'tnom = "27"', "tnom as text"),
    (r"^tnom = 27.*\n", "", "no tnom"), (r"^BF = 120", "BF = -1", "negative BF"),
    (r"^BF = 120", "BF = inf", "infinite BF"), (r"^BF = 120", "BF = nan", "nan BF"),
    (r"^BF = 120", 'BF = "x"', "BF as text"), (r'^type = "npn"', 'type = "bogus"', "unknown type"),
    (r"^VAF = .*\n", "", "missing VAF"), (r"^\[process\]", "[bogus]\nx = 1\n[process]", "unknown section"),
    (r"^tnom = 27", "tnom = = 3", "broken TOML"), (r"^\[process\]", "[process", "broken TOML header"),
    (r"^BF = 120", "BF = 120\nTNOM = -300", "device TNOM below absolute zero"),
    (r"^sheet = .*", "sheet = 0", "zero sheet resistance"),
    (r"^BF = 120", "BF = 50", ""), (r"^tnom = 27", "tnom = 85", ""), (r"^BF = 120", "BF = 120\nFOO = 1", ""),
]


def process_case(rng: random.Random, index: int) -> Case:
    """The demo process mutated, used by bias, sweep, deck or derive --at-bias."""
    text = PROCESS.read_text()
    pattern, new, why = rng.choice(PROCESS_EDITS)
    content: str | bytes = re.sub(pattern, new, text, count=1, flags=re.M)
    if rng.random() < 0.05:
        content, why = bytes(rng.randrange(256) for _ in range(200)), "binary garbage"
    netlist = rng.choice(GOOD + ["examples/dc_cascode_sink.cir", "examples/dc_bandgap_core.cir"])
    command = rng.choice([["bias", "deck.cir"], ["deck", "deck.cir"], ["derive", "deck.cir", "--at-bias"],
                          ["sweep", "deck.cir", "--vary", "temp", "--from", "0", "--to", "50", "--points", "5"]])
    return Case(index, "process", tuple(command + ["-p", "fab.toml"]), {"deck.cir": text_of(netlist),
                                                                       "fab.toml": content}, invalid=why)


LIBRARY_EDITS = [
    (r'^family = ".*"', 'family = "bogus"', "unknown family"), (r'^technology = ".*"', 'technology = "tube"',
                                                               "unknown technology"),
    (r'^id = ".*"', 'id = "x\\n"', "id with a line break"), (r'^netlist = """', 'netlist = """\nR1 a 0 {1/0}',
                                                             "netlist with a division by zero"),
    (r'^default = ".*"', 'default = "1e400"', "default beyond float"), (r'^title = ', 'title = = ', "broken TOML"),
    (r'^output = ".*"', 'output = "Vnope"', "role names no element"),
    (r'^default = ".*"', 'default = "abc"', "default that is no number"),
    (r'^description = """', 'description = """\u202e\u00e9 "quoted" \\\\ ', ""), (r"^title = .*", 'title = "t"', ""),
]


def library_case(rng: random.Random, index: int) -> Case:
    """A topology file mutated (its id made unique), read by show, derive, bias or list."""
    source = rng.choice(TOPOLOGIES)
    ident = f"fz-{index}"
    text = re.sub(r'^id = ".*"', f'id = "{ident}"', source.read_text(), count=1, flags=re.M)
    pattern, new, why = rng.choice(LIBRARY_EDITS)
    if not re.search(pattern, text, flags=re.M):
        pattern, new, why = LIBRARY_EDITS[0]
    text = re.sub(pattern, new, text, count=1, flags=re.M)
    files = {f"lib/{ident}.toml": text}
    command = rng.choice([["show", f"lib/{ident}.toml", "--no-derive"], ["show", ident, "--library", "lib"],
                          ["derive", f"lib/{ident}.toml", "--json"], ["list", "--library", "lib", "--json"],
                          ["bias", ident, "--library", "lib"]])
    if rng.random() < 0.1 and "--library" in command:  # a twin matters where the folder is searched
        files["lib/twin.toml"] = text
        why = "two files with one identifier"
    return Case(index, "library", tuple(command), files, invalid=why)


def _sweep_options(rng: random.Random, text: str) -> tuple[list[str], str]:
    sources = re.findall(r"^\s*([Vv]\S*)\s", text, flags=re.M)
    vary, why = rng.choice([(s, "") for s in sources] + [("temp", ""), ("NOPE", "unknown source"), ("", "empty")])
    low, high = ("-40", "125") if vary == "temp" else ("0", "5")
    points, bad_points = rng.choice([("11", ""), ("2", ""), ("0", "0 points"), ("1", "1 point"), ("-5", "negative"),
                                     ("10001", "past MAX_SWEEP_POINTS"), ("1e3", "not an integer"),
                                     ("99999999999999999999", "past MAX_SWEEP_POINTS"), ("abc", "not a number")])
    edges = [("nan", "nan"), ("inf", "infinite"), (low, "empty range")]
    if vary == "temp":
        edges += [(t, "temperature out of range") for t in BAD_TEMPERATURES]
    if rng.random() < 0.3:
        value, reason = rng.choice(edges)
        if rng.random() < 0.5:
            low = value
        else:
            high = value
        why = why or reason
    argv = ["--vary", vary, "--from", low, "--to", high, "--points", points]
    extra, bad_extra = rng.choice([([], ""), (["--out", "V(nope)"], "unknown output"), (["--out", "I("], "bad probe"),
                                   (["--fraction", "0"], "fraction 0"), (["--fraction", "nan"], "fraction nan"),
                                   (["--basis", "bogus"], "unknown basis"), (["--json"], "")])
    return argv + extra, why or bad_points or bad_extra


DERIVE_OPTIONS = [
    (["--approx", "--assume", "foo >> bar"], "assumption about unknown symbols"),
    (["--approx", "--assume", "gm*ro >>"], "unreadable assumption"), (["--assume", "x >> y"], "assumption unused"),
    (["--approx", "--tolerance", "0"], "tolerance 0"), (["--approx", "--tolerance", "1.5"], "tolerance 1.5"),
    (["--approx", "--tolerance", "nan"], "tolerance nan"), (["--approx", "--samples", "0"], "no samples"),
    (["--seed", "abc"], "seed not a number"), (["--match", "NOPE"], "unknown match group"),
    (["--parasitics", "bogus"], "unknown parasitic"), (["--level", "bogus"], "unknown level"),
    (["--format", "bogus"], "unknown format"), (["--json", "--latex"], "two output forms"),
    (["--rout", "nowhere"], "unknown port"), (["--gain", "a/b/c"], "bad pair"), (["--rout", ""], "empty port"),
    (["--approx", "--sensitivity", "--json"], ""), (["--format", "python"], ""), (["--match", "--beta"], ""),
    (["--level", "simple", "--latex"], ""), (["--format", "markdown"], ""),
    (["-p", "nowhere.toml"], "process file without --at-bias"), (["--set", "X=1"], "--set without --at-bias"),
]


SPECTRAL_OPTIONS = [
    (["--from", "0"], "frequency 0"), (["--from", "-1"], "negative frequency"), (["--from", "nan"], "frequency nan"),
    (["--to", "inf"], "infinite frequency"), (["--from", "1meg", "--to", "1k"], "range reversed"),
    (["--from", "1e-300", "--to", "1e300", "--points", "100000"], "past MAX_SWEEP_POINTS"),
    (["--points", "0"], "no points per decade"), (["--points", "99999999999999999999"], "past MAX_SWEEP_POINTS"),
    (["--from", "1e-300", "--to", "1e300", "--points", "2"], ""), (["--temp", "-300"], "temperature out of range"),
    (["--temp", "nan"], "temperature out of range"), (["--at", "0"], "frequency 0"), (["--at", "nan"], "frequency nan"),
    (["--approx", "--spread", "1.5"], "spread past 1"), (["--approx", "--tolerance", "0"], "tolerance 0"),
    (["--json"], ""), (["--format", "markdown"], ""), (["--level", "full"], ""), (["--approx"], ""),
    (["--points", "3", "--approx", "--level", "full"], ""), (["--set", "nope=1"], "--set of no free symbol"),
    (["--output", "NOPE"], "unknown output"), (["--rout", "nowhere"], "unknown port"),
]


def option_case(rng: random.Random, index: int) -> Case:
    """A netlist that works, under hostile options of every command."""
    text = text_of(rng.choice(GOOD))
    pick = rng.randrange(7)
    if pick == 6:  # the environment: a library folder and the memory limit
        name, value, why = rng.choice([
            ("SYMBIAS_LIBRARY", "nodir", "library folder missing"), ("SYMBIAS_LIBRARY", "deck.cir", "not a folder"),
            ("SYMBIAS_LIBRARY", "badlib", "broken library file"), ("SYMBIAS_MEMORY_LIMIT", "bogus", "no size"),
            ("SYMBIAS_MEMORY_LIMIT", "-5G", "no size"), ("SYMBIAS_MEMORY_LIMIT", "1M", "below the smallest limit"),
            ("SYMBIAS_MEMORY_LIMIT", "4G", ""), ("SYMBIAS_MEMORY_LIMIT", "off", "")])
        argv = rng.choice([["list"], ["show", "bjt-simple-mirror", "--no-derive"], ["derive", "deck.cir"]])
        if name == "SYMBIAS_LIBRARY" and argv[0] == "derive":
            argv = ["derive", "bjt-simple-mirror"]
        if value == "badlib" and argv[0] != "list":  # an identifier is read from its own file only
            why = ""
        files = {"deck.cir": text, "badlib/x.toml": "garbage = = 1\n"}
        return Case(index, "options", tuple(argv), files, invalid=why, env={name: value})
    if pick == 0:
        options, why = _sweep_options(rng, text)
        argv = ["sweep", "deck.cir", *options]
    elif pick == 1:
        temperature, why = rng.choice([(t, "temperature out of range") for t in BAD_TEMPERATURES]
                                      + [(t, "") for t in GOOD_TEMPERATURES])
        command = rng.choice([["bias"], ["deck"], ["derive", "--at-bias"], ["sweep", "--vary", "Vout", "--from", "0",
                                                                            "--to", "5", "--points", "5"]])
        argv = [command[0], "deck.cir", *command[1:], f"--temp={temperature}"]
    elif pick == 2:
        setting = rng.choice(["RE=abc", "=1", "RE", "RE=nan", "RE=inf", "RE=1e999", "nope=1", "X=1k"])
        argv, why = [rng.choice(["bias", "deck"]), "deck.cir", "--set", setting], "--set of no free symbol"
    elif pick == 3:
        guess, why = rng.choice([("n=abc", "guess not a number"), ("=1", "guess without a node"),
                                 ("out=1e999", "guess out of range")])
        argv = ["bias", "deck.cir", "--guess", guess]
    elif pick == 4:
        options, why = rng.choice(DERIVE_OPTIONS)
        argv = ["derive", "deck.cir", *options]
    else:
        options, why = rng.choice(SPECTRAL_OPTIONS)
        argv = [rng.choice(["frequency", "noise"]), "deck.cir", *options]
        if argv[0] == "frequency" and "--at" in options:
            why = why or "--at is an option of noise only"
        if argv[0] == "noise" and "--approx" in options and "--spread" in options:
            why = why or "--spread is an option of frequency only"
    return Case(index, "options", tuple(argv), {"deck.cir": text}, invalid=why)


def output_case(rng: random.Random, index: int) -> Case:
    """Where results are written: folders, names, read-only places, files that must survive, a full stdout."""
    good = text_of(rng.choice(GOOD))
    bad = _add(good, "R99 a99 0 {1/0}")
    pick = rng.randrange(5)
    old = {"old.cir": "an old deck that must survive\n", "old.png": b"\x89PNG an old plot", "sub/": b""}
    if pick == 0:
        target, why = rng.choice([("out.cir", ""), ("old.cir", ""), ("nodir/out.cir", "missing folder"),
                                  ("sub", "a folder"), ("/proc/self/deck.cir", "a read-only place")])
        netlist, why = (bad, "invalid netlist") if rng.random() < 0.3 else (good, why)
        return Case(index, "outputs", ("deck", "deck.cir", "-o", target), {"deck.cir": netlist, **old},
                    invalid=why, outputs=(target,))
    if pick == 1:
        target, why = rng.choice([("p.png", ""), ("old.png", ""), ("p.svg", ""), ("nodir/p.png", "missing folder"),
                                  ("p.txt", "wrong suffix"), ("sub", "a folder"), ("noext", "no suffix"),
                                  ("/proc/self/p.png", "a read-only place")])
        netlist, why = (bad, "invalid netlist") if rng.random() < 0.3 else (good, why)
        argv = ("sweep", "deck.cir", "--vary", "Vout", "--from", "0", "--to", "5", "--points", "5", "--plot", target)
        return Case(index, "outputs", argv, {"deck.cir": netlist, **old}, invalid=why, outputs=(target,))
    if pick == 4:  # a design note: a folder of files, written whole or not at all
        target, why = rng.choice([("notes", ""), ("sub", ""), ("nodir/notes", "missing parent folder"),
                                  ("old.cir", "a file, not a folder"), ("/proc/self/notes", "a read-only place")])
        netlist, why = (bad, "invalid netlist") if rng.random() < 0.3 else (good, why)
        argv = ("note", "deck.cir", "--samples", "0", "-o", target)
        return Case(index, "outputs", argv, {"deck.cir": netlist, **old}, invalid=why, outputs=(target,))
    if pick == 2:
        argv = rng.choice([["derive", "deck.cir"], ["derive", "deck.cir", "--json"], ["bias", "deck.cir"], ["deck", "deck.cir"],
                           ["list"], ["show", "bjt-simple-mirror", "--no-derive"]])
        return Case(index, "outputs", tuple(argv), {"deck.cir": good, **old}, invalid="stdout on a full device",
                    stdout="full")
    seed = text_of(rng.choice(SEEDS))
    return Case(index, "outputs", ("deck", "deck.cir", "-o", "old.cir"), {"deck.cir": seed, **old},
                outputs=("old.cir",))


def random_circuit(rng: random.Random) -> str:
    """A random connected, grounded bias circuit: supplies, sources, resistors, transistors (valid by design)."""
    count = rng.randint(2, 7)
    nodes = ["0"] + [f"n{k}" for k in range(1, count)]
    lines = ["random circuit", f"Vdd n1 0 {rng.choice(['5', '3.3', '1.8', '12'])}"]
    for k in range(2, count):  # a tree: each node hangs from an earlier one, so everything reaches ground
        lines.append(f"R{k} n{k} {rng.choice(nodes[:k])} {rng.choice(['1k', '10k', '4.7k', '100k', '{RX}'])}")
    letters = "QQMMRRCIG"
    for index in range(rng.randint(1, 6)):
        letter = rng.choice(letters)
        a, b, c = (rng.choice(nodes) for _ in range(3))
        if letter == "Q":
            lines.append(f"Q{index} {a} {b} {c} {rng.choice(['QN', 'QP'])}" + rng.choice(["", " 2", " m=3"]))
        elif letter == "M":
            lines.append(f"M{index} {a} {b} {c} {rng.choice([c, '0'])} {rng.choice(['NM', 'PM'])} W=10u L=1u")
        elif letter == "R" and a != b:
            lines.append(f"Rx{index} {a} {b} {rng.choice(['2k', '{RX}', '1meg'])}")
        elif letter == "C" and a != b:
            lines.append(f"C{index} {a} {b} 1p")
        elif letter == "I" and a != b:
            lines.append(f"I{index} {a} {b} {rng.choice(['10u', '100u', '1m'])}")
        elif letter == "G" and a != b:
            lines.append(f"G{index} {a} {b} {rng.choice([f'{a} {b}', f'{b} {a}'])} 1m")
    if rng.random() < 0.6:
        lines.append(f"Vout {rng.choice(nodes[1:])} 0 {rng.choice(['0', '1', '2.5'])}")
    lines += [".model QN npn (BF=100 VAF=50)", ".model QP pnp (BF=50 VAF=30)", ".model NM nmos (VTO=0.5 KP=200u "
              "LAMBDA=0.05)", ".model PM pmos (VTO=-0.5 KP=80u LAMBDA=0.05)"]
    return "\n".join(lines) + "\n"


def circuit_case(rng: random.Random, index: int) -> Case:
    """A random valid circuit under every command, options included (deep code paths, numbers at the edges)."""
    text = random_circuit(rng)
    symbols = ["--set", "RX=2.2k"] if "{RX}" in text else []
    pick = rng.randrange(6)
    if pick == 0:
        argv = ["bias", "deck.cir", *symbols] + rng.choice([[], ["--all"], ["--json"]])
    elif pick == 1:
        vary = rng.choice(["Vdd", "temp"] + (["Vout"] if "Vout" in text else []))
        low, high = ("-40", "125") if vary == "temp" else ("0", "5")
        argv = ["sweep", "deck.cir", "--vary", vary, "--from", low, "--to", high, "--points", "11", *symbols]
        argv += rng.choice([[], ["--json"], ["--out", "V(n1)"]])
    elif pick == 2:
        argv = ["deck", "deck.cir", *symbols]
    else:
        quantity = rng.choice([[], ["--rout", "n1"], ["--rout", rng.choice(["n2", "n3", "Vout"])],
                               ["--vgain", "n2/Vdd"], ["--gm", "Vout/Vdd"]])
        extra = rng.choice([[], ["--approx"], ["--sensitivity"], ["--at-bias", *symbols], ["--match", "--beta"],
                            ["--level", "full"], ["--capacitances"], ["--approx", "--sensitivity", "--at-bias",
                                                                      *symbols]])
        argv = ["derive", "deck.cir", *quantity, *extra] + rng.choice([[], ["--json"], ["--latex"],
                                                                       ["--format", "python"]])
    return Case(index, "circuits", tuple(argv), {"deck.cir": text})


SPEC_EDITS = [
    (r'^family = ".*"', 'family = "bogus"', "unknown family"), (r'^current = ".*?"', 'current = "5uV"', "wrong unit"),
    (r'^current = ".*?"', 'current = "abc"', "no number"), (r'^current = ".*?"', 'current = "-5uA"', "negative current"),
    (r"^temperature = .*", "temperature = [-300, 125]", "temperature below absolute zero"),
    (r"^temperature = .*", "temperature = [125, -40]", "empty temperature range"),
    (r"^temperature = .*", "temperature = [-40, nan]", "temperature nan"),
    (r"^min = .*", "min = 5", "supply min above max"), (r"^\[block\]", "[blok]", "unknown table"),
    (r"^sigma = .*", "sigma = = 3", "broken TOML"), (r"^area = .*", "area = -1", "negative weight"),
    (r"^outputs = .*", "outputs = 1.5", "outputs not a whole number"), (r"^ratio = .*", 'ratio = "1%"', ""),
    (r"^devices_max = .*", "devices_max = 8", ""), (r"^tc_max = .*", 'tc_max = "50ppm"', ""),
    (r"^rout_min = .*", 'rout_min = "1meg"', ""), (r"^outputs = .*", "outputs = 1", ""),
    (r"^random_error_max = .*", 'random_error_max = "5%"', ""), (r"^technology = .*", 'technology = "bjt"', ""),
    (r"^current = .*", 'current = "1e-15"', ""), (r"^current = .*", 'current = "1"', ""),
    (r"^\[weights\]", "[weights]\nbogus = 1", "unknown weight"), (r"^\[supply\]", "[supply]\nnominal = 9", ""),
    (r"^supply_current_max = .*", "", ""), (r"^\[limits\]", "", "limits outside their table"),
]


#: Candidates of the example spec's family (current mirrors, any technology), cheap enough to rank in a case.
SPEC_CANDIDATES = ("mos-simple-mirror", "bjt-simple-mirror", "mos-wide-swing-cascode-mirror", "bjt-wilson-mirror")

#: Options of ``rank`` with why they are invalid ("" when they may be valid).
RANK_OPTIONS = [
    ([], ""), (["--json"], ""), (["--samples", "0"], ""), (["--samples", "-1"], "negative sample count"),
    (["--samples", "abc"], "sample count not a number"), (["--samples", "99999999999"], "past the sample limit"),
    (["--seed", "abc"], "seed not a number"), (["--workers", "0"], "no workers"), (["--only", "NOPE"], "unknown id"),
    (["--only", "brokaw-bandgap"], "a reference for a mirror spec"), (["--library", "nodir"], "missing library"),
    (["--markdown", "nodir/r.md"], "missing folder"), (["--markdown", "r.txt"], "wrong suffix"),
    (["--plot", "p.txt"], "wrong suffix"), (["--plot", "sub"], "a folder"), (["--scheduler", "nohost:1"], "no cluster"),
]


def spec_case(rng: random.Random, index: int) -> Case:
    """The example spec file mutated, or hostile options, ranked by ``symbias rank`` on one or two candidates."""
    from .netlists import ROOT

    text = (ROOT / "examples" / "sensor_bias_spec.toml").read_text()
    pattern, new, why = rng.choice(SPEC_EDITS) if rng.random() < 0.7 else ("^$", "", "")
    content: str | bytes = re.sub(pattern, new, text, count=1, flags=re.M)
    if rng.random() < 0.05:
        content, why = bytes(rng.randrange(256) for _ in range(300)), "binary garbage"
    only = rng.sample(SPEC_CANDIDATES, rng.choice([1, 1, 2]))
    options, bad = rng.choice(RANK_OPTIONS) if rng.random() < 0.5 else ([], "")
    argv = ["rank", "spec.toml", "--samples", "50", *(a for name in only for a in ("--only", name)), *options]
    files = {"spec.toml": content, "sub/": b""}
    return Case(index, "spec", tuple(argv), files, invalid=why or bad)
