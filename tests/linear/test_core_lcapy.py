"""The same networks solved symbolically by lcapy agree with the engine exactly.

lcapy (an independent linear-circuit library) has no transistor models, so
each deck is first expanded into its hybrid-pi network by the test's own
:mod:`reference_solver` (resistors, capacitors, controlled sources), written
as an lcapy netlist, solved by lcapy in the Laplace domain, and compared
with the engine's exact result by exact rational evaluation at random
rational points (``s`` included).

lcapy's source conventions differ from SPICE's for two kinds, as pinned by
``test_lcapy_source_conventions`` below: its independent current source and
its VCCS drive their current *into* the first node (SPICE: out of it,
through the source, into the second).  Their nodes are swapped on the way
out.  Its F, E, H and the branch current of a voltage source follow SPICE.
"""

from __future__ import annotations

import sys
import warnings
import zlib
from fractions import Fraction
from functools import lru_cache
from pathlib import Path

import numpy as np
import pytest
import sympy

from support.reference_solver import GROUND, output_sign, reference_branches  # noqa: E402

from symbias.analyses import QUANTITIES, SmallSignalOptions  # noqa: E402
from symbias.netlist import read_netlist  # noqa: E402

lcapy = pytest.importorskip("lcapy")  # a declared test dependency; slow to import, so only here

ROOT = Path(__file__).resolve().parents[2]
DECKS = sorted(ROOT.glob("examples/*.cir")) + sorted((ROOT / "tests" / "decks" / "core").glob("*.cir"))
OPTIONS = {
    "default": SmallSignalOptions(),
    "matched-beta": SmallSignalOptions(match=True, beta=True),
}
POINTS = 3


def load(deck: Path):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return read_netlist(deck)


def picks(circuit, option_name: str) -> list[tuple[str, tuple[str, ...]]]:
    """Quantities to compare: every kind once per deck, split over the two option sets.

    Distinct per-device symbols (``default``) make lcapy slow, so that set
    takes the output resistance and the gain; the matched set takes the rest.
    """
    vs = [e.name for e in circuit.elements_of("V")]
    cs = [e.name for e in circuit.elements_of("I")]
    out = next((v for v in vs if v.lower().startswith("vout")), vs[-1])
    supply = vs[0]
    node = next(e.nodes[0] for e in circuit.elements_of("V") if e.name == out)
    if option_name == "default":
        gain = ("current_gain", (out, cs[0])) if cs else ("transconductance", (out, supply))
        return [("output_resistance", (out,)), gain]
    chosen = [("transconductance", (out, supply))]
    if cs:
        chosen.append(("transimpedance", (circuit.nodes[1], cs[0])))
    chosen.append(("voltage_gain", (node if supply != out else circuit.nodes[1], supply)))
    return chosen


def _lcapy_netlist(branches, names, nodes) -> str:
    """lcapy netlist text of reference branches; symbols renamed to ``names``, nodes numbered."""

    def node(n: str) -> str:
        return "0" if n == GROUND else str(nodes.setdefault(n, len(nodes) + 1))

    def value(expr: sympy.Expr) -> str:
        return "{" + str(expr.xreplace(names)) + "}"

    lines = []
    for i, b in enumerate(branches):
        a, c = node(b.nodes[0]), node(b.nodes[1])
        if b.kind in ("R", "C", "L"):
            lines.append(f"{b.kind}{i} {a} {c} {value(b.value)}")
        elif b.kind == "G":  # lcapy's VCCS drives into its first node: swap
            lines.append(f"G{i} {c} {a} {node(b.nodes[2])} {node(b.nodes[3])} {value(b.value)}")
        elif b.kind == "E":
            lines.append(f"E{i} {a} {c} {node(b.nodes[2])} {node(b.nodes[3])} {value(b.value)}")
        elif b.kind in ("F", "H"):
            lines.append(f"{b.kind}{i} {a} {c} V_{b.control} {value(b.value)}")
        elif b.kind == "V":
            lines.append(f"V_{b.name} {a} {c} s {{drive_{b.name}}}")
        elif b.kind == "I":  # lcapy's current source drives into its first node: swap
            lines.append(f"I_{b.name} {c} {a} s {{drive_{b.name}}}")
    return "\n".join(lines)


