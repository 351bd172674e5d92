"""At the bias point means at the bias point: values, sensitivities and the approximation's error there.

References: the tests' own nodal solver (tests/support/reference_solver.py), which evaluates
the same small-signal network independently of the engine, at the operating point's
values; the simple mirror's Rout = ro2 (Gray, Hurst, Lewis and Meyer, Analysis and
Design of Analog Integrated Circuits, 5th ed., ch. 4), whose normalised sensitivity
to ro2 is 1 (common practice).
"""

import warnings

import pytest

from symbias.devices.options import SmallSignalOptions
from symbias.errors import BiasWarning
from symbias.pipeline import DeriveRequest, derive, design_inputs, load_target

from support.reference_solver import reference_value


def _derive(target_name, **request):
    target = load_target(target_name)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", BiasWarning)
        return derive(target, DeriveRequest(at_bias=design_inputs(target), **request))


def test_sensitivities_are_taken_at_the_operating_point():
    d = _derive("examples/simple_mirror.cir", sensitivities=True)
    rout = d.results[0]
    assert dict(rout.sensitivity_point) == {"ro_Q2": d.bias.values["ro_Q2"]}
    assert [(s.symbol, round(s.value, 12)) for s in rout.sensitivities] == [("ro_Q2", 1.0)]


def test_values_at_bias_match_an_independent_solve():
    d = _derive("examples/wilson_mirror.cir")
    for result in d.results:
        names = [s.name for s in result.formula.symbols]
        expected = reference_value(d.target.circuit, result.quantity.kind, result.quantity.arguments,
                                   {n: d.bias.values[n] for n in names})
        assert result.value == pytest.approx(float(expected.real), rel=1e-9)


def test_approximation_error_is_reported_at_the_operating_point():
    d = _derive("examples/wilson_mirror.cir", approximate=True)
    for result in d.results:
        approximate_value = float(result.approximation.formula.evaluate(d.bias.values))
        assert result.approximation_error_at_bias == pytest.approx(abs(approximate_value / result.value - 1))
        assert result.approximation_error_at_bias <= result.approximation.error + 1e-12 or \
            result.approximation_error_at_bias < 0.1


def test_matched_devices_that_differ_are_named():
    target = load_target("examples/simple_mirror.cir")
    with pytest.warns(BiasWarning, match=r"matched QN devices: .* of Q2 differs by .* from Q1"):
        d = derive(target, DeriveRequest(options=SmallSignalOptions(match=True),
                                         at_bias=design_inputs(target)))
    assert d.bias.notes and all("Q1" in note for note in d.bias.notes)
