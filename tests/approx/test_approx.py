"""Dominant-term approximations of textbook current sources (symbias.approx).

Every approximation is checked three ways: its form against the published
closed form (source named beside each check), the exact formula against a
nodal solve written out by hand in this file (independent of the engine's
stamping), and its claimed worst error re-measured at fresh random points
drawn here, from the documented translation of the assumptions (different
seed, different sampler).
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest
import sympy

from support.reference_solver import reference_value  # noqa: E402

from symbias.analyses import current_gain, output_resistance  # noqa: E402
from symbias.approx import (  # noqa: E402
    AssumptionError,
    approximate,
    default_assumptions,
    magnitude_model,
    nominal_ranges,
    parse_assumption,
)
from symbias.approx.arrays import dot  # noqa: E402
from symbias.approx.search import pair_errors, subset_sums  # noqa: E402
from symbias.dc.operating_point import operating_point  # noqa: E402
from symbias.devices.options import SmallSignalOptions  # noqa: E402
from symbias.errors import SymbiasError  # noqa: E402
from symbias.linear.network import bias_values  # noqa: E402
from symbias.netlist import read_netlist  # noqa: E402
from symbias.symbols import owners, parse_symbol  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]
DECKS = ROOT / "tests" / "decks" / "approx"
EXAMPLES = ROOT / "examples"
FRESH_SEED = 20240917
beta, gm, ro, gmb, A = sympy.symbols("beta gm ro gmb A")


def _loguniform(rng, low, high, n):
    return np.exp(rng.uniform(np.log(low), np.log(high), n))


def bjt_points(n=4000, seed=FRESH_SEED):
    """beta in [30, 1000], gm*ro in [30, 1e4], gm*ro/beta >= 30 (ro >> rpi), gm in [1e-5, 1e-2]."""
    rng = np.random.default_rng(seed)
    b = _loguniform(rng, 30, 1000, 40 * n)
    g = _loguniform(rng, 30, 1e4, 40 * n)
    gm_ = _loguniform(rng, 1e-5, 1e-2, 40 * n)
    keep = g / b >= 30
    b, g, gm_ = b[keep][:n], g[keep][:n], gm_[keep][:n]
    assert len(b) == n
    return {"beta": b, "gm": gm_, "ro": g / gm_}


def mos_points(n=4000, seed=FRESH_SEED, body=True):
    """gm*ro in [30, 1e4], gmb/gm in [0.05, 0.4], gm in [1e-5, 1e-2]."""
    rng = np.random.default_rng(seed)
    g = _loguniform(rng, 30, 1e4, n)
    gm_ = _loguniform(rng, 1e-5, 1e-2, n)
    out = {"gm": gm_, "ro": g / gm_}
    if body:
        out["gmb"] = gm_ * _loguniform(rng, 0.05, 0.4, n)
    return out


def lambdified(expr):
    names = sorted(s.name for s in expr.free_symbols)
    function = sympy.lambdify([sympy.Symbol(n) for n in names], expr, "numpy")
    return lambda values: function(*(values[n] for n in names))


def remeasure(approximation, exact_values, points):
    """Worst |approx/exact - 1| at fresh points, the approximation evaluated by sympy's lambdify."""
    approx_values = lambdified(approximation.expr)(points)
    return float(np.max(np.abs(approx_values / exact_values - 1)))


def holds(measured, claimed):
    """The fresh worst error stays within the claimed one (float round-off aside)."""
    return measured <= claimed * (1 + 1e-6) + 1e-12


def options(**kw):
    return SmallSignalOptions(match=True, **kw)


