"""Shared checks of the topology-library tests (``tests/test_library_*.py``).

Three kinds of outside evidence are used:

* the published formula stored with each topology (and, in the family test
  modules, the classic forms written out again beside their source), compared
  with the engine's exact derivation symbolically (exact forms) or in the
  stated limit (leading-order forms);
* ``tests/support/reference_solver.py``, an independent numeric nodal solve written for
  the tests, compared with both evaluation routes of every derived formula;
* ngspice (Debian package) on the library netlist with the default design
  values, for the large-signal relations (mirror ratios, Widlar equation,
  delta-VBE currents, bandgap output voltages), and its AC analysis at its own
  operating point for output resistances and supply transfers, against the
  engine's exact formula evaluated at ngspice's small-signal parameters.

Each topology's formulas are derived once per test session (``lru_cache``).
"""

from __future__ import annotations

from dataclasses import replace
from functools import lru_cache

import numpy as np
import pytest
import sympy

from symbias.expressions import as_expr

from support.reference_solver import random_values, reference_symbols, reference_value
from symbias.analyses import QUANTITIES
from symbias.library import load_library, shipped_dir

#: Points per random evaluation.
POINTS = 6
#: Relative agreement of the engine with the reference solve and with exact published forms.
EXACT_TOLERANCE = 1e-9
#: The same for the numeric routes: a nodal solve of a stack of gain stages (gm*ro ~ 1e2 to 1e4 per
#: level) is ill-conditioned, and the two numeric solves and the term-by-term evaluation part by
#: ~1e-8 at the largest output resistances of the library.
NUMERIC_TOLERANCE = 1e-7
#: Largest relative departure of a leading-order form from the exact result deep in its limit.
LIMIT_TOLERANCE = 1e-2
#: Boltzmann constant over the elementary charge, V/K (CODATA 2018 exact values).
K_OVER_Q = 1.380649e-23 / 1.602176634e-19
#: Thermal voltage at 27 degC, the simulator's default temperature.
VT_27 = K_OVER_Q * (27.0 + 273.15)


@lru_cache(maxsize=None)
def library():
    """The shipped library, read once per session."""
    return load_library([shipped_dir()])


@lru_cache(maxsize=None)
def circuit_of(identifier: str):
    """The parsed circuit of a topology, once per session."""
    return library()[identifier].circuit()


def formula_call(identifier: str, index: int):
    """``(function, args, options)`` that derive formula ``index`` of a topology."""
    topology = library()[identifier]
    formula = topology.formulas[index]
    function = QUANTITIES[formula.quantity][0]
    if formula.quantity == "output_resistance":
        args = (formula.output or topology.roles["output"],)
    else:
        _, output, source = topology.transfer(circuit_of(identifier))
        args = (formula.output or output, formula.input or source)
    return function, args, formula.small_signal_options()


@lru_cache(maxsize=None)
def derived(identifier: str, index: int):
    """The engine's exact result for formula ``index`` of a topology, once per session."""
    function, args, options = formula_call(identifier, index)
    return function(circuit_of(identifier), *args, options=options)


def formula_cases(select) -> list:
    """pytest params ``(identifier, index)`` of the small-signal formulas of the selected topologies."""
    cases = []
    for identifier, topology in library().items():
        if not select(topology):
            continue
        for index, formula in enumerate(topology.formulas):
            if formula.small_signal:
                cases.append(pytest.param(identifier, index, id=f"{identifier}-{formula.quantity}-{formula.form}"))
    return cases


def published_expr(text: str) -> sympy.Expr:
    """A published formula read by sympy's own parser, every identifier a plain symbol.

    Independent of symbias's expression reader, so a published form is checked against
    the derivation without passing through the engine's text side.
    """
    import re as _re

    from sympy.parsing.sympy_parser import parse_expr

    names = set(_re.findall(r"[A-Za-z_][A-Za-z0-9_]*", text)) - {"sqrt", "exp", "log"}
    return parse_expr(text.replace("^", "**"), local_dict={n: sympy.Symbol(n) for n in names})


def engine_symbols(expr: sympy.Expr, formula) -> sympy.Expr:
    """``expr`` with its symbols replaced by the engine's symbols of the same name."""
    by_name = {s.name: s for s in formula.expr.free_symbols}
    return expr.subs({s: by_name.get(s.name, s) for s in expr.free_symbols}, simultaneous=True)


