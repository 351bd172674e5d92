"""Every quantity on every deck, checked against an independent numeric solve.

For each netlist in ``examples/`` and ``tests/decks/core/``, under several
model options, every quantity the engine offers (output resistance at each
source and node, current gain, transconductance, voltage gain and
transimpedance between every applicable pair) is derived exactly with both
polynomial backends, evaluated by both routes of ``Formula.evaluate``, and
compared at random parameter points with :mod:`reference_solver`, a nodal
solve written from the documented conventions only, in 40-digit arithmetic.

Tolerances: the polynomial route must agree to a relative 1e-9.  The solve
route (a float64 LU of the nodal matrix) must agree to 1e-9 or, where the
network itself is ill-conditioned, to within 100x of what a plain float64
solve of the reference matrix attains at the same point (a high-gain cascode
loses up to ~1e-7 in any double-precision nodal solve); the report lists this.
An exactly zero result is held to 1e-9 in absolute SI units on the solve
route.  Where the engine refuses a quantity (singular network, port left floating)
the reference must find it singular too, and the other way round.
"""

from __future__ import annotations

import sys
import warnings
import zlib
from pathlib import Path

import numpy as np
import pytest
import sympy

from support.reference_solver import ReferenceSingular, random_values, reference_symbols, reference_value  # noqa: E402

from symbias.analyses import QUANTITIES, SmallSignalOptions  # noqa: E402
from symbias.circuit import GROUND, Element  # noqa: E402
from symbias.errors import SymbiasError  # noqa: E402
from symbias.netlist import read_netlist  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]
DECKS = sorted(ROOT.glob("examples/*.cir")) + sorted((ROOT / "tests" / "decks" / "core").glob("*.cir"))

OPTION_SETS = {
    "default": SmallSignalOptions(),
    "matched-beta": SmallSignalOptions(match=True, beta=True),
    "simple": SmallSignalOptions(ro=False, gmb=False),
    "reactive": SmallSignalOptions(capacitances=True, symbolic_passives=True),
    "extras-matched": SmallSignalOptions(extras=True, match=True),
}

#: Options whose results grow large: checked on a sample of the quantities to keep the run short.
RICH = ("reactive", "extras-matched")

#: The sympy backend is pure Python: beyond this size (judged on the flint result) it is skipped
#: (only the capacitance and extras options reach it; the flint run still covers those).
SYMPY_TERMS = 600
TOLERANCE = 1e-9
POINTS = 3