# -- hand-written nodal solves (hybrid-pi, matched devices) ----------------------------------
def wilson_rout_by_hand(q1, q2, q3):
    """Wilson mirror Q1 (c=in, b=x), Q2 diode at x, Q3 (c=out, b=in, e=x); 1 A into out.

    Each device is a mapping of gm, rpi and ro (arrays); matched devices pass the same one.
    """
    n = len(q1["gm"])
    M = np.zeros((n, 3, 3))
    # unknowns v_in, v_x, v_out; rows: KCL (current leaving) at in, x, out
    M[:, 0, 0] = 1 / q1["ro"] + 1 / q3["rpi"]
    M[:, 0, 1] = q1["gm"] - 1 / q3["rpi"]
    M[:, 1, 0] = -1 / q3["rpi"] - q3["gm"]
    M[:, 1, 1] = (1 / q1["rpi"] + 1 / q2["rpi"] + q2["gm"] + 1 / q2["ro"]
                  + 1 / q3["rpi"] + q3["gm"] + 1 / q3["ro"])
    M[:, 1, 2] = -1 / q3["ro"]
    M[:, 2, 0] = q3["gm"]
    M[:, 2, 1] = -q3["gm"] - 1 / q3["ro"]
    M[:, 2, 2] = 1 / q3["ro"]
    rhs = np.zeros((n, 3, 1))
    rhs[:, 2, 0] = 1.0
    return np.linalg.solve(M, rhs)[:, 2, 0]


def matched_wilson_rout_by_hand(points):
    """The same with matched devices in the beta form (rpi = beta/gm)."""
    device = {"gm": points["gm"], "rpi": points["beta"] / points["gm"], "ro": points["ro"]}
    return wilson_rout_by_hand(device, device, device)


def devices(values):
    """Per-device values ``{"Q1": {"gm": ..., "rpi": ..., "ro": ...}}`` from symbol values (gm_Q1, ...)."""
    return {owner: {parameter: values[name] for parameter, name in symbols.items()}
            for owner, symbols in owners(values).items()}


def bjt_cascode_rout_by_hand(beta, gm, ro):
    """Q1 (c=x, base and emitter AC ground) under Q2 (c=out, b AC ground, e=x); 1 A into out."""
    rpi = beta / gm
    a11 = 1 / ro + 1 / rpi + gm + 1 / ro
    a12 = -1 / ro
    a21 = -1 / ro - gm
    a22 = 1 / ro
    det = a11 * a22 - a12 * a21
    return a11 / det


def mos_cascode_rout_by_hand(gm, ro, gmb=0.0):
    """M1 (d=x, gate and source AC ground) under M2 (d=out, g AC ground, s=x, bulk at source or ground)."""
    a11 = 1 / ro + gm + gmb + 1 / ro
    a12 = -1 / ro
    a21 = -(gm + gmb) - 1 / ro
    a22 = 1 / ro
    return a11 / (a11 * a22 - a12 * a21)


# -- approximations of textbook circuits -----------------------------------------------------
def test_wilson_output_resistance_is_beta_ro_over_two():
    # Gray, Hurst, Lewis and Meyer, Analysis and Design of Analog ICs, 5th ed., ch. 4 (Wilson current
    # source): Rout ~ beta*ro/2 (equation number from memory, not checked)
    exact = output_resistance(read_netlist(EXAMPLES / "wilson_mirror.cir"), "Vout", options(beta=True))
    points = bjt_points()
    by_hand = matched_wilson_rout_by_hand(points)
    np.testing.assert_allclose(exact.evaluate(points), by_hand, rtol=1e-9)
    a = approximate(exact)
    assert sympy.simplify(a.expr - beta * ro / 2) == 0
    assert 0 < a.error <= 0.10
    assert holds(remeasure(a, by_hand, points), a.error)
    assert a.kept == ((1, 6), (1, 5))
    assert a.admitted > 1000 and a.refined > 0


