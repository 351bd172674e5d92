"""BJT current sources of the library, checked against their published analysis.

Sources: R. J. Widlar, IEEE Trans. Circuit Theory, 1965 (the Widlar source; venue from
memory); Gray, Hurst, Lewis and Meyer, "Analysis and Design of Analog Integrated
Circuits", 5th ed. (Wiley, 2009), ch. 3 and 4 (cascode output resistance, Widlar and
peaking sources, VBE- and delta-VBE-referenced self-biasing; equation numbers from
memory); the independent numeric solve of ``tests/support/reference_solver.py``; ngspice.

The large-signal relations are published for infinite beta and no Early effect, so the
ngspice checks run the library netlist with BF = 1e4 and no VAF: the tolerance (1e-3)
then covers the base currents the relations neglect, nothing else.
"""

from __future__ import annotations

import math

import pytest

from support.library_checks import (
    VT_27,
    check_against_reference,
    check_output_resistance_in_spice,
    check_published,
    check_transfer_in_spice,
    circuit_of,
    formula_cases,
    library,
    output_current,
    spice_op,
    with_models,
)
from symbias.analyses import output_resistance
from symbias.devices.options import SmallSignalOptions

CASES = formula_cases(lambda t: t.technology == "bjt" and t.family == "current-source")

#: Base currents and Early effect removed, as the published large-signal relations assume.
IDEAL = dict(BF=1e4, VAF=None)


def test_the_family_is_complete():
    ids = {t.id for t in library().values() if t.technology == "bjt" and t.family == "current-source"}
    assert {"bjt-cascode-source", "bjt-widlar-source", "bjt-peaking-source", "bjt-vbe-referenced-source",
            "bjt-ptat-source"} <= ids


@pytest.mark.parametrize("identifier,index", CASES)
def test_library_form_matches_derivation(identifier, index):
    check_published(identifier, index, seed=index + 31)


@pytest.mark.parametrize("identifier,index", CASES)
def test_derivation_matches_independent_solve(identifier, index):
    check_against_reference(identifier, index, seed=index + 37)


def _solve_widlar(iref: float, re: float) -> float:
    """IOUT from Widlar's equation VT*ln(IREF/IOUT) = IOUT*RE, by bisection on a monotone function."""
    low, high = 1e-15, iref
    for _ in range(200):
        mid = math.sqrt(low * high)
        if VT_27 * math.log(iref / mid) - mid * re > 0:
            low = mid
        else:
            high = mid
    return math.sqrt(low * high)


@pytest.mark.parametrize("iref", [1e-3, 1e-4])
def test_widlar_equation_in_ngspice(iref):
    # Widlar 1965; Gray et al. 5th ed. ch. 4: VT*ln(IREF/IOUT) = IOUT*RE (base currents neglected)
    circuit = with_models(circuit_of("bjt-widlar-source"), **IDEAL)
    values = {**library()["bjt-widlar-source"].defaults(), "IREF": iref}
    op = spice_op(circuit, values, ["i(vout)"])
    assert output_current(op, "Vout") == pytest.approx(_solve_widlar(iref, values["RE"]), rel=1e-3)


@pytest.mark.parametrize("iref", [50e-6, 100e-6, 200e-6])
def test_peaking_source_relation_in_ngspice(iref):
    # Gray et al. 5th ed. ch. 4 (from memory): IOUT = IIN*exp(-IIN*R/VT), peaking at IIN*R = VT
    circuit = with_models(circuit_of("bjt-peaking-source"), **IDEAL)
    values = {**library()["bjt-peaking-source"].defaults(), "IREF": iref}
    op = spice_op(circuit, values, ["i(vout)"])
    expected = iref * math.exp(-iref * values["R"] / VT_27)
    assert output_current(op, "Vout") == pytest.approx(expected, rel=1e-3)


def test_vbe_referenced_source_in_ngspice():
    # Gray et al. 5th ed. ch. 4 (from memory): IOUT = VBE1/R; the loop's non-zero state is picked
    # with a nodeset, as a start-up circuit would
    circuit = with_models(circuit_of("bjt-vbe-referenced-source"), **IDEAL)
    values = library()["bjt-vbe-referenced-source"].defaults()
    op = spice_op(circuit, values, ["i(vout)", "v(b)"], guess=SELF_BIASED["bjt-vbe-referenced-source"])
    assert op["v(b)"] > 0.4  # the non-zero state
    assert output_current(op, "Vout") == pytest.approx(op["v(b)"] / values["R"], rel=1e-3)


def test_ptat_source_in_ngspice():
    # Gray et al. 5th ed. ch. 4 (from memory): delta-VBE self-biasing gives IOUT = VT*ln(N)/R
    circuit = with_models(circuit_of("bjt-ptat-source"), **IDEAL)
    values = library()["bjt-ptat-source"].defaults()
    op = spice_op(circuit, values, ["i(vout)", "v(a)"], guess=SELF_BIASED["bjt-ptat-source"])
    assert op["v(a)"] > 0.4  # the non-zero state
    expected = VT_27 * math.log(values["N"]) / values["R"]
    assert output_current(op, "Vout") == pytest.approx(expected, rel=1e-3)


def test_cascode_source_output_resistance_limit():
    # Gray et al. 5th ed. ch. 3 (from memory): Rout = ro2 + (ro1 || rpi2)*(1 + gm2*ro2) with ideal base
    # bias, which tends to beta*ro for gm*ro >> beta; unmatched symbols here
    formula = output_resistance(circuit_of("bjt-cascode-source"), "Vout", SmallSignalOptions())
    values = {"gm_Q2": 4e-3, "rpi_Q2": 25e3, "ro_Q1": 5e5, "ro_Q2": 5e5, "gm_Q1": 4e-3, "rpi_Q1": 25e3}
    r1 = values["ro_Q1"] * values["rpi_Q2"] / (values["ro_Q1"] + values["rpi_Q2"])
    expected = values["ro_Q2"] + r1 * (1 + values["gm_Q2"] * values["ro_Q2"])
    ours = float(formula.evaluate({s.name: values[s.name] for s in formula.symbols}))
    assert ours == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("identifier", ["bjt-widlar-source", "bjt-peaking-source", "bjt-cascode-source"])
def test_output_resistance_at_the_ngspice_operating_point(identifier):
    # ngspice's AC analysis against the engine's exact formula at ngspice's own gm, gpi, go
    check_output_resistance_in_spice(identifier)


#: Node guesses that select the working state of the self-biased loops, as a start-up circuit would.
SELF_BIASED = {
    "bjt-ptat-source": {"a": 0.6, "e2": 0.05, "p": 4.3},
    "bjt-vbe-referenced-source": {"b": 0.6, "a": 1.3, "p": 4.3},
}


@pytest.mark.parametrize("identifier", sorted(SELF_BIASED))
def test_supply_transfer_at_the_ngspice_operating_point(identifier):
    # line sensitivity of a self-biased source: the engine's exact dIOUT/dVCC (through the Early effect)
    # against ngspice's AC analysis from the supply, at ngspice's operating point
    topology = library()[identifier]
    quantity, _, source = topology.transfer(circuit_of(identifier))
    assert (quantity, source) == ("transconductance", "Vcc")
    assert abs(check_transfer_in_spice(identifier, guess=SELF_BIASED[identifier])) > 0


@pytest.mark.parametrize("identifier", ["bjt-widlar-source", "bjt-peaking-source"])
def test_current_gain_at_the_ngspice_operating_point(identifier):
    check_transfer_in_spice(identifier)
