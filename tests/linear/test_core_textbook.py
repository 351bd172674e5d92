"""Published closed forms of bias circuits, reproduced exactly by the engine.

Each check names its source beside it.  "from memory" marks an equation or
chapter recalled without re-checking the book; "common practice" marks a fact
of the trade found in any circuit-theory text.  The netlists are invented
scenarios; only the topologies are the textbook ones.

Sources:

* [GHLM] Gray, Hurst, Lewis and Meyer, *Analysis and Design of Analog
  Integrated Circuits*, 5th ed., Wiley, 2009.
* [Razavi] B. Razavi, *Design of Analog CMOS Integrated Circuits*, McGraw-Hill.
* [JM] D. Johns and K. Martin, *Analog Integrated Circuit Design*, Wiley.
"""

from __future__ import annotations

import sympy

from symbias.analyses import (
    SmallSignalOptions,
    current_gain,
    output_resistance,
    transimpedance,
)
from symbias.netlist import parse_netlist

beta, gm, ro, rpi = sympy.symbols("beta gm ro rpi")
MATCHED = SmallSignalOptions(match=True, beta=True)
MATCHED_NO_RO = SmallSignalOptions(match=True, beta=True, ro=False)

SIMPLE_NPN = """Tern-2 bias cell: simple NPN mirror
Iref 0 in 10u
Q1 in in 0 QN
Q2 out in 0 QN
Vout out 0 1.5
.model QN npn (BF=100 VAF=40)
"""

SIMPLE_NMOS = """Tern-2 bias cell: simple NMOS mirror
Iref 0 in 10u
M1 in in 0 0 NM W=4u L=1u
M2 out in 0 0 NM W=4u L=1u
Vout out 0 1.5
.model NM nmos (VTO=0.5 KP=100u LAMBDA=0.1)
"""

NMOS_CASCODE = """Tern-2 output sink: NMOS cascode with fixed gate biases
VB1 g1 0 0.8
VB2 g2 0 1.5
M1 x g1 0 0 NM
M2 out g2 x 0 NM
Vout out 0 2
.model NM nmos (VTO=0.5 KP=100u LAMBDA=0.1 GAMMA=0.4)
"""

WILSON = """Tern-2 comparator tail: Wilson NPN mirror
Iref 0 in 10u
Q1 in x 0 QN
Q2 x x 0 QN
Q3 out in x QN
Vout out 0 2
.model QN npn (BF=100 VAF=40)
"""

BETA_HELPER = """Tern-2 bias cell: NPN mirror with a beta-helper transistor
VCC vcc 0 3
Iref 0 in 10u
Q3 vcc in b QN
Q1 in b 0 QN
Q2 out b 0 QN
Vout out 0 1.5
.model QN npn (BF=100 VAF=40)
"""

DEGENERATED_NPN = """Tern-2 trim source: NPN with emitter degeneration, base held by a source
VB b 0 0.8
Q1 out b e QN
RE e 0 RE
Vout out 0 2
.model QN npn (BF=100 VAF=40)
"""

DEGENERATED_NMOS = """Tern-2 trim source: NMOS with source degeneration and body effect
VB g 0 1
M1 out g src 0 NM
RS src 0 RS
Vout out 0 2
.model NM nmos (VTO=0.5 KP=100u LAMBDA=0.1 GAMMA=0.4)
"""


def multi_output_mirror(n: int) -> str:
    """An NPN mirror with one diode and ``n`` identical outputs."""
    lines = [f"Tern-2 bias fan-out: NPN mirror with {n} outputs", "Iref 0 in 10u", "Q0 in in 0 QN"]
    for k in range(1, n + 1):
        lines += [f"Q{k} out{k} in 0 QN", f"Vout{k} out{k} 0 1.5"]
    return "\n".join(lines + [".model QN npn (BF=100 VAF=40)", ""])


def same(a: sympy.Expr, b: sympy.Expr) -> bool:
    return sympy.simplify(a - b) == 0


# -- output resistance ---------------------------------------------------------------


def test_simple_npn_mirror_output_resistance_is_ro_of_the_output_device() -> None:
    # [GHLM] ch. 4, simple current mirror: Rout = ro2 (section/equation number from memory)
    formula = output_resistance(parse_netlist(SIMPLE_NPN), "Vout")
    assert formula.expr == sympy.Symbol("ro_Q2")


def test_simple_nmos_mirror_output_resistance_is_ro_of_the_output_device() -> None:
    # [Razavi] ch. 5, basic current mirror: Rout = ro2 (chapter from memory)
    formula = output_resistance(parse_netlist(SIMPLE_NMOS), "Vout")
    assert formula.expr == sympy.Symbol("ro_M2")


def test_mos_cascode_output_resistance() -> None:
    # [Razavi] ch. 3, cascode stage: Rout = ro1 + ro2 + (gm2 + gmb2) ro1 ro2 (from memory);
    # [JM] cascode current mirror, the same form (chapter 6; chapter and equation not checked: from memory)
    gm2, gmb2, ro1, ro2 = sympy.symbols("gm_M2 gmb_M2 ro_M1 ro_M2")
    for backend in ("flint", "sympy"):
        formula = output_resistance(parse_netlist(NMOS_CASCODE), "Vout", backend=backend)
        assert same(formula.expr, ro1 + ro2 + (gm2 + gmb2) * ro1 * ro2)