def test_bjt_cascode_is_beta_ro_and_more_exactly_beta_plus_one_ro():
    # Gray, Hurst, Lewis and Meyer, 5th ed., ch. 4 (cascode current source): Rout ~ beta*ro at most,
    # ro2*[1 + gm2*(ro1 || rpi2)] + (ro1 || rpi2) exactly for this model (from memory)
    exact = output_resistance(read_netlist(DECKS / "bjt_cascode.cir"), "Vout", options(beta=True))
    points = bjt_points()
    by_hand = bjt_cascode_rout_by_hand(points["beta"], points["gm"], points["ro"])
    np.testing.assert_allclose(exact.evaluate(points), by_hand, rtol=1e-9)
    b, g, r = points["beta"], points["gm"], points["ro"]
    par = r * (b / g) / (r + b / g)
    np.testing.assert_allclose(by_hand, r * (1 + g * par) + par, rtol=1e-9)
    a = approximate(exact)
    assert sympy.simplify(a.expr - beta * ro) == 0
    assert holds(remeasure(a, by_hand, points), a.error) and a.error <= 0.1
    # the common-base limit (ideal current source at the emitter) at a 2 % tolerance: (beta + 1)*ro
    fed = output_resistance(read_netlist(DECKS / "bjt_emitter_fed.cir"), "Vout", options(beta=True))
    tight = approximate(fed, tolerance=0.02)
    assert sympy.simplify(tight.expr - (beta + 1) * ro) == 0
    fed_exact = fed.evaluate(points)
    np.testing.assert_allclose(fed_exact, (b + 1) * r + b / g, rtol=1e-9)  # ro*(1 + gm*rpi) + rpi, by hand
    assert holds(remeasure(tight, fed_exact, points), tight.error) and tight.error <= 0.02


@pytest.mark.parametrize("body", [True, False])
def test_mos_cascode_is_gm_ro_squared(body):
    # Razavi, Design of Analog CMOS Integrated Circuits, cascode stage section:
    # Rout = ro1 + ro2 + (gm2 + gmb2)*ro1*ro2 ~ (gm + gmb)*ro^2 (from memory)
    exact = output_resistance(read_netlist(EXAMPLES / "mos_cascode.cir"), "Vout", options(gmb=body))
    points = mos_points(body=body)
    by_hand = mos_cascode_rout_by_hand(points["gm"], points["ro"], points.get("gmb", 0.0))
    np.testing.assert_allclose(exact.evaluate(points), by_hand, rtol=1e-9)
    a = approximate(exact)
    expected = (gm + gmb) * ro**2 if body else gm * ro**2
    assert sympy.simplify(a.expr - expected) == 0
    assert holds(remeasure(a, by_hand, points), a.error) and a.error <= 0.1


def test_regulated_cascode_is_gm_squared_ro_cubed():
    # Sackinger and Guggenbuhl, IEEE JSSC 1990 (regulated cascode): Rout ~ gm2*ro2*ro1*(1 + A) with the
    # booster gain A = gm3*ro3 for an ideal current-source load; Razavi, regulated-cascode section
    # (both from memory)
    deck = read_netlist(DECKS / "mos_regulated_cascode.cir")
    exact = output_resistance(deck, "Vout", options(gmb=False))
    points = mos_points(body=False)
    g, r = points["gm"], points["ro"]
    # by hand: nodes x (M1 drain), g2 (booster output), out; 1 A into out; M3 gate at x, load ideal
    n = len(g)
    M = np.zeros((n, 3, 3))
    M[:, 0, 0] = 1 / r + g + 1 / r      # x: ro1, M2 source (gm2*(vg2 - vx)), ro2
    M[:, 0, 1] = -g
    M[:, 0, 2] = -1 / r
    M[:, 1, 0] = g                       # g2: M3 drain current gm3*vx, ro3
    M[:, 1, 1] = 1 / r
    M[:, 2, 0] = -g - 1 / r              # out: M2 drain gm2*(vg2 - vx), ro2
    M[:, 2, 1] = g
    M[:, 2, 2] = 1 / r
    rhs = np.zeros((n, 3, 1))
    rhs[:, 2, 0] = 1.0
    by_hand = np.linalg.solve(M, rhs)[:, 2, 0]
    np.testing.assert_allclose(exact.evaluate(points), by_hand, rtol=1e-6)  # the hand solve cancels digits
    a = approximate(exact)
    assert sympy.simplify(a.expr - gm**2 * ro**3) == 0
    assert holds(remeasure(a, by_hand, points), a.error) and a.error <= 0.1
    # with the body effect kept the leading term is unchanged (gmb enters one order lower)
    with_body = approximate(output_resistance(deck, "Vout", options()))
    assert sympy.simplify(with_body.expr - gm**2 * ro**3) == 0


