"""Batched DC solves: K operating points in one call agree with K scalar solves.

The scalar solver is the one-sample case of the same Newton, but every
batched quantity - active sets, per-sample damping, gmin and source
stepping, parameters stacked over the batch - is checked here against
separate scalar solves on every library cell (1e-9 relative), failed samples
are reported by index, self-biased cells stay on their conducting state,
sweeps equal scalar solves at their points, and everything pickles across a
process pool.
"""

from __future__ import annotations

import pickle
from concurrent.futures import ProcessPoolExecutor
from functools import lru_cache
from pathlib import Path

import numpy as np
import pytest

from symbias.dc.mismatch import mismatch_samples
from symbias.dc.newton import DcOptions
from symbias.dc.operating_point import operating_point, operating_points
from symbias.dc.solutions import find_solutions
from symbias.dc.stepping import solve, solve_batch
from symbias.dc.sweep import sweep_source, sweep_temperature
from symbias.dc.system import build_system
from symbias.devices.dc_context import StampContext
from symbias.devices.nonlinear import device_model
from symbias.errors import CircuitError, ConvergenceError
from symbias.library import load_library, shipped_dir
from symbias.netlist import parse_netlist, read_netlist
from symbias.process import demo_process_path, load_process

DECKS = Path(__file__).parents[1] / "decks"
RTOL = 1e-9
SAMPLES = 6


@lru_cache(maxsize=None)
def _library():
    return load_library([shipped_dir()])


def _variations(circuit, values, count: int, seed: int) -> dict[str, np.ndarray]:
    """Per-device IS (3 %), VTO (10 mV), KP (3 %) and one resistor (5 %) drawn around their nominal values."""
    rng = np.random.default_rng(seed)
    context = StampContext.create(circuit, values=values)
    samples = {}
    for element in circuit.devices:
        params = device_model(element.kind)(element, context).device.params
        for name, spread, relative in (("IS", 0.03, True), ("VTO", 0.01, False), ("KP", 0.03, True)):
            if name in params:
                nominal = float(params[name])
                draw = rng.standard_normal(count)
                samples[f"{element.name}.{name}"] = nominal * (1 + spread * draw) if relative else nominal + spread * draw
    resistor = next((e for e in circuit.elements if e.kind == "R"), None)
    if resistor is not None:
        samples[resistor.name] = context.value(resistor, "resistance") * (1 + 0.05 * rng.standard_normal(count))
    return samples


def _close(batched, scalar, what):
    if np.isinf(scalar):
        assert batched == scalar, what
    else:
        assert batched == pytest.approx(scalar, rel=RTOL, abs=1e-18), what


def _agree(points, i, op):
    for node, value in op.node_voltages.items():
        _close(points.node_voltages[node][i], value, node)
    for table, ours in ((op.branch_currents, points.branch_currents), (op.element_currents, points.element_currents)):
        for name, value in table.items():
            _close(ours[name][i], value, name)
    for name, device in op.devices.items():
        batched = points.device(name).point(i)
        assert batched.region == device.region, name
        for section in ("currents", "voltages", "small_signal", "limits"):
            for key, value in getattr(device, section).items():
                _close(getattr(batched, section)[key], value, f"{name} {key}")


@pytest.mark.parametrize("identifier", sorted(_library()))
def test_batched_equals_scalar_on_every_library_cell(identifier):
    topology = _library()[identifier]
    circuit, values = topology.circuit(), topology.defaults()
    samples = _variations(circuit, values, SAMPLES, seed=len(identifier))
    temperature = np.array([27.0, -40.0, 85.0, 27.0, 0.0, 125.0])
    nominal = operating_point(circuit, None, 27.0, values)
    points = operating_points(circuit, None, samples, temperature, values, start=nominal)
    assert points.size == SAMPLES
    for i in range(SAMPLES):
        parameters = {name: float(array[i]) for name, array in samples.items()}
        try:
            op = operating_point(circuit, None, float(temperature[i]), values, parameters=parameters, start=nominal)
        except (CircuitError, ConvergenceError) as error:
            assert points.failures[i] == str(error)
            continue
        assert i not in points.failures
        _agree(points, i, op)


@pytest.mark.parametrize("identifier", ["bjt-wilson-mirror", "mos-wide-swing-cascode-mirror", "brokaw-bandgap"])
def test_large_batches_equal_scalar_solves(identifier):
    # 96 samples: the linear stacks go through the elimination across the batch, not LAPACK
    topology = _library()[identifier]
    circuit, values = topology.circuit(), topology.defaults()
    samples = _variations(circuit, values, 96, seed=7)
    nominal = operating_point(circuit, None, 27.0, values)
    points = operating_points(circuit, None, samples, 27.0, values, start=nominal)
    assert not points.failures
    for i in (0, 13, 50, 95):
        parameters = {name: float(array[i]) for name, array in samples.items()}
        _agree(points, i, operating_point(circuit, None, 27.0, values, parameters=parameters, start=nominal))


def test_per_sample_gmin_and_source_stepping_equal_the_scalar_chain():
    # one Newton iteration cannot converge: every sample goes on to gmin stepping (then source stepping)
    circuit = read_netlist(DECKS / "bjt_wilson_mirror.cir")
    options = DcOptions(max_iterations=1)
    currents = np.array([20e-6, 100e-6, 400e-6, 1e-3])
    system = build_system(circuit, samples={"Iref": currents})
    batched = solve_batch(system, options=options)
    assert set(batched.methods) <= {"gmin stepping", "source stepping"} and len(batched.errors) == 0
    for i, current in enumerate(currents):
        single = solve(build_system(circuit, samples={"Iref": current}), options=options)
        assert single.method == batched.methods[i] and single.iterations == batched.iterations[i]
        np.testing.assert_allclose(batched.x[i], single.x, rtol=RTOL, atol=1e-15)


