"""MOS mirrors and sources of the library, checked against their published analysis.

Sources: Razavi, "Design of Analog CMOS Integrated Circuits", 2nd ed. (McGraw-Hill, 2017):
current mirrors (IOUT/IREF = (W/L)2/(W/L)1), cascode output resistance
ro1 + ro2 + (gm2 + gmb2)*ro1*ro2, degenerated output resistance [1 + (gm + gmb)*RS]*ro + RS,
supply-independent (beta-multiplier) biasing I = 2/(KP*(W/L)*RS^2)*(1 - 1/sqrt(K))^2;
Johns and Martin, "Analog Integrated Circuit Design" (Wiley, 1997), wide-swing cascode
mirror; E. Sackinger and W. Guggenbuhl, IEEE JSSC vol. 25, 1990 (regulated cascode,
Rout ~ gm2*ro2*gm3*ro3*ro1).  Chapter and equation numbers from memory.  Numbers: the
independent solve of ``tests/support/reference_solver.py`` and ngspice (MOS level 1) at its own
operating point.
"""

from __future__ import annotations

import math

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
    formula_cases,
    library,
    output_current,
    spice_op,
    with_models,
)
from symbias.analyses import output_resistance
from symbias.devices.options import SmallSignalOptions

CASES = formula_cases(lambda t: t.technology == "mos" and t.family != "reference")


def test_the_family_is_complete():
    ids = {t.id for t in library().values() if t.technology == "mos"}
    assert {"mos-simple-mirror", "mos-ratioed-mirror", "mos-cascode-mirror", "mos-wide-swing-cascode-mirror",
            "mos-regulated-cascode", "mos-wilson-mirror", "mos-degenerated-mirror", "mos-beta-multiplier"} <= ids


@pytest.mark.parametrize("identifier,index", CASES)
def test_library_form_matches_derivation(identifier, index):
    check_published(identifier, index, seed=index + 51)


@pytest.mark.parametrize("identifier,index", CASES)
def test_derivation_matches_independent_solve(identifier, index):
    check_against_reference(identifier, index, seed=index + 53)


#: Published exact output resistances, written out here beside their source (unmatched symbols).
PUBLISHED_ROUT = [
    ("mos-cascode-mirror", "ro_M2 + ro_M4 + (gm_M4 + gmb_M4)*ro_M2*ro_M4", "Razavi 2nd ed., cascode (from memory)"),
    ("mos-wide-swing-cascode-mirror", "ro_M2 + ro_M4 + (gm_M4 + gmb_M4)*ro_M2*ro_M4",
     "Johns and Martin 1997, wide-swing cascode; Razavi 2nd ed. cascode (from memory)"),
    ("mos-degenerated-mirror", "(1 + (gm_M2 + gmb_M2)*RS)*ro_M2 + RS",
     "Razavi 2nd ed., degenerated common source (from memory)"),
    ("mos-simple-mirror", "ro_M2", "Razavi 2nd ed., basic mirror (from memory)"),
]


@pytest.mark.parametrize("identifier,published,source", PUBLISHED_ROUT)
def test_published_output_resistance(identifier, published, source):
    formula = output_resistance(circuit_of(identifier), "Vout", SmallSignalOptions())
    assert sympy.cancel(formula.expr - engine_symbols(published_expr(published), formula)) == 0, source


def test_regulated_cascode_leading_order():
    # Sackinger and Guggenbuhl 1990: Rout ~ gm2*ro2*gm3*ro3*ro1: the ratio tends to 1 as every gm*ro grows
    formula = output_resistance(circuit_of("mos-regulated-cascode"), "Vout", SmallSignalOptions())
    values = {"gm_M1": 1e-3, "gm_M2": 1e-3, "gm_M3": 5e-4, "gmb_M2": 2e-4, "ro_M1": 1e5, "ro_M2": 1e5, "ro_M3": 2e5}
    for scale, tolerance in ((1.0, 0.02), (100.0, 2e-4)):
        point = {k: v * scale if k.startswith("ro") else v for k, v in values.items()}
        leading = point["gm_M2"] * point["ro_M2"] * point["gm_M3"] * point["ro_M3"] * point["ro_M1"]
        ratio = float(formula.evaluate(point)) / leading
        assert abs(ratio - 1) < tolerance


#: Mirrors of unit devices: the published ratio (W/L)2/(W/L)1 with m unit devices.
RATIOS = [
    ("mos-simple-mirror", "1"),
    ("mos-ratioed-mirror", "N"),
    ("mos-cascode-mirror", "1"),
    ("mos-wide-swing-cascode-mirror", "1"),
    ("mos-wilson-mirror", "1"),
    ("mos-degenerated-mirror", "1"),
]


@pytest.mark.parametrize("identifier,published", RATIOS)
def test_mirror_ratio_in_ngspice(identifier, published):
    # Razavi 2nd ed., current mirrors (from memory): IOUT/IREF = (W/L)2/(W/L)1 without channel-length
    # modulation; ngspice level 1 with LAMBDA = 0 reproduces it exactly
    topology = library()[identifier]
    circuit = with_models(circuit_of(identifier), LAMBDA=None)
    values = topology.defaults()
    op = spice_op(circuit, values, ["i(vout)"])
    expected = float(published_expr(published).subs({sympy.Symbol(k): v for k, v in values.items()}))
    assert output_current(op, "Vout") / values["IREF"] == pytest.approx(expected, rel=1e-6)


def test_beta_multiplier_current_in_ngspice():
    # Razavi 2nd ed., supply-independent biasing (from memory): I = 2/(KP*(W/L)*RS^2)*(1 - 1/sqrt(K))^2,
    # square law, body of M2 tied to its source, no channel-length modulation
    topology = library()["mos-beta-multiplier"]
    circuit = with_models(circuit_of("mos-beta-multiplier"), LAMBDA=None)
    values = topology.defaults()
    guess = {"a": 0.75, "p": 2.3, "s2": 0.05}
    op = spice_op(circuit, values, ["i(vout)", "v(a)"], guess=guess)
    assert op["v(a)"] > 0.5  # the non-zero state
    kp = float(circuit.models["nm"].params["KP"])
    expected = 2 / (kp * values["WN"] / values["LN"] * values["RS"] ** 2) * (1 - 1 / math.sqrt(values["K"])) ** 2
    # M5 copies the M4 branch with equal PMOS sizes
    assert output_current(op, "Vout") == pytest.approx(expected, rel=1e-4)


@pytest.mark.parametrize("identifier", ["mos-simple-mirror", "mos-cascode-mirror", "mos-wide-swing-cascode-mirror",
                                        "mos-regulated-cascode", "mos-wilson-mirror", "mos-degenerated-mirror"])
def test_output_resistance_at_the_ngspice_operating_point(identifier):
    # ngspice level 1 (body effect on): AC analysis against the engine's exact formula at ngspice's own
    # gm, gmbs, gds
    check_output_resistance_in_spice(identifier)


def test_beta_multiplier_supply_transfer_at_the_ngspice_operating_point():
    # line sensitivity of the self-biased source through channel-length modulation, against ngspice AC
    assert abs(check_transfer_in_spice("mos-beta-multiplier", guess={"a": 0.75, "p": 2.3, "s2": 0.05})) > 0


def test_regulated_cascode_transconductance_at_the_ngspice_operating_point():
    check_transfer_in_spice("mos-regulated-cascode")