def test_regulated_cascode_with_ideal_booster():
    # Sackinger and Guggenbuhl, IEEE JSSC 1990: Rout ~ (A + 1)*gm*ro^2 for booster gain A (from memory)
    exact = output_resistance(read_netlist(DECKS / "mos_regulated_ideal.cir"), "Vout", options(gmb=False))
    a = approximate(exact, ["A >> 1"])
    assert sympy.simplify(a.expr - A * gm * ro**2) == 0
    rng = np.random.default_rng(FRESH_SEED)
    points = mos_points(body=False)
    points["A"] = _loguniform(rng, 30, 1e4, len(points["gm"]))
    by_hand = points["ro"] * 2 + (points["A"] + 1) * points["gm"] * points["ro"] ** 2  # ro1 + ro2 + (A+1)gm ro1 ro2
    np.testing.assert_allclose(exact.evaluate(points), by_hand, rtol=1e-9)
    assert holds(remeasure(a, by_hand, points), a.error)


def test_simple_mirror_gain_is_one_minus_two_over_beta():
    # Gray, Hurst, Lewis and Meyer, 5th ed., ch. 4 (simple current mirror): Iout/Iin = 1/(1 + 2/beta)
    # with ro ignored (from memory); the epsilon side is tested in test_transfer_error.py
    gain = current_gain(read_netlist(EXAMPLES / "simple_mirror.cir"), "Vout", "Iref", options(beta=True))
    points = bjt_points()
    b, g, r = points["beta"], points["gm"], points["ro"]
    by_hand = g / (g + 2 * g / b + 1 / r)  # node in: gm1 + 2/rpi + 1/ro1; output gm2*v
    np.testing.assert_allclose(gain.evaluate(points), by_hand, rtol=1e-9)
    a = approximate(gain, tolerance=0.001)
    assert holds(remeasure(a, by_hand, points), a.error) and a.error <= 0.001


# -- the search and its inputs ------------------------------------------------------------
def test_tighter_tolerance_keeps_more_terms_and_full_tolerance_keeps_fewest():
    exact = output_resistance(read_netlist(EXAMPLES / "wilson_mirror.cir"), "Vout", options(beta=True))
    loose = approximate(exact, tolerance=0.2)
    tight = approximate(exact, tolerance=0.001)
    assert sum(k for k, _ in tight.kept) > sum(k for k, _ in loose.kept)
    assert tight.error <= 0.001
    points = bjt_points(2000)
    assert holds(remeasure(tight, matched_wilson_rout_by_hand(points), points),
                 tight.error)


def test_same_seed_same_result_and_backends_agree():
    deck = read_netlist(EXAMPLES / "wilson_mirror.cir")
    results = [approximate(output_resistance(deck, "Vout", options(beta=True), backend=b), seed=3)
               for b in ("flint", "sympy", "flint")]
    assert results[0].error == results[2].error
    assert all(sympy.simplify(r.expr - beta * ro / 2) == 0 for r in results)
    assert results[0].error == pytest.approx(results[1].error, rel=1e-9)


def test_unmatched_devices_reduce_to_the_matched_form():
    exact = output_resistance(read_netlist(EXAMPLES / "wilson_mirror.cir"), "Vout", SmallSignalOptions())
    a = approximate(exact)
    same = {s: sympy.Symbol(parse_symbol(s.name).parameter) for s in a.expr.free_symbols}
    reduced = sympy.simplify(a.expr.xreplace(same).subs(sympy.Symbol("rpi"), beta / gm))
    # Gray et al., 5th ed., ch. 4: beta*ro/2; the unmatched search keeps the (beta + 1)/beta refinement
    assert sympy.simplify(reduced - (beta + 1) * ro / 2) == 0
    # the claimed worst error is the error at the reported point, the exact value solved by hand there
    worst = devices({name: np.array([value]) for name, value in a.worst_point.items()})
    by_hand = wilson_rout_by_hand(worst["Q1"], worst["Q2"], worst["Q3"])
    point = {name: np.array([value]) for name, value in a.worst_point.items()}
    assert remeasure(a, by_hand, point) == pytest.approx(a.error, rel=1e-9)
    assert 0.01 < a.error <= 0.1


