"""Results of the approximation, sensitivity and transfer-error steps pickle and cross a process pool.

Ranking and Monte Carlo hand independent tasks to a ``concurrent.futures``
executor, so everything a worker receives or returns must pickle.  Each
object goes through ``pickle`` and through a real ``ProcessPoolExecutor``;
the worker uses it (samples a box, evaluates a form) so that a round trip that
loses state fails here rather than in a ranking run.
"""

from __future__ import annotations

import pickle
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

import numpy as np
import pytest

from symbias.analyses import current_gain, output_resistance
from symbias.approx import AssumptionError, approximate, magnitude_model, parse_assumption
from symbias.devices.options import SmallSignalOptions
from symbias.netlist import read_netlist
from symbias.sensitivity import sensitivities
from symbias.transfer_error import transfer_error

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
MATCH = SmallSignalOptions(match=True, beta=True)


# -- work done in the worker process (module level, so the pool can find it) --------------
def _sample_in_worker(model, n, seed):
    return model, model.admitted_sample(n, seed)


def _centre_in_worker(names, statements):
    return magnitude_model(names, statements).centre()


def _echo(item):
    return item


def _approximation_in_worker(approximation):
    point = dict(approximation.worst_point)
    return approximation, approximation.text, float(approximation.relative_error(point))


def _in_pool(function, *args):
    with ProcessPoolExecutor(max_workers=1) as pool:
        return pool.submit(function, *args).result(timeout=120)


def _wilson_rout():
    return output_resistance(read_netlist(EXAMPLES / "wilson_mirror.cir"), "Vout", MATCH)


# -- objects that hold no Formula --------------------------------------------------------------
def test_assumptions_round_trip():
    statements = (parse_assumption("gm*ro >> 1"), parse_assumption("3m < gm < 5m"), parse_assumption("A = 100"))
    assert pickle.loads(pickle.dumps(statements)) == statements
    assert _in_pool(_echo, statements) == statements


def test_magnitude_model_round_trip_rebuilds_its_arrays():
    model = magnitude_model(["beta", "gm", "ro"], ["RE >> 1/gm"])
    expected, drawn = model.admitted_sample(300, seed=11)
    copy = pickle.loads(pickle.dumps(model))
    assert (copy.names, copy.factors, copy.checks) == (model.names, model.factors, model.checks)
    np.testing.assert_array_equal(copy.admitted_sample(300, seed=11)[0], expected)
    returned, (sampled, pool_drawn) = _in_pool(_sample_in_worker, model, 300, 11)
    np.testing.assert_array_equal(sampled, expected)
    assert pool_drawn == drawn and returned.checks == model.checks
    np.testing.assert_array_equal(returned.logs(expected), model.logs(expected))


def test_an_assumption_error_in_a_worker_arrives_as_itself():
    # gm*ro <= 100 against the default ro >> beta/gm with beta >= 30: no point is left
    with pytest.raises(AssumptionError, match="no point satisfies") as info:
        _in_pool(_centre_in_worker, ("beta", "gm", "ro"), ("gm*ro in [30, 100]",))
    assert "\n" not in str(info.value)


def test_sensitivity_rows_round_trip():
    rows = sensitivities(_wilson_rout(), {"beta": 100.0, "gm": 2e-3, "ro": 1.5e6})
    for copy in (pickle.loads(pickle.dumps(rows)), _in_pool(_echo, rows)):
        assert [(r.symbol, r.members, r.value, r.expr) for r in copy] == \
            [(r.symbol, r.members, r.value, r.expr) for r in rows]


# -- objects that hold a Formula ------------------------------------------------------------------
def test_approximation_round_trips_and_evaluates_in_a_worker():
    a = approximate(_wilson_rout())
    copy = pickle.loads(pickle.dumps(a))
    assert (copy.text, copy.error, dict(copy.worst_point), copy.kept) == (a.text, a.error, dict(a.worst_point), a.kept)
    returned, text, error_at_worst = _in_pool(_approximation_in_worker, a)
    assert text == a.text == returned.text == "beta*ro/2"
    assert returned.assumptions == a.assumptions and returned.model.factors == a.model.factors
    # the worst point's error, recomputed in the worker from the exact and kept forms, is the reported one
    assert error_at_worst == pytest.approx(a.error, rel=1e-9)


def test_transfer_error_and_its_causes_round_trip():
    gain = current_gain(read_netlist(EXAMPLES / "simple_mirror.cir"), "Vout", "Iref", MATCH)
    err = transfer_error(gain)
    for copy in (pickle.loads(pickle.dumps(err)), _in_pool(_echo, err)):
        assert copy.leading.text == err.leading.text == "2/beta"
        assert [(c.name, c.symbols, c.leading.text) for c in copy.causes] == \
            [(c.name, c.symbols, c.leading.text) for c in err.causes]
        point = {"beta": 50.0, "gm": 1e-3, "ro": 1e6}
        np.testing.assert_allclose(copy.exact.evaluate(point), err.exact.evaluate(point), rtol=1e-15)