def test_failed_samples_are_reported_by_index_never_kept():
    circuit = parse_netlist("t\nVb b 0 0.7\nQ1 c b 0 QN\nVc c 0 2\n.model QN npn (IS=1e-16)\n")
    points = operating_points(circuit, samples={"Vb": [0.70, 2.0, 0.72]})
    assert sorted(points.failures) == [1] and "forced on hard" in points.failures[1]
    assert np.isnan(points.branch_currents["Vc"][1]) and np.isnan(points.device("Q1").output_current[1])
    assert list(points.converged) == [True, False, True]
    with pytest.raises(CircuitError, match="forced on hard"):
        points.point(1)
    assert points.point(2).devices["Q1"].region == "active"
    # a sample no start reaches is a convergence failure, named by index
    stubborn = operating_points(read_netlist(DECKS / "bjt_wilson_mirror.cir"), samples={"Iref": [1e-4, 3e-2]},
                                options=DcOptions(max_iterations=2, step_iterations=1, source_min_step=0.05))
    assert stubborn.failures and all("no DC operating point" in text for text in stubborn.failures.values())


@pytest.mark.parametrize("deck", ["bandgap_core", "mos_beta_multiplier", "bjt_ptat_selfbiased"])
def test_self_biased_cells_stay_on_the_conducting_state(deck):
    # each of these cells also has a zero-current state (tests/dc/test_dc_solutions.py); device mismatch of the
    # (invented) demo process must not drop any sample into it
    circuit = read_netlist(DECKS / f"{deck}.cir")
    process = load_process(demo_process_path())
    nominal = find_solutions(circuit, process).working.point
    samples = mismatch_samples(circuit, process, 500, seed=3)
    points = operating_points(circuit, process, samples, start=nominal)
    assert not points.failures and set(points.methods) == {"newton (warm start)"}
    total = sum(np.abs(d.output_current) for d in points.devices.values())
    working = sum(abs(d.output_current) for d in nominal.devices.values())
    assert np.all(total > 0.5 * working)
    if deck == "bandgap_core":  # a start from scratch lands on the low-current state: continuation matters here
        fresh = operating_point(circuit, process)
        assert sum(abs(d.output_current) for d in fresh.devices.values()) < 1e-3 * working


def test_sweep_points_equal_scalar_solves():
    circuit = read_netlist(DECKS / "bjt_wilson_mirror.cir")
    sweep = sweep_source(circuit, "Vout", 0.0, 5.0, 101)
    for i in (0, 3, 10, 50, 100):
        op = operating_point(circuit, overrides={"Vout": float(sweep.values[i])})
        assert sweep.probe("I(Vout)")[i] == pytest.approx(op.branch_currents["Vout"], rel=RTOL)
        assert sweep.point(i).devices["Q3"].region == op.devices["Q3"].region
    hot = sweep_temperature(circuit, -40.0, 125.0, 34)
    op = operating_point(circuit, temperature=float(hot.values[20]))
    assert hot.probe("V(a)")[20] == pytest.approx(op.voltage("a"), rel=RTOL)


def _solve_chunk(args):
    circuit, samples = args
    return operating_points(circuit, samples=samples)


def _solve_system(system):
    return solve_batch(system)


def test_results_and_systems_cross_a_process_pool():
    circuit = read_netlist(DECKS / "mos_cascode_mirror.cir")
    samples = _variations(circuit, {}, 8, seed=5)
    local = operating_points(circuit, samples=samples)
    again = pickle.loads(pickle.dumps(local))
    np.testing.assert_array_equal(again.branch_currents["Vout"], local.branch_currents["Vout"])
    assert pickle.loads(pickle.dumps(local.point(3))) == local.point(3)
    halves = [{k: v[:4] for k, v in samples.items()}, {k: v[4:] for k, v in samples.items()}]
    system = build_system(circuit, samples=samples)
    with ProcessPoolExecutor(max_workers=2) as pool:
        parts = list(pool.map(_solve_chunk, [(circuit, half) for half in halves]))
        remote = pool.submit(_solve_system, system).result()
    joined = np.concatenate([p.branch_currents["Vout"] for p in parts])
    np.testing.assert_allclose(joined, local.branch_currents["Vout"], rtol=RTOL)
    assert parts[1].point(0).devices["M2"].region == local.point(4).devices["M2"].region
    np.testing.assert_allclose(remote.x, solve_batch(system).x, rtol=RTOL, atol=1e-15)


def test_elimination_across_the_batch_agrees_with_lapack():
    from symbias.dc.newton import _linear_solve

    rng = np.random.default_rng(2)
    a = rng.normal(size=(200, 6, 6)) + 3 * np.eye(6)
    a[7, 0, 0], a[7, 3, 0] = 0.0, 1e3  # wants another pivot order than sample 0
    a[11] = 0.0  # singular
    b = rng.normal(size=(200, 6))
    x, ok = _linear_solve(a, b)
    assert list(np.flatnonzero(~ok)) == [11]
    good = np.flatnonzero(ok)
    np.testing.assert_allclose(x[good], np.linalg.solve(a[good], b[good][..., None])[..., 0], rtol=1e-10, atol=1e-12)