def test_user_assumption_changes_the_answer():
    # with beta far above gm*ro (no "ro >> rpi"), the Wilson behaves like a MOS-style cascode: ~ gm*ro^2
    exact = output_resistance(read_netlist(EXAMPLES / "wilson_mirror.cir"), "Vout", options(beta=True))
    a = approximate(exact, ["gm*ro in [30, 100]", "beta in [1e4, 1e5]"], defaults=False)
    assert sympy.simplify(a.expr - gm * ro**2) == 0
    assert {s.origin for s in a.assumptions} == {"user", "reference"}


def test_parse_assumption_forms():
    assert (parse_assumption("gm*ro >> 1").low, parse_assumption("gm*ro >> 1").high) == (30.0, 1e4)
    a = parse_assumption("RE >> 2/gm")
    assert dict(a.powers) == {"RE": 1.0, "gm": 1.0} and a.low == pytest.approx(60.0)
    b = parse_assumption("1/gm << RE")
    assert dict(b.powers) == {"RE": 1.0, "gm": 1.0} and b.low == 30.0
    assert parse_assumption("beta in [50, 200]").low == 50.0
    c = parse_assumption("3m < gm < 5m")
    assert (c.low, c.high) == pytest.approx((3e-3, 5e-3))
    assert parse_assumption("A = 100").low == parse_assumption("A = 100").high == 100.0


@pytest.mark.parametrize("text", ["", "gm*ro > 1 >", "gm + ro >> 1", "gm >> -ro", "1 >> 2", "gm ro >> 1",
                                  "beta in [200, 50]", "gm*ro is big"])
def test_bad_assumptions_are_clear_errors(text):
    with pytest.raises(AssumptionError) as info:
        parse_assumption(text)
    assert isinstance(info.value, SymbiasError) and "\n" not in str(info.value)


def test_inconsistent_assumptions_are_reported():
    exact = output_resistance(read_netlist(EXAMPLES / "wilson_mirror.cir"), "Vout", options(beta=True))
    with pytest.raises(AssumptionError, match="no point satisfies"):
        approximate(exact, ["gm*ro in [30, 100]"])  # and the default ro >> rpi with beta >= 30


def test_defaults_follow_hand_analysis():
    texts = [a.text for a in default_assumptions(["beta", "gm", "ro"])]
    assert texts == ["gm*ro >> 1", "beta >> 1", "ro >> beta/gm"]
    model = magnitude_model(["beta", "gm", "ro"])
    unit, drawn = model.admitted_sample(500, seed=FRESH_SEED)
    v = model.values(unit)
    assert np.all((v["beta"] >= 30 * (1 - 1e-9)) & (v["beta"] <= 1000 * (1 + 1e-9)))
    assert np.all(v["gm"] * v["ro"] / v["beta"] >= 30 * (1 - 1e-9))
    assert drawn >= len(unit) == 500


def test_frequency_dependent_results_go_coefficient_by_coefficient():
    # a result in s is approximated per coefficient of s (tests/approx/test_approx_frequency.py checks the forms);
    # s itself never enters a magnitude box
    from symbias.approx import FrequencyApproximation
    from symbias.errors import AnalysisError

    exact = output_resistance(read_netlist(EXAMPLES / "simple_mirror.cir"), "Vout", options(capacitances=True))
    result = approximate(exact, samples=200)
    assert isinstance(result, FrequencyApproximation) and result.error <= result.tolerance
    with pytest.raises(AnalysisError, match="frequency"):
        magnitude_model(["gm", "s"])


