"""Several DC solutions and the start-up check.

Sources: the zero-current state of self-biased references and bandgap cores
that needs a start-up circuit (common practice; Razavi, "Design of Analog
CMOS Integrated Circuits", ch. 11, supply-independent biasing); the current
of the self-biased MOS source with a source resistor,
I = 2 / (KP (W/L)_1 Rs^2) (1 - 1/sqrt(K))^2 (Razavi ch. 11), and of the
bipolar one, I = VT ln(n) / R (common practice).
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from symbias.cli import main
from symbias.dc.solutions import find_solutions, off_voltages
from symbias.devices.temperature import thermal_voltage
from symbias.netlist import read_netlist

DECKS = Path(__file__).parents[1] / "decks"


def test_bandgap_core_has_zero_low_and_working_states():
    found = find_solutions(read_netlist(DECKS / "bandgap_core.cir"))
    assert found.needs_startup
    assert len(found.states) == 3
    zero, low, working = found.states
    assert zero.zero_current and zero.exact and zero.point.voltage("vo") == pytest.approx(0.0, abs=1e-9)
    assert low.zero_current and 0.3 < low.point.voltage("vo") < 0.5  # the finite-gain amplifier's low state
    assert not working.zero_current and 1.2 < working.point.voltage("vo") < 1.3
    assert found.working is working
    for state in found.states:
        assert state.residual < 1e-12


def test_start_up_resistor_leaves_one_state():
    found = find_solutions(read_netlist(DECKS / "bandgap_core_startup.cir"))
    assert not found.needs_startup and len(found.states) == 1


def test_self_biased_bipolar_source_needs_start_up():
    found = find_solutions(read_netlist(DECKS / "bjt_ptat_selfbiased.cir"))
    assert found.needs_startup
    off = found.states[0]
    assert off.zero_current and not off.exact and off.residual < 1e-9  # held only by leakage
    assert off.point.voltage("a") == 3.0 and off.point.voltage("n1") == 0.0
    working = found.working
    # I = VT ln(8) / R through R, up to the base currents (beta 100 and 50)
    current = working.point.element_currents["R"]
    assert current == pytest.approx(thermal_voltage(27.0) * math.log(8) / 1e3, rel=0.03)


def test_self_biased_mos_source_current_and_start_up():
    found = find_solutions(read_netlist(DECKS / "mos_beta_multiplier.cir"))
    assert found.needs_startup
    working = found.working
    expected = 2 / (120e-6 * 5 * 5e3**2) * (1 - 1 / math.sqrt(4)) ** 2
    assert working.point.element_currents["Rs"] == pytest.approx(expected, rel=1e-6)
    assert all(d.region == "saturation" for d in working.point.devices.values())


def test_off_voltages_follow_the_junctions():
    c = read_netlist(DECKS / "mos_beta_multiplier.cir")
    assert off_voltages(c) == {"0": 0.0, "vdd": 3.3, "a": 3.3, "b": 0.0, "s": 0.0}


def test_bias_all_flags_start_up(capsys):
    assert main(["bias", str(DECKS / "bandgap_core.cir"), "--all"]) == 0
    out = capsys.readouterr().out
    assert "needs a start-up circuit" in out and "3 DC solution(s)" in out
