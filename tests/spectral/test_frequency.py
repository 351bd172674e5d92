"""Results over frequency: response, poles and zeros, -3 dB point, capacitances at bias.

Outside references:

* the tests' own nodal solver (``tests/support/reference_solver.py``, mpmath) on the same
  network with ``s = j 2 pi f``, and the generalized eigenvalues of its
  ``G + s C`` matrices (scipy) for the poles;
* ngspice (Debian's package) ``.ac`` on the same deck and card (capacitance
  parameters appended): output impedance of a BJT mirror and a MOS cascode,
  supply rejection of a bandgap core, within 1 %;
* published forms: the corner ``1/(2 pi R C)`` of a first-order network (common
  practice); the first denominator coefficient ``b1/b0`` equals the sum of the
  open-circuit (zero-value) time constants ``sum C_i R_i0`` (Gray, Hurst, Lewis,
  Meyer, Analysis and Design of Analog Integrated Circuits, 5th ed., ch. 7,
  zero-value time constants; section from memory).
"""

from __future__ import annotations

import math
import sys
import warnings
from pathlib import Path

import numpy as np
import pytest

from support.reference_solver import nodal_entries, reference_branches, reference_value  # noqa: E402
from support.spectral_reference import ngspice_ac  # noqa: E402

from symbias.analyses import output_resistance, voltage_gain  # noqa: E402
from symbias.simulator.ngspice import simulator  # noqa: E402
from symbias.devices.options import SmallSignalOptions  # noqa: E402
from symbias.frequency import coefficients_at, frequency_response, laplace_terms, log_frequencies  # noqa: E402
from symbias.netlist import parse_netlist, read_netlist  # noqa: E402
from symbias.pipeline import bias_point, design_inputs, load_target  # noqa: E402
from symbias.pipeline.frequency import FrequencyRequest, frequency_analysis, output_impedance_at  # noqa: E402
from symbias.pipeline.parasitics import with_parasitic_values  # noqa: E402
from symbias.pipeline.quantities import Quantity  # noqa: E402

DECKS = Path(__file__).parents[1] / "decks" / "noise"
CAPS = SmallSignalOptions(capacitances=True)
needs_ngspice = pytest.mark.skipif(simulator() is None, reason="ngspice is not on PATH")


def _at_bias(name: str, options=CAPS):
    target = load_target(str(DECKS / f"{name}.cir"))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        point = bias_point(target, design_inputs(target), options)
    return target, with_parasitic_values(target, point, options)


@pytest.mark.parametrize("deck", ["bjt_mirror", "mos_cascode"])
def test_response_matches_the_reference_solver(deck):
    target, point = _at_bias(deck)
    z = output_resistance(target.circuit, "Vout", CAPS)
    f = np.array([1e2, 1e5, 3e6, 1e8, 2e9])
    response = frequency_response(z, point.values, f)
    reference = reference_value(target.circuit, "output_resistance", ("Vout",),
                                {**point.values, "s": 2j * np.pi * f}, CAPS)
    np.testing.assert_allclose(response.values, reference, rtol=1e-9)
    evaluated = z.evaluate({**point.values, "s": 2j * np.pi * f})  # the formula's own evaluation route
    np.testing.assert_allclose(response.values, evaluated, rtol=1e-9)


def _pencil(circuit, values, options):
    """G and C of the reference solver's nodal matrix (entries are affine in s)."""
    branches = reference_branches(circuit, options)
    g_entries, labels = nodal_entries(branches, {**values, "s": 0.0})
    c_entries, _ = nodal_entries(branches, {**values, "s": 1.0})
    size = len(labels)
    g, c = np.zeros((size, size)), np.zeros((size, size))
    for (r, k), v in g_entries.items():
        g[r, k] = float(v)
    for (r, k), v in c_entries.items():
        c[r, k] = float(v) - g[r, k]
    return g, c


@pytest.mark.parametrize("deck", ["bjt_mirror", "mos_cascode"])
def test_poles_are_natural_frequencies_of_the_network(deck):
    scipy_linalg = pytest.importorskip("scipy.linalg")
    target, point = _at_bias(deck)
    response = frequency_response(output_resistance(target.circuit, "Vout", CAPS), point.values, [1.0])
    g, c = _pencil(target.circuit.without("Vout"), point.values, CAPS)  # the port open, as Zout sees it
    eigen = scipy_linalg.eigvals(g, -c)
    natural = eigen[np.isfinite(eigen)]
    assert len(response.poles) >= 2
    for pole in response.poles:
        assert np.min(np.abs(natural - pole)) <= 1e-6 * abs(pole), pole


def test_first_order_corner_is_one_over_two_pi_rc():
    circuit = parse_netlist("ro and a capacitance\nI1 0 a 1\nR1 a 0 RO\nC1 a 0 CO\n")
    response = frequency_response(output_resistance(circuit, "a"), {"RO": 2e5, "CO": 3e-13},
                                  log_frequencies(1e3, 1e9, 10))
    expected = 1 / (2 * math.pi * 2e5 * 3e-13)  # common practice
    assert response.corner == pytest.approx(expected, rel=1e-9)
    assert response.poles[0] == pytest.approx(-2 * math.pi * expected, rel=1e-12)
    assert abs(response.at(expected)) == pytest.approx(2e5 / math.sqrt(2), rel=1e-9)