@lru_cache(maxsize=None)
def lcapy_result(deck: Path, option_name: str, name: str, args: tuple[str, ...]) -> tuple[sympy.Expr, dict]:
    """The quantity solved by lcapy, and the map from its symbol names to the engine's."""
    circuit = load(deck)
    options = OPTIONS[option_name]
    removed = None
    if name == "output_resistance":
        removed = circuit.element(args[0])
        circuit = circuit.without(removed.name)
    branches = reference_branches(circuit, options)
    symbols = sorted({s for b in branches for s in b.value.free_symbols}, key=lambda s: s.name)
    rename = {s: sympy.Symbol(f"xq{i}") for i, s in enumerate(symbols)}
    nodes: dict[str, int] = {}
    text = _lcapy_netlist(branches, rename, nodes)
    drives = {b.name: 0 for b in branches if b.kind in ("V", "I")}
    if name == "output_resistance":
        a, b = removed.nodes
        text += f"\nItest {nodes.get(a, 0) if a != GROUND else 0} {nodes.get(b, 0) if b != GROUND else 0} s 1"
    else:
        drives[circuit.element(args[1]).name] = 1
    for source, level in drives.items():
        text = text.replace(f"{{drive_{source}}}", str(level))
    cct = lcapy.Circuit(text)

    def voltage(pair: tuple[str, str]) -> sympy.Expr:
        return sum((sign * cct[nodes[n]].V.s.sympy for n, sign in zip(pair, (1, -1)) if n != GROUND), sympy.S.Zero)

    if name == "output_resistance":
        result = voltage(removed.nodes)
    elif name in ("current_gain", "transconductance"):
        # lcapy's source current is SPICE's branch current; the output current's sign is docs/conventions.md's
        output = circuit.element(args[0])
        result = output_sign(circuit, output) * getattr(cct, f"V_{output.name}").I.s.sympy
    else:
        target = args[0].lower()
        pair = circuit.element(target).nodes if circuit.has_element(target) else (target, GROUND)
        result = voltage(pair)
    back = {f"xq{i}": s for i, s in enumerate(symbols)}
    return result, back


def rational_points(names, seed: int) -> list[dict[str, sympy.Rational]]:
    rng = np.random.default_rng(seed)
    return [
        {n: sympy.Rational(Fraction(float(rng.uniform(0.5, 5.0))).limit_denominator(1000)) for n in names}
        for _ in range(POINTS)
    ]


def exact(expr: sympy.Expr, point: dict[str, sympy.Rational]) -> sympy.Expr:
    value = expr.xreplace({s: point[s.name] for s in expr.free_symbols})
    return sympy.nsimplify(sympy.simplify(value)) if not value.is_Rational else value


CASES = [(deck, option, name, args) for deck in DECKS for option in OPTIONS for name, args in picks(load(deck), option)]


@pytest.mark.parametrize(
    "deck,option_name,name,args", CASES, ids=[f"{d.name}-{o}-{n}{'/'.join(a)}" for d, o, n, a in CASES]
)
def test_engine_agrees_with_lcapy(deck: Path, option_name: str, name: str, args: tuple[str, ...]) -> None:
    circuit = load(deck)
    formula = QUANTITIES[name][0](circuit, *args, options=OPTIONS[option_name])
    theirs, back = lcapy_result(deck, option_name, name, args)
    theirs = theirs.xreplace({s: sympy.Symbol(back[s.name].name if s.name in back else s.name) for s in theirs.free_symbols})
    ours = formula.expr
    names = sorted({s.name for s in ours.free_symbols | theirs.free_symbols})
    assert {s.name for s in theirs.free_symbols} <= set(names)
    for point in rational_points(names, seed=zlib.crc32(f"{deck.name}/{option_name}/{name}".encode())):
        assert exact(ours, point) == exact(theirs, point), (point, ours, theirs)


def plain(expr: sympy.Expr) -> sympy.Expr:
    """lcapy's symbols carry assumptions: replace them by plain symbols of the same name."""
    return expr.xreplace({v: sympy.Symbol(v.name) for v in expr.free_symbols})


def test_lcapy_source_conventions() -> None:
    """Pin the conventions the conversion relies on (see the module docstring)."""
    cct = lcapy.Circuit(
        "V1 1 0 s 1\nG1 2 0 1 0 g\nR2 2 0 RB\nI1 3 0 s 1\nR3 3 0 RC\n"
        "R4 1 4 RA\nV2 4 0 s 0\nF1 5 0 V2 k\nR5 5 0 RD\nE1 6 0 1 0 mu\nR6 6 0 RE"
    )
    g, rb, rc, ra, k, rd, mu = sympy.symbols("g RB RC RA k RD mu")
    assert sympy.simplify(plain(cct[2].V.s.sympy) - rb * g) == 0  # VCCS: into node 2 (SPICE: -RB*g)
    assert sympy.simplify(plain(cct[3].V.s.sympy) - rc) == 0  # I source: into node 3 (SPICE: -RC)
    assert sympy.simplify(plain(cct.V2.I.s.sympy) - 1 / ra) == 0  # V branch current: + through to -
    assert sympy.simplify(plain(cct[5].V.s.sympy) + rd * k / ra) == 0  # CCCS: out of node 5, as SPICE
    assert sympy.simplify(plain(cct[6].V.s.sympy) - mu) == 0  # VCVS: as SPICE