# -- the fast paths of the search (each against a plain computation written here) -----------------
def _reference_sample(model, n, seed, max_draws=None):
    """The documented rule, batch by batch: seeded uniform unit points (batches of max(n, 256)) until n pass
    every check or max_draws (default 200*n) were drawn; each check tested on its monomial's value."""
    rng = np.random.default_rng(seed)
    limit = 200 * n if max_draws is None else max_draws
    kept, drawn, count = [], 0, 0
    while count < n and drawn < limit:
        batch = rng.random((max(n, 256), len(model.factors)))
        drawn += len(batch)
        values = model.values(batch)
        ok = np.ones(len(batch), dtype=bool)
        for check in model.checks:
            monomial = np.prod([values[name] ** power for name, power in check.powers], axis=0)
            ok &= (monomial >= check.low * (1 - 1e-8)) & (monomial <= check.high * (1 + 1e-8))
        kept.append(batch[ok])
        count += int(ok.sum())
    return np.vstack(kept)[:n], drawn


@pytest.mark.parametrize("max_draws", [None, 5000])
def test_sampling_in_blocks_draws_the_documented_points(max_draws):
    # six unmatched bipolar devices: 16 checks, well under 1 % of the box passes, so many batches are drawn
    names = [f"{p}_Q{k}" for k in range(1, 7) for p in ("gm", "ro", "rpi")]
    model = magnitude_model(names)
    assert len(model.checks) == 16
    unit, drawn = model.admitted_sample(300, seed=FRESH_SEED, max_draws=max_draws)
    expected, expected_drawn = _reference_sample(model, 300, FRESH_SEED, max_draws)
    assert drawn == expected_drawn
    assert drawn > 20 * 300 if max_draws is None else drawn == 5100  # many batches, or up to the limit
    np.testing.assert_array_equal(unit, expected)
    assert np.all(model.admissible(model.logs(unit)))


def test_pair_screen_is_exact_where_it_decides():
    rng = np.random.default_rng(FRESH_SEED)
    rn = np.exp(rng.normal(0, 0.1, (500, 40)))
    rd = np.exp(rng.normal(0, 0.1, (500, 30)))
    rn[:, 3] = rd[:, 7] * (1 + rng.uniform(-0.02, 0.02, 500))  # a pair within 2 %
    full = np.abs(rn[:, :, None] / rd[:, None, :] - 1).max(axis=0)  # every pair at every point
    for tolerance in (0.05, 0.3, 1e-6):
        screened = pair_errors(rn, rd, tolerance)
        inside = full <= tolerance
        np.testing.assert_array_equal(screened[inside], full[inside])
        assert np.all(screened[~inside] > tolerance) and np.all(screened <= full)
        assert np.argmin(screened) == np.argmin(full) and screened.min() == full.min()


def test_products_and_subset_sums_match_plain_numpy():
    rng = np.random.default_rng(FRESH_SEED)
    a, b = rng.normal(size=(300, 18)), rng.integers(0, 3, size=(18, 1000)).astype(float)
    np.testing.assert_allclose(dot(a, b), a @ b, rtol=1e-12, atol=1e-12)  # cut into single-thread row blocks
    columns = rng.normal(size=(50, 10))
    subsets = [(0, 4, 9), (1, 2, 3), (5, 6, 8)]
    np.testing.assert_array_equal(subset_sums(columns, subsets),
                                  np.stack([columns[:, list(s)].sum(axis=1) for s in subsets], axis=1))


def test_without_a_short_form_the_exact_form_is_kept_and_printed_only_on_demand():
    # 8-node cascoded mirror with a beta helper, every device's symbols distinct (1595/558 terms, 18 symbols):
    # no short form is within 10 % over the default ranges (docs/approximation.md, Limits)
    exact = output_resistance(read_netlist(DECKS / "bjt_cascode_mirror_helper.cir"), "Vout", SmallSignalOptions())
    a = approximate(exact)
    assert a.kept == ((1595, 1595), (558, 558)) and a.error == 0.0
    assert "expr" not in vars(a)  # the long sympy form is built on first use only
    assert a.expr == exact.expr