def test_wilson_mirror_output_resistance_tends_to_beta_ro_over_two() -> None:
    # [GHLM] ch. 4, Wilson current mirror: Rout -> ro (beta^2 + 2 beta + 2) / (2 (beta + 1)) as ro grows,
    # i.e. about beta ro / 2 (equation number from memory)
    formula = output_resistance(parse_netlist(WILSON), "Vout", MATCHED)
    limit = sympy.limit(formula.expr / ro, ro, sympy.oo)
    assert same(limit, (beta**2 + 2 * beta + 2) / (2 * (beta + 1)))


def test_emitter_degeneration_output_resistance() -> None:
    # [GHLM] ch. 3, common emitter with emitter degeneration: Rout = ro (1 + gm RE') + RE',
    # RE' = RE || rpi, about ro (1 + gm RE') (from memory)
    gm1, ro1, rpi1, re = sympy.symbols("gm_Q1 ro_Q1 rpi_Q1 RE")
    re_par = re * rpi1 / (re + rpi1)
    formula = output_resistance(parse_netlist(DEGENERATED_NPN), "Vout")
    assert same(formula.expr, ro1 * (1 + gm1 * re_par) + re_par)
    assert sympy.simplify(sympy.limit(formula.expr / (ro1 * (1 + gm1 * re_par)), ro1, sympy.oo)) == 1


def test_source_degeneration_output_resistance_with_body_effect() -> None:
    # [Razavi] ch. 3, CS stage with source degeneration: Rout = ro + RS + (gm + gmb) ro RS (from memory)
    gm1, gmb1, ro1, rs = sympy.symbols("gm_M1 gmb_M1 ro_M1 RS")
    formula = output_resistance(parse_netlist(DEGENERATED_NMOS), "Vout")
    assert same(formula.expr, ro1 + rs + (gm1 + gmb1) * ro1 * rs)


# -- current gain --------------------------------------------------------------------


def test_simple_npn_mirror_current_gain_with_finite_beta() -> None:
    # [GHLM] ch. 4, simple mirror with finite beta, Early effect neglected: 1 / (1 + 2/beta) (from memory)
    for backend in ("flint", "sympy"):
        formula = current_gain(parse_netlist(SIMPLE_NPN), "Vout", "Iref", MATCHED_NO_RO, backend=backend)
        assert same(formula.expr, 1 / (1 + 2 / beta))


def test_simple_nmos_mirror_current_gain_is_the_gm_ratio() -> None:
    # common practice: with no gate current the small-signal mirror gain is gm2/gm1 (ro neglected)
    formula = current_gain(parse_netlist(SIMPLE_NMOS), "Vout", "Iref", SmallSignalOptions(ro=False))
    assert same(formula.expr, sympy.Symbol("gm_M2") / sympy.Symbol("gm_M1"))


def test_multiple_output_mirror_current_gain() -> None:
    # [GHLM] ch. 4, mirror with N outputs sharing one reference diode: each output 1 / (1 + (N+1)/beta)
    # (from memory)
    for n in (1, 2, 3):
        circuit = parse_netlist(multi_output_mirror(n))
        for k in range(1, n + 1):
            formula = current_gain(circuit, f"Vout{k}", "Iref", MATCHED_NO_RO)
            assert same(formula.expr, 1 / (1 + (n + 1) / beta)), (n, k, formula.expr)


def test_beta_helper_mirror_current_gain() -> None:
    # [GHLM] ch. 4, current mirror with beta helper: 1 / (1 + 2 / (beta (beta + 1))) (from memory)
    formula = current_gain(parse_netlist(BETA_HELPER), "Vout", "Iref", MATCHED_NO_RO)
    assert same(formula.expr, 1 / (1 + 2 / (beta * (beta + 1))))


def test_wilson_mirror_current_gain() -> None:
    # [GHLM] ch. 4, Wilson mirror, Early effect neglected: 1 - 2 / (beta^2 + 2 beta + 2) (from memory)
    formula = current_gain(parse_netlist(WILSON), "Vout", "Iref", MATCHED_NO_RO)
    assert same(formula.expr, 1 - 2 / (beta**2 + 2 * beta + 2))


# -- reactive cases: s appears ---------------------------------------------------------


def test_parallel_rc_transimpedance() -> None:
    # common practice (any circuit-theory text): Z of R || C is R / (1 + s R C)
    s, r, c = sympy.symbols("s RF CF")
    circuit = parse_netlist("Tern-2 bias filter: R || C\nI1 0 a 1u\nRF a 0 RF\nCF a 0 CF\n")
    formula = transimpedance(circuit, "a", "I1")
    assert "s" in {x.name for x in formula.symbols}
    assert same(formula.expr, r / (1 + s * r * c))


def test_series_rl_input_impedance() -> None:
    # common practice: Z of R in series with L is R + s L
    s, r, ind = sympy.symbols("s RS LS")
    circuit = parse_netlist("Tern-2 supply choke: R + L\nI1 0 a 1u\nRS a b RS\nLS b 0 LS\n")
    assert same(output_resistance(circuit, "a").expr, r + s * ind)


def test_mirror_output_impedance_with_device_capacitances() -> None:
    # common practice: with ccs and cmu the mirror's output impedance falls with frequency;
    # at s = 0 it is ro of the output device again, as [GHLM] ch. 4 gives (from memory)
    s = sympy.Symbol("s")
    circuit = parse_netlist(SIMPLE_NPN)
    formula = output_resistance(circuit, "Vout", SmallSignalOptions(capacitances=True))
    assert "s" in {x.name for x in formula.symbols}
    assert same(formula.expr.subs(s, 0), sympy.Symbol("ro_Q2"))
    assert sympy.limit(formula.expr, s, sympy.oo) == 0  # the capacitances short the output at high frequency
    assert "s" not in {x.name for x in output_resistance(circuit, "Vout").symbols}
