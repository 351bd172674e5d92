"""Noise against published forms and the constants of CODATA 2018.

References:

* CODATA 2018 (exact SI values since 2019): k = 1.380649e-23 J/K, q = 1.602176634e-19 C;
  Johnson-Nyquist thermal noise ``4 k T R`` (V^2/Hz) of a resistor (common practice);
* shot noise ``2 q I`` of a collector current (Schottky; common practice);
* a 1:1 MOS mirror's output noise current is about twice its output
  device's own channel noise ``4 k T gamma gm`` (common practice);
* emitter degeneration divides a BJT source's collector shot-noise
  contribution by about ``(1 + gm RE)^2`` (from memory);
* the closed forms ``sum H_i(0)^2 S_i`` evaluated at the bias point equal the
  numbers of the numeric solve (two independent routes).
"""

from __future__ import annotations

import math
import pickle
import warnings

import numpy as np
import pytest

from symbias.devices.options import SmallSignalOptions
from symbias.noise import band_integral
from symbias.pipeline import target_from_text
from symbias.pipeline.noise import NoiseRequest, noise_analysis, output_noise_density
from symbias.pipeline.targets import design_inputs

K_BOLTZMANN = 1.380649e-23  # CODATA 2018, J/K (exact)
Q_ELECTRON = 1.602176634e-19  # CODATA 2018, C (exact)
T_300 = 300.15  # 27 degC


def _noise(text: str, **request):
    target = target_from_text(text)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return noise_analysis(target, design_inputs(target), NoiseRequest(**request))


def test_resistor_thermal_noise_is_4ktr():
    result = _noise("1k resistor\nI1 0 a 1m\nR1 a 0 1k\n", output="a", start=1.0, stop=1e6, per_decade=2)
    assert result.spectrum.total[0] == pytest.approx(4 * K_BOLTZMANN * T_300 * 1e3, rel=1e-12)
    assert np.allclose(result.spectrum.total, result.spectrum.total[0], rtol=1e-12)  # white
    # integrated over the band: 4kTR (f2 - f1)
    assert result.integrated == pytest.approx(4 * K_BOLTZMANN * T_300 * 1e3 * (1e6 - 1.0), rel=1e-9)


def test_resistor_noise_current_into_a_short_is_4kt_over_r_at_any_temperature():
    text = "resistor into a short\nV1 a 0 1\nR1 a b 10k\nVout b 0 0\n"
    target = target_from_text(text)
    inputs = design_inputs(target, temperature=85.0)
    density = output_noise_density(target, inputs, 1e3)
    assert density == pytest.approx(4 * K_BOLTZMANN * (85.0 + 273.15) / 1e4, rel=1e-12)


def test_collector_shot_noise_is_2qic():
    # the base is held by an ideal source, so only the collector's shot noise reaches the output
    text = "npn with a fixed base\nVB b 0 0.7\nQ1 c b 0 QN\nVout c 0 2\n.model QN npn (IS=1e-16 BF=100 VAF=50)\n"
    result = _noise(text, start=1e3, stop=1e4, per_decade=1)
    ic = abs(result.bias.point.device("Q1").currents["c"])
    assert result.spectrum.total[0] == pytest.approx(2 * Q_ELECTRON * ic, rel=1e-12)
    assert [row.name for row in result.spectrum.ranked(1e3)][0] == "Q1 collector shot"


def test_one_to_one_mos_mirror_output_noise_is_about_twice_the_output_device():
    text = """1:1 NMOS mirror
Vdd vdd 0 3
Iref vdd in 100u
M1 in in 0 0 NM W=20u L=2u
M2 out in 0 0 NM W=20u L=2u
Vout out 0 1.5
.model NM nmos (VTO=0.6 KP=150u LAMBDA=0.02)
"""
    result = _noise(text, at=1e3, start=1e2, stop=1e4, per_decade=1, options=SmallSignalOptions(match=True),
                    approximate=True)
    gm2 = result.bias.point.device("M2").small_signal["gm"]
    own = 4 * K_BOLTZMANN * T_300 * (2 / 3) * gm2
    assert result.density_at / own == pytest.approx(2.0, rel=0.05)  # common practice: "about twice"
    # in closed form, to leading order: both channel noises reach the output whole
    import sympy

    white = result.formula.white_expr(leading=True)
    gm, kt, gamma = sympy.symbols("gm kT gamma_n")
    assert sympy.simplify(white - 2 * 4 * kt * gamma * gm) == 0