def load(deck: Path):
    """Read a deck; add a probe current source where it has none, so every quantity applies."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # single-connection warnings are tested elsewhere
        circuit = read_netlist(deck)
    if not circuit.elements_of("I"):
        node = [n for n in circuit.nodes if n != GROUND][-1]
        circuit = circuit.with_elements(Element("Iprobe", "I", (GROUND, node), sympy.Integer(0)))
    return circuit


def quantities(circuit) -> list[tuple[str, tuple[str, ...]]]:
    """Every quantity of every applicable kind: ports, source pairs, node/source pairs."""
    vs = [e.name for e in circuit.elements_of("V")]
    cs = [e.name for e in circuit.elements_of("I")]
    nodes = [n for n in circuit.nodes if n != GROUND]
    out = [("output_resistance", (v,)) for v in vs]
    out += [("output_resistance", (n,)) for n in nodes]
    if len(nodes) >= 2:
        out.append(("output_resistance", (f"{nodes[0]},{nodes[1]}",)))
        out.append(("voltage_gain", (f"{nodes[0]},{nodes[1]}", vs[0])))
    out += [("current_gain", (v, i)) for v in vs for i in cs]
    out += [("transconductance", (o, i)) for o in vs for i in vs]  # o == i: input admittance
    out += [("voltage_gain", (n, v)) for n in nodes for v in vs]
    out += [("transimpedance", (n, i)) for n in nodes for i in cs]
    return out


def sample(circuit, wanted: list[tuple[str, tuple[str, ...]]]) -> list[tuple[str, tuple[str, ...]]]:
    """The output resistance at every source plus the first two quantities of each other kind."""
    kept, seen = [], {}
    for name, args in wanted:
        seen[name] = seen.get(name, 0) + 1
        if seen[name] <= 2 or (name == "output_resistance" and circuit.has_element(args[0])):
            kept.append((name, args))
    return kept


def relative_error(got: np.ndarray, ref: np.ndarray) -> np.ndarray:
    got, ref = np.asarray(got, dtype=complex), np.asarray(ref, dtype=complex)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(ref == 0, np.where(got == 0, 0.0, np.inf), np.abs(got - ref) / np.abs(ref))


def term_set(formula):
    """Generator names and the numerator and denominator terms, in a backend-independent form."""
    ring = formula.ring
    return ring.names, tuple(frozenset(ring.terms(p)) for p in (formula.numerator, formula.denominator))


def check_quantity(circuit, name, args, options, values, backends) -> list[str]:
    """All checks of one quantity; returns the failures as text."""
    problems: list[str] = []
    function = QUANTITIES[name][0]
    try:
        ref = reference_value(circuit, name, args, values, options)
    except ReferenceSingular:
        ref = None
    formulas = {}
    for backend in backends:
        if backend == "sympy" and "flint" in formulas and sum(formulas["flint"].nterms) > SYMPY_TERMS:
            continue
        try:
            formulas[backend] = function(circuit, *args, options=options, backend=backend)
        except SymbiasError as err:
            if ref is not None:
                problems.append(f"{name}{args} [{backend}]: engine refused ({err}) but the reference solves it")
            continue
        if ref is None:
            problems.append(f"{name}{args} [{backend}]: reference is singular but the engine gave a result")
            formulas.pop(backend)
    if ref is None:
        return problems
    for backend, formula in formulas.items():
        poly = relative_error(formula.evaluate(values, route="polynomial"), ref)
        if np.max(poly) >= TOLERANCE:
            problems.append(f"{name}{args} [{backend}, polynomial]: relative error {np.max(poly):.2e}")
        solved = relative_error(formula.evaluate(values, route="solve"), ref)
        if np.all(ref == 0):
            # an exactly zero result (e.g. a node held by a controlled voltage source): the
            # float solve can only be zero up to rounding, so judge it in absolute SI units
            solved = np.abs(formula.evaluate(values, route="solve"))
        if np.max(solved) >= TOLERANCE:
            # only acceptable where double precision itself cannot do better on this network
            float64 = relative_error(reference_value(circuit, name, args, values, options, precision="float64"), ref)
            if np.any(solved >= np.maximum(TOLERANCE, 100 * float64)):
                problems.append(
                    f"{name}{args} [{backend}, solve]: relative error {np.max(solved):.2e} "
                    f"(a float64 solve of the reference matrix attains {np.max(float64):.2e})"
                )
    if len(formulas) == 2 and term_set(formulas["flint"]) != term_set(formulas["sympy"]):
        problems.append(f"{name}{args}: flint and sympy backends give different polynomials")
    return problems


@pytest.mark.parametrize("option_name", list(OPTION_SETS))
@pytest.mark.parametrize("deck", DECKS, ids=[d.name for d in DECKS])
def test_every_quantity_matches_the_reference_solve(deck: Path, option_name: str) -> None:
    options = OPTION_SETS[option_name]
    circuit = load(deck)
    rng = np.random.default_rng(zlib.crc32(f"{deck.name}/{option_name}".encode()))
    values = random_values(reference_symbols(circuit, options), rng, POINTS)
    problems: list[str] = []
    wanted = quantities(circuit)
    if option_name in RICH:
        wanted = sample(circuit, wanted)
    for name, args in wanted:
        problems += check_quantity(circuit, name, args, options, values, ("flint", "sympy"))
    assert not problems, "\n".join(problems)


def test_every_quantity_kind_is_exercised() -> None:
    """The enumeration covers all five quantities of the engine on every deck."""
    assert DECKS, "no decks found"
    for deck in DECKS:
        kinds = {name for name, _ in quantities(load(deck))}
        assert kinds == set(QUANTITIES), (deck.name, set(QUANTITIES) - kinds)


def test_reference_detects_a_sign_error() -> None:
    """The comparison has teeth: a current gain with its sign flipped is caught."""
    circuit = load(ROOT / "examples" / "simple_mirror.cir")
    options = OPTION_SETS["default"]
    values = random_values(reference_symbols(circuit, options), np.random.default_rng(1), POINTS)
    formula = QUANTITIES["current_gain"][0](circuit, "Vout", "Iref", options)
    ref = reference_value(circuit, "current_gain", ("Vout", "Iref"), values, options)
    assert np.max(relative_error(formula.evaluate(values), ref)) < TOLERANCE
    assert np.min(relative_error(-formula.evaluate(values), ref)) > 1.0
