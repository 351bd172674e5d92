"""Voltage references of the library, checked against their published analysis.

Sources: R. J. Widlar, IEEE JSSC vol. SC-6, 1971 (bandgap: VREF = VBE3 + (R2/R3)*VT*ln(I1/I2));
A. P. Brokaw, IEEE JSSC vol. SC-9, 1974 (VOUT = VBE + 2*(R1/R2)*VT*ln(N)); Razavi, "Design
of Analog CMOS Integrated Circuits", 2nd ed. (McGraw-Hill, 2017), bandgap references
(op-amp core and substrate-PNP form: VREF = VBE + (R2/R3)*VT*ln(n)); all recalled from
memory, equation numbers not checked.  Numbers: ngspice (Debian package) on the library
netlists; the small-signal results (output resistance, supply-to-output transfer) against
the independent solve of ``tests/support/reference_solver.py`` and against ngspice at its own
operating point.

The published output-voltage relations neglect base currents and assume a large amplifier
gain, so the ngspice runs use BF = 1e4 (npn), no Early voltage, A = 1e7 and, for the CMOS
cell, LAMBDA = 0 (equal PMOS currents); the tolerance then covers what remains.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from support.library_checks import (
    VT_27,
    check_against_reference,
    check_transfer_in_spice,
    check_published,
    circuit_of,
    formula_cases,
    library,
    spice_op,
    with_models,
)
from support.reference_solver import random_values, reference_symbols, reference_value
from symbias.analyses import output_resistance, voltage_gain

REFERENCES = sorted(t.id for t in library().values() if t.family == "reference")
CASES = formula_cases(lambda t: t.family == "reference")

#: Node guesses that select the working (non-zero) state, as a start-up circuit would.
GUESSES = {
    "widlar-bandgap": {"vref": 1.2, "a": 0.65, "c2": 0.65},
    "brokaw-bandgap": {"vref": 1.2, "e": 0.5, "x": 1.2},
    "opamp-bandgap": {"vref": 1.167, "a": 0.678, "b": 0.678, "c": 0.624, "x": 1.216},
    "cmos-bandgap": {"vref": 1.2, "x": 0.65, "y": 0.65, "z": 0.6, "w": 0.65, "g": 2.0},
}


def test_the_family_is_complete():
    assert {"widlar-bandgap", "brokaw-bandgap", "opamp-bandgap", "cmos-bandgap"} <= set(REFERENCES)


@pytest.mark.parametrize("identifier,index", CASES)
def test_library_form_matches_derivation(identifier, index):
    check_published(identifier, index, seed=index + 41)


@pytest.mark.parametrize("identifier,index", CASES)
def test_derivation_matches_independent_solve(identifier, index):
    check_against_reference(identifier, index, seed=index + 43)


@pytest.mark.parametrize("identifier", REFERENCES)
def test_reference_outputs_derive_and_match_independent_solve(identifier):
    # what the engine derives for a reference: Rout at the output node and, where there is a
    # supply, the supply-to-output transfer (line sensitivity in small signal)
    topology = library()[identifier]
    circuit = circuit_of(identifier)
    options = topology.small_signal_options()
    wanted = [("output_resistance", (topology.roles["output"],))]
    if topology.roles.get("supply"):
        wanted.append(("voltage_gain", (topology.roles["output"], topology.roles["supply"][0])))
    rng = np.random.default_rng(7)
    for quantity, args in wanted:
        function = output_resistance if quantity == "output_resistance" else voltage_gain
        formula = function(circuit, *args, options=options)
        names = sorted({s.name for s in formula.symbols} | set(reference_symbols(circuit, options)))
        values = random_values(names, rng, 5)
        reference = reference_value(circuit, quantity, args, values, options)
        assert np.allclose(np.asarray(formula.evaluate(values), dtype=float), reference.real, rtol=1e-9)


def _ideal(identifier: str):
    circuit = with_models(circuit_of(identifier), BF=1e4, VAF=None, types=("npn",))
    return with_models(circuit, LAMBDA=None, types=("pmos", "nmos"))


#: identifier -> (vectors to read, published VREF from those vectors and the design values)
PUBLISHED_VREF = {
    # Widlar 1971: VREF = VBE3 + (R2/R3)*VT*ln(I1/I2)
    "widlar-bandgap": (["v(vref)", "v(c2)", "@q1[ic]", "@q2[ic]"],
                       lambda op, v: op["v(c2)"] + v["R2"] / v["R3"] * VT_27 * math.log(op["@q1[ic]"] / op["@q2[ic]"])),
    # Brokaw 1974: VOUT = VBE2 + 2*(R1/R2)*VT*ln(N)
    "brokaw-bandgap": (["v(vref)", "v(e)"],
                       lambda op, v: (op["v(vref)"] - op["v(e)"]) + 2 * v["R1"] / v["R2"] * VT_27 * math.log(v["N"])),
    # Razavi 2nd ed., bandgap references: VREF = VBE1 + (R2/R3)*VT*ln(N)
    "opamp-bandgap": (["v(vref)", "v(a)"],
                      lambda op, v: op["v(a)"] + v["R2"] / v["R3"] * VT_27 * math.log(v["N"])),
    # Razavi 2nd ed., CMOS bandgap with substrate pnps: VREF = VEB3 + (R2/R3)*VT*ln(N)
    "cmos-bandgap": (["v(vref)", "v(w)"],
                     lambda op, v: op["v(w)"] + v["R2"] / v["R3"] * VT_27 * math.log(v["N"])),
}


@pytest.mark.parametrize("identifier", sorted(PUBLISHED_VREF))
def test_published_output_voltage_in_ngspice(identifier):
    vectors, published = PUBLISHED_VREF[identifier]
    values = {**library()[identifier].defaults()}
    if "A" in values:
        values["A"] = 1e7
    op = spice_op(_ideal(identifier), values, vectors, guess=GUESSES[identifier])
    assert 0.9 < op["v(vref)"] < 1.6  # the working state, near the bandgap voltage
    assert op["v(vref)"] == pytest.approx(published(op, values), rel=1e-3)


def test_library_dc_forms_are_the_checked_ones():
    # the dc_output strings stored in the files are the relations checked above
    forms = {t: [f.expr for f in library()[t].formulas if f.quantity == "dc_output"] for t in PUBLISHED_VREF}
    assert forms == {
        "widlar-bandgap": ["VBE3 + R2/R3*VT*log(I1/I2)"],
        "brokaw-bandgap": ["VBE2 + 2*R1/R2*VT*log(N)"],
        "opamp-bandgap": ["VBE1 + R2/R3*VT*log(N)"],
        "cmos-bandgap": ["VEB3 + R2/R3*VT*log(N)"],
    }


@pytest.mark.parametrize("identifier", ["widlar-bandgap", "brokaw-bandgap", "cmos-bandgap"])
def test_line_sensitivity_at_the_ngspice_operating_point(identifier):
    # the engine's exact supply-to-output transfer at ngspice's own small-signal parameters, against
    # ngspice's AC analysis from the supply (library models, Early effect included)
    quantity, output, _ = library()[identifier].transfer(circuit_of(identifier))
    assert (quantity, output) == ("voltage_gain", "vref")
    assert abs(check_transfer_in_spice(identifier, guess=GUESSES[identifier])) > 0
