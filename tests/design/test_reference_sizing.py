"""Bandgap references sized for zero temperature slope, the slope confirmed in ngspice.

A bandgap reference adds a PTAT voltage to a VBE until the output's temperature slope vanishes
near room temperature (Gray, Hurst, Lewis, Meyer, *Analysis and Design of Analog Integrated
Circuits*, 5th ed., ch. 4, the zero-TC condition; from memory).  The ranking sizes each shipped
bandgap's marked variable by root finding on the DC model; here the sized circuit goes to
ngspice (Debian package) at 26.5 and 27.5 degC and the simulator's slope must be near zero.
"""

from __future__ import annotations

import pytest

from symbias.design.candidates import candidates, spec_process
from symbias.design.rank import RankRequest, rank
from symbias.design.spec import parse_spec
from symbias.simulator.deck import reference_deck
from symbias.simulator.ngspice import run_reference, simulator

SPEC = """
[block]
family = "reference"
voltage = 1.2
[supply]
min = 3.0
max = 3.6
[limits]
temperature = [-40, 125]
"""

BANDGAPS = ("widlar-bandgap", "brokaw-bandgap", "opamp-bandgap", "cmos-bandgap")


@pytest.fixture(scope="module")
def ranking():
    return rank(parse_spec(SPEC, "reference.toml"), RankRequest(only=BANDGAPS, samples=0))


def _ngspice_outputs(candidate, process, values) -> tuple[float, float]:
    """v(output) at 26.5 and 27.5 degC from ngspice's temperature sweep."""
    deck = reference_deck(candidate.circuit, process, 27.0, values, control="{control}")
    rows = run_reference(deck, "dc temp 26.5 27.5 1", [f"v({candidate.output.lower()})"])
    return float(rows[0, -1]), float(rows[-1, -1])


@pytest.mark.skipif(simulator() is None, reason="ngspice is not installed")
@pytest.mark.parametrize("identifier", BANDGAPS)
def test_sized_bandgap_has_zero_temperature_slope_in_ngspice(ranking, identifier):
    result = ranking.candidate(identifier)
    assert result.reason is None, result.reason
    assert "zero temperature slope" in " ".join(result.sizing_how.values())
    spec = ranking.spec
    candidate, = candidates(spec, only=[identifier])
    low, high = _ngspice_outputs(candidate, spec_process(spec), result.sizing)
    slope_ppm = (high - low) / 1.0 / ((high + low) / 2) * 1e6
    # a bandgap off its zero-TC point by 5 % of its PTAT term shows tens of ppm/degC
    assert abs(slope_ppm) < 2.0, slope_ppm
