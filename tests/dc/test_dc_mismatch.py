"""Mismatch sampling by Pelgrom's law and its propagation through a mirror, by batched Monte Carlo.

Sources: Pelgrom, Duinmaijer and Welbers, "Matching properties of MOS
transistors", IEEE JSSC 24(5), 1989: for two devices of gate area W L,
``sigma(dVT) = AVT / sqrt(W L)`` and ``sigma(dbeta/beta) = ABETA / sqrt(W L)``;
the same area law for the saturation-current ratio of two bipolar
transistors (common practice).  Propagation to a mirror's output current,
``sigma(dI/I)^2 = sigma(dbeta/beta)^2 + (gm/I)^2 sigma(dVT)^2`` with
``gm/I = 2/Vov`` in saturation (common practice; the first-order expansion
of the square law), and ``sigma(dI/I) = sigma(dIS/IS)`` for a bipolar mirror
(common practice).
"""

from __future__ import annotations

import numpy as np
import pytest

from symbias.dc.mismatch import mismatch_samples, mismatch_sigmas
from symbias.dc.operating_point import operating_point, operating_points
from symbias.errors import ProcessError
from symbias.netlist import parse_netlist
from symbias.process import demo_process_path, load_process

COUNT = 40_000
#: Relative sampling error of a standard deviation from COUNT draws is about 1/sqrt(2 COUNT) = 0.35 %.
SIGMA_REL = 0.03

MOS_PAIR = """pair
I1 0 a 10u
M1 a a 0 0 NCH W=4u L=1u
M2 b a 0 0 NCH W=4u L=1u m=2
Vb b 0 1
.model NCH nmos (VTO=0.6 KP=100u AVT=8e-9 ABETA=1.5e-8)
"""


def test_pelgrom_area_law_for_a_mos_pair():
    samples = mismatch_samples(parse_netlist(MOS_PAIR), count=COUNT, seed=11)
    # M1: W L = 4 um^2; M2 has m=2, i.e. 8 um^2: the pair's difference has sigma^2 = AVT^2 (1/(2*4) + 1/(2*8)) / um^2
    expected_vt = 8e-9 * np.sqrt(1 / (2 * 4e-12) + 1 / (2 * 8e-12))
    assert np.std(samples["M1.VTO"] - samples["M2.VTO"]) == pytest.approx(expected_vt, rel=SIGMA_REL)
    beta = samples["M1.KP"] / samples["M2.KP"] - 1
    assert np.std(beta) == pytest.approx(1.5e-8 * np.sqrt(1 / (2 * 4e-12) + 1 / (2 * 8e-12)), rel=SIGMA_REL)
    # equal devices: sigma(dVT) = AVT / sqrt(W L), the law as Pelgrom writes it
    equal = parse_netlist(MOS_PAIR.replace(" m=2", ""))
    draws = mismatch_samples(equal, count=COUNT, seed=12)
    assert np.std(draws["M1.VTO"] - draws["M2.VTO"]) == pytest.approx(8e-9 / np.sqrt(4e-12), rel=SIGMA_REL)
    assert abs(np.mean(draws["M1.VTO"]) - 0.6) < 5 * 8e-9 / np.sqrt(8e-12) / np.sqrt(COUNT)


def test_bipolar_saturation_current_ratio_scales_with_emitter_area():
    c = parse_netlist("p\nI1 0 a 10u\nQ1 a a 0 QN 4\nQ2 b a 0 QN 4\nVb b 0 1\n.model QN npn (IS=1e-16 AIS=0.02)\n")
    samples = mismatch_samples(c, count=COUNT, seed=5)
    ratio = samples["Q2.IS"] / samples["Q1.IS"] - 1
    assert np.std(ratio) == pytest.approx(0.02 / np.sqrt(4), rel=SIGMA_REL)


def test_samples_are_seeded_and_the_demo_process_gives_coefficients():
    process = load_process(demo_process_path())
    c = parse_netlist("m\nI1 0 a 10u\nM1 a a 0 0 NCH W=10u L=2u\nM2 b a 0 0 NCH W=10u L=2u\nVb b 0 2\n"
                      "Q1 c c 0 QN\nI2 0 c 1u\n.model NCH nmos\n.model QN npn\n")
    first, again = mismatch_samples(c, process, 100, seed=7), mismatch_samples(c, process, 100, seed=7)
    assert sorted(first) == ["M1.KP", "M1.VTO", "M2.KP", "M2.VTO", "Q1.IS"]
    assert all(np.array_equal(first[k], again[k]) for k in first)
    assert not np.array_equal(first["M1.VTO"], mismatch_samples(c, process, 100, seed=8)["M1.VTO"])
    nominal, sigma = mismatch_sigmas(c, process)["M1.VTO"]
    assert nominal == 0.65 and sigma == pytest.approx(9e-9 / np.sqrt(2 * 10e-6 * 2e-6), rel=1e-12)


def test_no_coefficients_is_a_clear_error():
    with pytest.raises(ProcessError, match="no device has mismatch coefficients"):
        mismatch_samples(parse_netlist("t\nI1 0 a 1m\nQ1 a a 0 QN\n.model QN npn\n"), count=10)


def test_mirror_current_spread_follows_the_propagated_pelgrom_law():
    # a simple nmos mirror without channel-length modulation: I2/I1 depends only on the devices' mismatch
    text = ("mirror\nI1 0 a 20u\nM1 a a 0 0 NCH W=8u L=2u\nM2 out a 0 0 NCH W=8u L=2u\nVout out 0 1.5\n"
            ".model NCH nmos (VTO=0.6 KP=100u LAMBDA=0 AVT=6e-9 ABETA=1e-8)\n")
    circuit = parse_netlist(text)
    nominal = operating_point(circuit)
    vov = nominal.devices["M1"].limits["vov"]
    points = operating_points(circuit, samples=mismatch_samples(circuit, count=20_000, seed=2))
    assert not points.failures
    spread = np.std(-points.branch_currents["Vout"] / 20e-6 - 1)
    area = 8e-6 * 2e-6
    pelgrom = np.sqrt((1e-8 / np.sqrt(area)) ** 2 + (2 / vov * 6e-9 / np.sqrt(area)) ** 2)
    assert spread == pytest.approx(pelgrom, rel=0.05)


def test_bipolar_mirror_spread_is_the_saturation_current_spread():
    text = ("mirror\nI1 0 a 50u\nQ1 a a 0 QN\nQ2 out a 0 QN\nVout out 0 0.7\n"
            ".model QN npn (IS=1e-16 BF=1e6 AIS=0.02)\n")
    circuit = parse_netlist(text)
    points = operating_points(circuit, samples=mismatch_samples(circuit, count=20_000, seed=4))
    spread = np.std(-points.branch_currents["Vout"] / 50e-6 - 1)
    assert spread == pytest.approx(0.02, rel=0.05)