def evaluate(expr: sympy.Expr, values) -> np.ndarray:
    """A small sympy expression at numeric values given by symbol name (arrays broadcast)."""
    symbols = sorted(expr.free_symbols, key=lambda s: s.name)
    function = sympy.lambdify(symbols, expr, modules="numpy")
    return np.asarray(function(*[np.asarray(values[s.name], dtype=float) for s in symbols]), dtype=float)


def check_against_reference(identifier: str, index: int, seed: int) -> None:
    """Both evaluation routes of the derived formula agree with the independent reference solve."""
    function, args, options = formula_call(identifier, index)
    formula = derived(identifier, index)
    names = sorted({s.name for s in formula.symbols} | set(reference_symbols(circuit_of(identifier), options)))
    values = random_values(names, np.random.default_rng(seed), POINTS)
    reference = reference_value(circuit_of(identifier), formula.quantity, args, values, options)
    assert np.allclose(reference.imag, 0.0, atol=1e-12 * np.abs(reference).max())
    for route in ("polynomial", "solve"):
        ours = np.asarray(formula.evaluate(values, route=route), dtype=float)
        assert np.allclose(ours, reference.real, rtol=NUMERIC_TOLERANCE, atol=0.0), route


def check_published(identifier: str, index: int, seed: int) -> None:
    """The library's published form agrees with the derivation: exactly, or in its stated limit."""
    expected = library()[identifier].formulas[index]
    formula = derived(identifier, index)
    published = engine_symbols(published_expr(expected.expr), formula)
    names = {s.name for s in formula.symbols}
    stray = {s.name for s in published.free_symbols} - names
    assert not stray, f"published form uses symbols the derivation does not have: {stray}"
    rng = np.random.default_rng(seed)
    if expected.form == "exact":
        assert sympy.cancel(formula.expr - published) == 0
        values = random_values(sorted(names), rng, POINTS)
        ours = np.asarray(formula.evaluate(values), dtype=float)
        theirs = evaluate(published, values) * np.ones_like(ours)
        assert np.allclose(ours, theirs, rtol=EXACT_TOLERANCE, atol=0.0)
        return
    missing = set(expected.large) - names
    assert not missing, f"'large' names symbols the derivation does not have: {missing}"
    offset = _offset(expected)

    def departure(scale: float) -> np.ndarray:
        values = random_values(sorted(names), np.random.default_rng(seed), POINTS)
        for k, name in enumerate(expected.large):
            values[name] = values[name] * scale ** (len(expected.large) - k)
        ours = np.asarray(formula.evaluate(values), dtype=float)
        theirs = evaluate(published, values) * np.ones_like(ours)
        return np.abs((ours - offset) / (theirs - offset) - 1.0)

    near, deep = departure(1e2), departure(1e4)
    assert deep.max() < LIMIT_TOLERANCE, f"ratio to the exact result departs from 1 by {deep.max():.3g}"
    # a true limit: the departure keeps shrinking as the large symbols grow (until it is negligible)
    assert np.all(deep <= np.maximum(near / 10.0, 1e-6))


def _offset(expected) -> float:
    if expected.relative_to is None:
        return 0.0
    return float(published_expr(expected.relative_to))


# -- ngspice ------------------------------------------------------------------------------
def with_models(circuit, **changes):
    """A copy of ``circuit`` with model parameters changed (None removes one).

    The keyword ``types`` (a tuple of model types) limits the change to those models.
    """
    types = changes.pop("types", None)
    models = {}
    for key, model in circuit.models.items():
        if types is None or model.type in types:
            params = dict(model.params)
            for name, value in changes.items():
                if value is None:
                    params.pop(name, None)
                else:
                    params[name] = as_expr(value)
            model = replace(model, params=params)
        models[key] = model
    return replace(circuit, models=models)


def spice_op(circuit, values, vectors, guess=None) -> dict[str, float]:
    """The named ngspice vectors at the operating point of ``circuit`` with symbol ``values``."""
    reference = _reference_module()
    table = reference.run_reference(_deck(circuit, values, guess), "op", list(vectors))
    assert table.shape == (1, 1 + len(vectors))
    return dict(zip(vectors, table[0, 1:]))


def output_current(op: dict[str, float], source: str) -> float:
    """Current out of a V source's + terminal into the circuit (minus the SPICE branch current)."""
    return -op[f"i({source.lower()})"]


def _reference_module():
    from symbias.simulator import ngspice

    if ngspice.simulator() is None:
        pytest.skip("ngspice is not on PATH")
    return ngspice