# -- at a numeric operating point ----------------------------------------------------------------
def at_bias(path, numbers=None):
    """A circuit and its symbol values at the DC operating point: device values plus netlist numbers."""
    circuit = read_netlist(path)
    point = operating_point(circuit, values=numbers or {})
    values = dict(numbers or {})
    values.update(bias_values(circuit, point.small_signal_values(), SmallSignalOptions()))
    return circuit, values


def nominal_points(values, spread, n=4000, seed=FRESH_SEED):
    """Each symbol log-uniform in [v*(1 - spread), v*(1 + spread)], drawn here."""
    rng = np.random.default_rng(seed)
    return {name: value * _loguniform(rng, 1 - spread, 1 + spread, n) for name, value in sorted(values.items())}


def test_wilson_at_its_operating_point():
    circuit, values = at_bias(EXAMPLES / "wilson_mirror.cir")
    exact = output_resistance(circuit, "Vout", SmallSignalOptions())
    a = approximate(exact, nominal_ranges(values, 0.3))
    # one range per symbol; the defaults give way (ro >> rpi among them, which this bias point does not meet)
    assert values["ro_Q1"] / values["rpi_Q1"] < 30
    assert [s.origin for s in a.assumptions] == ["user"] * 9
    # Gray, Hurst, Lewis and Meyer, 5th ed., ch. 4: beta3*ro3/2 once Q1 and Q2 match (from memory)
    g1, g2, g3, r3, p3 = sympy.symbols("gm_Q1 gm_Q2 gm_Q3 ro_Q3 rpi_Q3")
    assert sympy.simplify(a.expr.subs(g2, g1) - g3 * p3 * r3 / 2) == 0
    # the claimed worst error holds at fresh points of the nominal box, the exact value solved by hand
    points = nominal_points(values, 0.3)
    q = devices(points)
    by_hand = wilson_rout_by_hand(q["Q1"], q["Q2"], q["Q3"])
    np.testing.assert_allclose(exact.evaluate(points), by_hand, rtol=1e-9)
    assert holds(remeasure(a, by_hand, points), a.error) and a.error <= 0.1
    assert float(a.relative_error(values)) <= a.error  # the bias point itself is inside the box


def test_degenerated_mirror_at_its_operating_point_with_a_numeric_resistor():
    # RE is a netlist symbol; its number sits beside the device values, as derive --at-bias --set gives them
    circuit, values = at_bias(EXAMPLES / "degenerated_mirror.cir", {"RE": 2e3})
    exact = output_resistance(circuit, "Vout", SmallSignalOptions())
    assert "RE" in {s.name for s in exact.symbols}
    a = approximate(exact, nominal_ranges(values, 0.2, names=[s.name for s in exact.symbols]))
    assert {s.origin for s in a.assumptions} == {"user"} and "RE" in a.worst_point
    points = nominal_points(values, 0.2, n=1000)
    reference = reference_value(circuit, "output_resistance", ("Vout",), points, SmallSignalOptions(),
                                precision="float64").real
    np.testing.assert_allclose(exact.evaluate(points), reference, rtol=1e-9)
    assert holds(remeasure(a, reference, points), a.error) and a.error <= 0.1


def test_nominal_ranges_of_the_named_symbols_only():
    values = {"gm_Q1": 1e-3, "VEE": -5.0, "gmb_M1": 0.0}
    with pytest.raises(AssumptionError, match="VEE"):
        nominal_ranges(values)
    (only,) = nominal_ranges(values, 0.1, names=["gm_Q1"])
    assert (only.powers, only.origin) == ((("gm_Q1", 1.0),), "user")
    assert (only.low, only.high) == pytest.approx((0.9e-3, 1.1e-3))
    with pytest.raises(AssumptionError, match="spread"):
        nominal_ranges(values, 1.5, names=["gm_Q1"])