def test_emitter_degeneration_divides_collector_shot_noise_by_one_plus_gm_re_squared():
    # beta and ro large, as the published form assumes (with finite beta, RE || rpi takes the place of RE)
    base = "npn source{}\nVB b 0 {}\nQ1 c b e QN\n{}Vout c 0 3\n.model QN npn (IS=1e-16 BF=20000 VAF=2000)\n"
    plain = _noise(base.format("", 0.70, "Vsh e 0 0\n"), start=1e3, stop=1e4, per_decade=1)
    degenerated = _noise(base.format(" with RE", 0.95, "RE e 0 2.5k\n"), start=1e3, stop=1e4, per_decade=1)
    part = {r.name: r.density for r in degenerated.spectrum.ranked(1e3)}["Q1 collector shot"]
    q1 = degenerated.bias.point.device("Q1")
    own = 2 * Q_ELECTRON * abs(q1.currents["c"])
    gm = q1.small_signal["gm"]
    assert own / part == pytest.approx((1 + gm * 2.5e3) ** 2, rel=0.05)  # from memory
    assert {r.name: r.density for r in plain.spectrum.ranked(1e3)}["Q1 collector shot"] == pytest.approx(
        2 * Q_ELECTRON * abs(plain.bias.point.device("Q1").currents["c"]), rel=1e-3)


def test_closed_form_total_equals_the_numeric_spectrum_at_low_frequency():
    text = """degenerated NPN mirror with a base-current helper
Vcc vcc 0 5
Iref vcc in 50u
Q3 vcc in b 0 QN
Q1 in b e1 QN
Q2 out b e2 QN
R1 e1 0 2k
R2 e2 0 2k
Rb b 0 100k
Vout out 0 2.5
.model QN npn (IS=1e-16 BF=80 VAF=40 KF=2e-15 AF=1)
"""
    result = _noise(text, start=1.0, stop=10.0, per_decade=1, options=SmallSignalOptions())
    values = {**result.bias.values, "kT": K_BOLTZMANN * T_300}
    for device in ("Q1", "Q2", "Q3"):  # the flicker coefficient of each device, KF*IB^AF
        values[f"Kf_{device}"] = 2e-15 * abs(result.bias.point.device(device).currents["b"])
    values["f"] = 1.0
    closed = result.formula.white_value(values) + result.formula.flicker_value(values)
    # the closed forms write shot noise as 2kT gm and 2kT/rpi (= 2qIC, 2qIB when gm = IC/VT, beta = IC/IB)
    assert closed == pytest.approx(result.spectrum.total[0], rel=2e-3)
    assert len(result.formula.terms) == len(result.spectrum.sources) == 3 * 3 + 3


def test_flicker_corner_and_band_integral_of_a_known_spectrum():
    # white 2qIC plus flicker KF*IB/f of one BJT with a fixed base: corner = KF*IB/(2 q IC) (common practice);
    # the base resistance is absent, the base shot and flicker noise flow into the base source
    text = "npn, flicker\nVB b 0 0.7\nQ1 c b 0 QN\nRX c x 1\nVout x 0 2\n.model QN npn (IS=1e-16 BF=100 KF=1e-17 AF=1)\n"
    result = _noise(text, start=1.0, stop=1e6, per_decade=10)
    assert result.corner_note == "no flicker noise at the output"  # shorted by the base source: no path to the output
    text = text.replace("VB b 0 0.7", "IB 0 b 1u")
    result = _noise(text, start=1.0, stop=1e6, per_decade=10)
    spectrum = result.spectrum
    white = (spectrum.gains * spectrum.white[:, None]).sum(axis=0)
    flicker = (spectrum.gains * spectrum.flicker[:, None]).sum(axis=0)
    assert result.corner == pytest.approx(flicker[0] / white[0], rel=1e-6)  # flat gains: c/f = w
    f = spectrum.frequencies
    exact = white[0] * (f[-1] - f[0]) + flicker[0] * math.log(f[-1] / f[0])
    assert result.integrated == pytest.approx(exact, rel=1e-9)
    assert band_integral(np.array([1.0, 10.0]), np.array([3.0, 3.0])) == pytest.approx(27.0)


def test_noise_result_pickles():
    result = _noise("r\nI1 0 a 1m\nR1 a 0 1k\n", output="a", start=1.0, stop=10.0, per_decade=1)
    again = pickle.loads(pickle.dumps(result))
    assert again.density_at == result.density_at