def _deck(circuit, values, guess):
    from symbias.simulator.deck import TIGHT_OPTIONS, reference_deck

    _reference_module()
    # gmin well below every conductance of interest: ngspice puts it across each junction, which the
    # hybrid-pi model omits (at 1e-12 S it alone shunts a 1e10 ohm output by 1 %)
    options = TIGHT_OPTIONS.replace("gmin=1e-12", "gmin=1e-18")
    return reference_deck(circuit, values=values, control="{control}", guess=guess, options=options)


def spice_ac(circuit, values, source: str, vectors, guess=None) -> dict[str, float]:
    """Real parts of ngspice vectors at 1 Hz with a unit AC drive on ``source`` (small signal)."""
    reference = _reference_module()
    lines = _deck(circuit, values, guess).splitlines()
    key = source.lower() + " "
    index = next(i for i, line in enumerate(lines) if line.lower().startswith(key))
    lines[index] += " AC 1"
    names = [f"re{i}" for i in range(len(vectors))]
    lets = "\n".join(f"let {name} = real({vector})" for name, vector in zip(names, vectors))
    table = reference.run_reference("\n".join(lines) + "\n", f"ac lin 1 1 1\n{lets}", names)
    assert table.shape == (1, 1 + len(vectors))
    return dict(zip(vectors, table[0, 1:]))


def device_vectors(circuit) -> list[str]:
    """ngspice vectors of the small-signal parameters of every device."""
    out = []
    for device in circuit.devices:
        name = device.name.lower()
        keys = ("gm", "gpi", "go") if device.kind == "Q" else ("gm", "gmbs", "gds")
        out += [f"@{name}[{key}]" for key in keys]
    return out


def small_signal_values(circuit, op: dict[str, float]) -> dict[str, float]:
    """Engine symbol values (unmatched names) from ngspice's linearisation at the operating point."""
    values = {}
    for device in circuit.devices:
        name = device.name.lower()
        values[f"gm_{device.name}"] = op[f"@{name}[gm]"]
        if device.kind == "Q":
            values[f"rpi_{device.name}"] = 1.0 / op[f"@{name}[gpi]"]
            values[f"ro_{device.name}"] = 1.0 / op[f"@{name}[go]"]
        else:
            values[f"gmb_{device.name}"] = op[f"@{name}[gmbs]"]
            values[f"ro_{device.name}"] = 1.0 / op[f"@{name}[gds]"]
    return values


def engine_at_spice_op(identifier: str, formula, guess=None) -> float:
    """A derived formula evaluated at ngspice's small-signal parameters and the design values."""
    circuit = circuit_of(identifier)
    values = library()[identifier].defaults()
    op = spice_op(circuit, values, device_vectors(circuit), guess=guess)
    numbers = {**small_signal_values(circuit, op), **values}
    return float(formula.evaluate({s.name: numbers[s.name] for s in formula.symbols}))


def check_output_resistance_in_spice(identifier: str, guess=None, rel: float = 1e-4) -> None:
    """Exact Rout (unmatched symbols) at ngspice's operating point against ngspice's AC analysis."""
    from symbias.analyses import output_resistance
    from symbias.devices.options import SmallSignalOptions

    topology = library()[identifier]
    circuit = circuit_of(identifier)
    output = topology.roles["output"]
    formula = output_resistance(circuit, output, SmallSignalOptions())
    vector = f"i({output.lower()})" if circuit.has_element(output) else f"v({output})"
    if circuit.has_element(output):
        ac = spice_ac(circuit, topology.defaults(), output, [vector], guess)
        expected = abs(1.0 / ac[vector])
    else:  # pragma: no cover - every library output with an Rout check is an element
        raise AssertionError("node outputs are checked through their supply transfer")
    assert engine_at_spice_op(identifier, formula, guess) == pytest.approx(expected, rel=rel)


def check_transfer_in_spice(identifier: str, guess=None, rel: float = 1e-4) -> float:
    """The main transfer (see Topology.transfer) at ngspice's operating point against its AC analysis."""
    from symbias.devices.options import SmallSignalOptions

    topology = library()[identifier]
    circuit = circuit_of(identifier)
    quantity, output, source = topology.transfer(circuit)
    formula = QUANTITIES[quantity][0](circuit, output, source, options=SmallSignalOptions())
    current = circuit.has_element(output)
    vector = f"i({output.lower()})" if current else f"v({output})"
    ac = spice_ac(circuit, topology.defaults(), source, [vector], guess)
    expected = -ac[vector] if current else ac[vector]
    ours = engine_at_spice_op(identifier, formula, guess)
    assert ours == pytest.approx(expected, rel=rel)
    return ours