def test_first_denominator_coefficient_is_the_sum_of_open_circuit_time_constants():
    deck = """NMOS mirror with explicit capacitances
Iref 0 in 1
M1 in in 0 0 NM
M2 out in 0 0 NM
C1 in 0 C1
C2 out 0 C2
C3 in out C3
Vout out 0 1
.model NM nmos
"""
    circuit = parse_netlist(deck)
    options = SmallSignalOptions()
    values = {"gm_M1": 1e-3, "ro_M1": 1e5, "gm_M2": 1.3e-3, "ro_M2": 7e4, "C1": 2e-13, "C2": 5e-14, "C3": 1e-14}
    terms = laplace_terms(output_resistance(circuit, "Vout", options))
    assert terms.degrees[1] == 2  # two capacitive nodes, nothing cancelled: the network's determinant
    numerator, denominator = coefficients_at(terms, values).values()
    open_network = circuit.without("Vout").without("C1").without("C2").without("C3")
    ports = {"C1": "in,0", "C2": "out,0", "C3": "in,out"}
    octc = sum(values[c] * reference_value(open_network, "output_resistance", (port,), values, options).real
               for c, port in ports.items())
    assert denominator[1] / denominator[0] == pytest.approx(float(octc), rel=1e-9)


def test_capacitances_at_bias_follow_the_spice_laws():
    # cpi = TF*gm + CJE law(VBE) beyond FC*VJE, cmu = CJC (1 - VBC/VJC)^-MJC (SPICE's Gummel-Poon, from memory)
    target, point = _at_bias("bjt_mirror", SmallSignalOptions(capacitances=True, parasitics=("rb",)))
    q2 = point.point.device("Q2")
    vbe, vbc = q2.voltages["vbe"], q2.voltages["vbc"]
    fc, vj, m = 0.5, 0.75, 0.33
    cje = 1e-12 / (1 - fc) ** (1 + m) * (1 - fc * (1 + m) + m * vbe / vj)
    assert point.values["cpi_Q2"] == pytest.approx(0.3e-9 * q2.small_signal["gm"] + cje, rel=1e-12)
    assert point.values["cmu_Q2"] == pytest.approx(0.5e-12 * (1 - vbc / vj) ** -m, rel=1e-12)
    assert point.values["rb_Q2"] == 200.0


@needs_ngspice
@pytest.mark.parametrize("deck", ["bjt_mirror", "mos_cascode"])
def test_output_impedance_matches_ngspice_ac(deck):
    target = load_target(str(DECKS / f"{deck}.cir"))
    # the same model as the card: base resistance RB included
    options = SmallSignalOptions(capacitances=True, parasitics=("rb",) if deck == "bjt_mirror" else ())
    request = FrequencyRequest(start=1e2, stop=1e10, per_decade=5, options=options)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = frequency_analysis(target, design_inputs(target), request)
    f, current = ngspice_ac(target.circuit, "Vout", "i(vout)", 1e2, 1e10, 5)
    np.testing.assert_allclose(f, result.response.frequencies, rtol=1e-6)  # wrdata prints 7 digits
    reference = -1.0 / current  # unit AC voltage on Vout; the current into the circuit is -i(vout)
    assert np.max(np.abs(result.response.values / reference - 1)) < 0.01
    assert result.response.corner is not None


@needs_ngspice
def test_supply_rejection_of_a_bandgap_core_matches_ngspice_ac():
    target = load_target(str(DECKS / "bandgap_core.cir"))
    request = FrequencyRequest(Quantity("voltage_gain", ("vo", "Vdd")), 1.0, 1e9, 5)
    result = frequency_analysis(target, design_inputs(target), request)
    f, reference = ngspice_ac(target.circuit, "Vdd", "v(vo)", 1.0, 1e9, 5)
    assert np.max(np.abs(result.response.values / reference - 1)) < 0.01
    assert result.formula.label == "v(vo)/v(Vdd)"


def test_ranking_hook_gives_the_impedance_magnitude():
    target, point = _at_bias("mos_cascode")
    z = output_resistance(target.circuit, "Vout", CAPS)
    expected = abs(frequency_response(z, point.values, [1e7]).values[0])
    assert output_impedance_at(target, design_inputs(target), 1e7) == pytest.approx(expected, rel=1e-9)


def test_library_reference_defaults_to_supply_rejection():
    target = load_target("widlar-bandgap")
    result = frequency_analysis(target, design_inputs(target), FrequencyRequest(stop=1e6, per_decade=2))
    assert result.formula.quantity == "voltage_gain" and result.formula.label == "v(vref)/v(Vcc)"
    # no capacitance in the card: a flat response equal to the exact low-frequency line sensitivity
    gain = voltage_gain(target.circuit, "vref", "Vcc")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        values = bias_point(target, design_inputs(target)).values
    assert abs(result.response.values[0]) == pytest.approx(abs(float(gain.evaluate(values))), rel=1e-9)
