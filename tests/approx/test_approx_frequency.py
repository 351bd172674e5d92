"""Approximation of results in s: each coefficient cut to its dominant terms, error over ranges and a band.

Outside references:

* the claimed worst error is re-measured at fresh points drawn by a sampler of
  the tests' own (log-uniform in each symbol's range, another seed, random
  frequencies in the band) against the exact result, and at the reported worst
  point against the tests' own nodal solver (``tests/support/reference_solver.py``);
* the dominant-pole approximation ``p1 = -1/(R C)`` of a ladder whose poles are
  widely separated, and ``p1 = -b0/b1`` with ``b1/b0`` the sum of open-circuit
  time constants (Gray, Hurst, Lewis, Meyer, 5th ed., ch. 7; section from
  memory; common practice).
"""

from __future__ import annotations

import json
import math
import pickle
import subprocess
import sys
import warnings
from pathlib import Path

import numpy as np
import pytest

from support.reference_solver import reference_value  # noqa: E402

from symbias.analyses import output_resistance  # noqa: E402
from symbias.approx import FrequencyApproximation, approximate  # noqa: E402
from symbias.devices.options import SmallSignalOptions  # noqa: E402
from symbias.frequency import frequency_response  # noqa: E402
from symbias.netlist import parse_netlist  # noqa: E402
from symbias.pipeline import design_inputs, load_target  # noqa: E402
from symbias.pipeline.frequency import FrequencyRequest, frequency_analysis  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]
DECKS = Path(__file__).parents[1] / "decks" / "noise"
FRESH_SEED = 20240917


def test_ladder_dominant_pole_is_one_over_ra_ca():
    deck = "ladder\nI1 0 a 1\nR1 a 0 RA\nC1 a 0 CA\nR2 a b RB\nC2 b 0 CB\n"
    exact = output_resistance(parse_netlist(deck), "a")
    result = approximate(exact, ["RA >> RB", "CA >> CB"], band=(1e3, 1e9))
    assert isinstance(result, FrequencyApproximation)
    assert str(result.dominant_pole.expr) == "-1/(CA*RA)"  # widely separated poles (common practice)
    assert result.pole_error is not None and result.pole_error < 0.1
    assert result.error <= result.tolerance


def _fresh_error(result, formula, spread: float, band, count: int = 400) -> float:
    """The approximation's worst error at points of the tests' own sampler (log-uniform in each range)."""
    rng = np.random.default_rng(FRESH_SEED)
    values = {}
    for name in (s.name for s in formula.symbols if s.name != "s"):
        nominal = result.bias.values[name]
        values[name] = np.exp(rng.uniform(math.log(nominal * (1 - spread)), math.log(nominal * (1 + spread)), count))
    values["s"] = 2j * np.pi * np.exp(rng.uniform(math.log(band[0]), math.log(band[1]), count))
    approx = result.approximation
    with np.errstate(all="ignore"):
        errors = np.abs(approx.formula.evaluate(values) / approx.exact.evaluate(values) - 1)
    return float(np.max(errors))


@pytest.mark.parametrize("deck,parasitics", [("bjt_mirror", ("rb",)), ("mos_cascode", ())])
def test_error_claimed_at_the_bias_point_holds_at_fresh_points(deck, parasitics):
    target = load_target(str(DECKS / f"{deck}.cir"))
    options = SmallSignalOptions(capacitances=True, parasitics=parasitics)
    request = FrequencyRequest(start=1e3, stop=1e9, options=options, approximate=True, spread=0.3)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = frequency_analysis(target, design_inputs(target), request)
    a = result.approximation
    assert a.error <= a.tolerance
    assert sum(k for k, _ in a.kept) < sum(n for _, n in a.kept)  # something was left out
    fresh = _fresh_error(result, a.exact, 0.3, (1e3, 1e9))
    # a sampled worst case: fresh points may find somewhat more, never far more
    assert fresh <= 1.5 * a.tolerance, (fresh, a.error)
    # the reported worst point, recomputed with the tests' own solver
    point = {**a.worst_point, "s": 2j * math.pi * a.worst_frequency}
    # the tests' solver takes every BJT parasitic at once: re is given as a short, rmu as an open
    shorts = {f"{p}_{q.name}": v for q in target.circuit.devices if q.kind == "Q" for p, v in (("re", 1e-4),
                                                                                                ("rmu", 1e16))}
    with np.errstate(all="ignore"):
        exact = reference_value(target.circuit, "output_resistance", ("Vout",), {**point, **shorts}, options)
    assert abs(complex(a.formula.evaluate(point)) / complex(exact) - 1) == pytest.approx(a.error, rel=1e-3, abs=1e-6)


def test_dominant_pole_closed_form_matches_the_exact_root_at_bias():
    target = load_target(str(DECKS / "mos_cascode.cir"))
    request = FrequencyRequest(start=1e3, stop=1e9, approximate=True)
    result = frequency_analysis(target, design_inputs(target), request)
    a = result.approximation
    closed = complex(a.dominant_pole.evaluate(dict(result.bias.values)))
    exact = result.response.poles[0]
    assert abs(closed / exact - 1) <= a.pole_error + 1e-9
    # -b0/b1 of the exact coefficients at the bias point: the open-circuit time-constant estimate
    numerator, denominator = result.response.coefficients.values()
    assert closed.real == pytest.approx(-denominator[0] / denominator[1], rel=max(a.tolerance, a.pole_error))


def test_frequency_approximation_pickles():
    exact = output_resistance(parse_netlist("ladder\nI1 0 a 1\nR1 a 0 RA\nC1 a 0 CA\nR2 a b RB\nC2 b 0 CB\n"), "a")
    result = approximate(exact, ["RA >> RB", "CA >> CB"], band=(1e3, 1e9))
    again = pickle.loads(pickle.dumps(result))
    assert again.text == result.text and again.error == result.error
    assert str(again.dominant_pole.expr) == str(result.dominant_pole.expr)


def test_derive_approximates_a_result_in_s(tmp_path):
    done = subprocess.run([sys.executable, "-m", "symbias", "derive", str(DECKS / "mos_cascode.cir"), "--rout", "Vout",
                           "--capacitances", "--approx", "--band", "1k,1g", "--samples", "100", "--json"],
                          capture_output=True, text=True, cwd=ROOT, timeout=120)
    assert done.returncode == 0, done.stderr
    record = json.loads(done.stdout)
    assert "s" in record["approx"] and record["approx_error"] <= record["approx_tolerance"]
    assert any("band of the error" in a for a in record["approx_assumptions"])


def test_bad_band_is_a_one_line_usage_error():
    done = subprocess.run([sys.executable, "-m", "symbias", "derive", str(DECKS / "mos_cascode.cir"), "--capacitances",
                           "--approx", "--band", "1g,1k"], capture_output=True, text=True, cwd=ROOT, timeout=60)
    assert done.returncode == 2 and done.stderr.count("\n") == 1 and "--band" in done.stderr


def test_response_of_the_approximation_follows_the_exact_one_over_the_band():
    target = load_target(str(DECKS / "mos_cascode.cir"))
    result = frequency_analysis(target, design_inputs(target), FrequencyRequest(start=1e3, stop=1e9, approximate=True))
    a = result.approximation
    f = np.logspace(3, 9, 61)
    approx = frequency_response(a.formula, result.bias.values, f).values
    assert np.max(np.abs(approx / result.response.coefficients.at(2j * np.pi * f) - 1)) <= a.tolerance
