"""BJT current mirrors of the library, checked against their published analysis.

Sources: Gray, Hurst, Lewis and Meyer, "Analysis and Design of Analog Integrated
Circuits", 5th ed. (Wiley, 2009), ch. 4 (current mirrors; equation numbers from
memory); the independent numeric solve of ``tests/support/reference_solver.py``; ngspice
(Debian package) for the large-signal ratios and for the output resistance at a
real operating point.
"""

from __future__ import annotations

import pytest
import sympy

from support.library_checks import (
    check_against_reference,
    check_output_resistance_in_spice,
    check_published,
    check_transfer_in_spice,
    circuit_of,
    engine_symbols,
    published_expr,
    evaluate,
    formula_cases,
    library,
    output_current,
    spice_op,
    with_models,
)
from symbias.analyses import current_gain
from symbias.devices.options import SmallSignalOptions

CASES = formula_cases(lambda t: t.technology == "bjt" and t.family == "current-mirror")


def test_the_family_is_complete():
    ids = {t.id for t in library().values() if t.technology == "bjt" and t.family == "current-mirror"}
    assert {"bjt-simple-mirror", "bjt-ratioed-mirror", "bjt-three-output-mirror", "bjt-degenerated-mirror",
            "bjt-beta-helper-mirror", "bjt-beta-helper-degenerated-mirror", "bjt-wilson-mirror",
            "bjt-improved-wilson-mirror", "bjt-cascode-mirror", "bjt-pnp-simple-mirror",
            "bjt-pnp-wilson-mirror"} <= ids


@pytest.mark.parametrize("identifier,index", CASES)
def test_library_form_matches_derivation(identifier, index):
    # each library formula names its source (Gray et al. 5th ed. ch. 4, or common practice)
    check_published(identifier, index, seed=index + 11)


@pytest.mark.parametrize("identifier,index", CASES)
def test_derivation_matches_independent_solve(identifier, index):
    check_against_reference(identifier, index, seed=index + 23)


#: The classic current-transfer forms, written out here beside their source, independent of the
#: library files: (identifier, published form, source).
CLASSIC_GAINS = [
    ("bjt-simple-mirror", "1/(1 + 2/beta)", "Gray et al. 5th ed. ch. 4, simple mirror (from memory)"),
    ("bjt-pnp-simple-mirror", "1/(1 + 2/beta)", "Gray et al. 5th ed. ch. 4, simple mirror, pnp form"),
    ("bjt-ratioed-mirror", "N/(1 + (1 + N)/beta)", "Gray et al. 5th ed. ch. 4, area ratio N (from memory)"),
    ("bjt-three-output-mirror", "1/(1 + (3 + 1)/beta)",
     "Gray et al. 5th ed. ch. 4, N outputs: 1/(1 + (N + 1)/beta) with N = 3 (from memory)"),
    ("bjt-beta-helper-mirror", "1/(1 + 2/(beta*(beta + 1)))",
     "Gray et al. 5th ed. ch. 4, beta helper (from memory)"),
    ("bjt-wilson-mirror", "1 - 2/(beta**2 + 2*beta + 2)", "Gray et al. 5th ed. ch. 4, Wilson mirror (from memory)"),
    ("bjt-improved-wilson-mirror", "1 - 2/(beta**2 + 2*beta + 2)",
     "Gray et al. 5th ed. ch. 4, Wilson mirror; the fourth device adds no base-current error (from memory)"),
    ("bjt-pnp-wilson-mirror", "1 - 2/(beta**2 + 2*beta + 2)", "Gray et al. 5th ed. ch. 4, Wilson mirror, pnp form"),
]


@pytest.mark.parametrize("identifier,published,source", CLASSIC_GAINS)
def test_classic_gain_from_the_small_signal_model(identifier, published, source):
    topology = library()[identifier]
    options = SmallSignalOptions(ro=False, match=True, beta=True)
    formula = current_gain(circuit_of(identifier), topology.roles["output"], topology.roles["input"], options)
    assert sympy.cancel(formula.expr - engine_symbols(published_expr(published), formula)) == 0, source


@pytest.mark.parametrize("identifier,published,source", CLASSIC_GAINS)
def test_classic_gain_from_the_dc_model_in_ngspice(identifier, published, source):
    # ngspice's Gummel-Poon model with only IS, BF (constant beta) and no Early voltage: the
    # published large-signal ratio holds exactly, so the tolerance is the simulator's.
    topology = library()[identifier]
    circuit = with_models(circuit_of(identifier), VAF=None)
    values = topology.defaults()
    output = topology.roles["output"]
    op = spice_op(circuit, values, [f"i({output.lower()})"])
    ratio = output_current(op, output) / values["IREF"]
    (model,) = {circuit.model_of(d).name.lower() for d in circuit.devices}
    point = {"beta": float(circuit.models[model].params["BF"]), **values}
    assert ratio == pytest.approx(float(evaluate(published_expr(published), point)), rel=1e-6), source


def test_simple_mirror_early_effect_error_in_ngspice():
    # Gray et al. 5th ed. ch. 4 (from memory): IOUT/IIN = (1 + (VCE2 - VCE1)/VA)/(1 + 2/beta); the
    # Gummel-Poon forward Early factor (1 - VBC/VAF) gives exactly this form.
    circuit = circuit_of("bjt-simple-mirror")
    values = library()["bjt-simple-mirror"].defaults()
    op = spice_op(circuit, values, ["i(vout)", "v(in)", "v(out)"])
    beta, va = 100.0, 50.0
    expected = (1 + (op["v(out)"] - op["v(in)"]) / va) / (1 + 2 / beta)
    assert output_current(op, "Vout") / values["IREF"] == pytest.approx(expected, rel=1e-6)


@pytest.mark.parametrize("identifier", ["bjt-wilson-mirror", "bjt-improved-wilson-mirror", "bjt-cascode-mirror",
                                        "bjt-degenerated-mirror", "bjt-pnp-wilson-mirror",
                                        "bjt-beta-helper-degenerated-mirror"])
def test_output_resistance_at_the_ngspice_operating_point(identifier):
    # ngspice's AC analysis (Gummel-Poon, Early effect on) against the engine's exact formula with
    # unmatched symbols evaluated at ngspice's own gm, gpi, go of every device
    check_output_resistance_in_spice(identifier)


@pytest.mark.parametrize("identifier", ["bjt-wilson-mirror", "bjt-cascode-mirror", "bjt-pnp-simple-mirror"])
def test_current_gain_at_the_ngspice_operating_point(identifier):
    check_transfer_in_spice(identifier)
