"""The junction diode at DC: the Shockley equation, series resistance, temperature, breakdown, process entries,
and ngspice on the same decks.

Sources: the diode i-v relation ``i = IS (exp(v/(n VT)) - 1)`` and the
small-signal resistance ``rd = n VT / ID`` (Sedra and Smith, Microelectronic
Circuits, the diodes chapter: terminal characteristics and the small-signal
model; equation numbers not checked - common practice); a forward drop that
falls by about 2 mV per kelvin at constant current (common practice).
ngspice (Debian) runs the decks written by :func:`symbias.simulator.deck.reference_deck`
with the tolerances of ``tests/dc/test_ngspice_dc.py`` (1 mV, 0.5 %).
"""

from __future__ import annotations

import math
import warnings
from pathlib import Path

import numpy as np
import pytest

from symbias.dc.operating_point import operating_point
from symbias.simulator.deck import reference_deck
from symbias.simulator.ngspice import run_reference, simulator
from symbias.dc.sweep import sweep_temperature
from symbias.devices.temperature import thermal_voltage
from symbias.errors import ModelWarning, ProcessError
from symbias.netlist import parse_netlist, read_netlist
from symbias.process import demo_process_path, load_process, parse_process

DECKS = Path(__file__).parents[1] / "decks"
VOLTAGE_TOL = 1e-3
CURRENT_REL = 5e-3
needs_ngspice = pytest.mark.skipif(simulator() is None, reason="ngspice is not on PATH")


def _forced(current: float, model: str, instance: str = "") -> object:
    return parse_netlist(f"d\nI1 0 a {current}\nD1 a 0 DX {instance}\n.model DX D ({model})\n")


@pytest.mark.parametrize("current", [1e-9, 1e-6, 1e-3])
@pytest.mark.parametrize("n", [1.0, 1.8])
def test_forward_voltage_is_the_shockley_equation(current, n):
    op = operating_point(_forced(current, f"IS=2e-15 N={n}"))
    vt = thermal_voltage(27.0)
    # i = IS (exp(v/(n VT)) - 1)  ->  v = n VT ln(i/IS + 1); GMIN (1 pS) shunts the junction
    shockley = n * vt * math.log((current - 1e-12 * op.voltage("a")) / 2e-15 + 1.0)
    assert op.voltage("a") == pytest.approx(shockley, rel=1e-9)
    rd = op.devices["D1"].small_signal["rd"]
    # rd = n VT / ID (Sedra and Smith), exactly n VT / (ID + IS) for the full exponential
    assert 1.0 / rd == pytest.approx((current - 1e-12 * op.voltage("a") + 2e-15) / (n * vt) + 1e-12, rel=1e-9)
    assert op.devices["D1"].region == "forward"


def test_series_resistance_is_an_internal_node_exactly_like_a_resistor():
    with_rs = operating_point(_forced(1e-3, "IS=1e-14 RS=25", "area=2.5"))
    external = operating_point(parse_netlist("d\nI1 0 a 1m\nR1 a j 10\nD1 j 0 DX area=2.5\n.model DX D (IS=1e-14)\n"))
    assert with_rs.voltage("a") == pytest.approx(external.voltage("a"), rel=1e-12)
    # rd is the whole anode-cathode resistance: RS/area plus the junction's
    assert with_rs.devices["D1"].small_signal["rd"] == pytest.approx(
        10.0 + external.devices["D1"].small_signal["rd"], rel=1e-9)
    assert "d1#a" not in with_rs.node_voltages


def test_area_and_m_multiply_the_saturation_current():
    one = operating_point(_forced(1e-4, "IS=1e-14"))
    four = operating_point(_forced(1e-4, "IS=1e-14", "area=2 m=2"))
    assert one.voltage("a") - four.voltage("a") == pytest.approx(thermal_voltage(27.0) * math.log(4), rel=1e-6)


def test_forward_drop_falls_about_two_millivolts_per_kelvin():
    sweep = sweep_temperature(read_netlist(DECKS / "diode_forward.cir"), 0.0, 100.0, 11)
    slope = np.polyfit(sweep.values, sweep.probe("V(a)"), 1)[0]
    assert -2.6e-3 < slope < -1.4e-3


def test_breakdown_passes_ibv_at_bv():
    # SPICE moves the breakdown knee so that the reverse current at -BV is IBV
    c = parse_netlist("z\nV1 k 0 5.6\nDZ 0 k DZ\n.model DZ D (IS=1e-15 BV=5.6 IBV=1m)\n")
    op = operating_point(c)
    assert op.devices["DZ"].region == "breakdown"
    assert -op.devices["DZ"].currents["a"] == pytest.approx(1e-3 + 1e-12 * 5.6, rel=1e-9)


def test_capacitance_only_where_capacitance_parameters_are_given():
    plain = operating_point(_forced(1e-4, "IS=1e-14"))
    assert set(plain.devices["D1"].small_signal) == {"rd"}
    # zero-bias depletion capacitance at V = 0: cj = CJO (no diffusion charge without TT)
    zero = operating_point(parse_netlist("d\nV1 a 0 0\nD1 a 0 DX\n.model DX D (CJO=3p VJ=0.8 M=0.33)\n"))
    assert zero.devices["D1"].small_signal["cj"] == pytest.approx(3e-12, rel=1e-12)


def test_parameters_the_model_does_not_use_are_named_in_a_warning():
    c = parse_netlist("d\nI1 0 a 1m\nD1 a 0 DX\n.model DX D (IS=1e-14 IKF=1m ISR=1e-12 LEVEL=1)\n")
    with pytest.warns(ModelWarning, match=r"DX: IKF, ISR not modelled") as record:
        operating_point(c)
    assert all("LEVEL" not in str(w.message) for w in record)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        operating_point(_forced(1e-3, "IS=1e-14 N=1.1 RS=3 CJ0=1p PB=0.7 MJ=0.4"))  # aliases are modelled


def test_process_file_diode_entry():
    process = load_process(demo_process_path())
    entry = process.device("DN", "d")
    assert entry.type == "d" and entry.params["RS"] == 15.0
    op = operating_point(parse_netlist("d\nI1 0 a 1m\nD1 a 0 DN\n.model DN D\n"), process)
    vt = thermal_voltage(27.0)
    expected = 1.02 * vt * math.log((1e-3 - 1e-12 * 0.0) / 4e-17 + 1.0) + 1e-3 * 15.0
    assert op.voltage("a") == pytest.approx(expected, abs=2e-8)


@pytest.mark.parametrize(("text", "line", "reason"), [
    ('[process]\ntnom = 27\n[devices.DX]\ntype = "d"\nIS = 1e-14\nXTI = 3\nEG = 1.11\n', 3, "missing parameter N"),
    ('[process]\ntnom = 27\n[devices.DX]\ntype = "diode"\nIS = 1e-14\nN = 1\nXTI = 3\nEG = 1.11\nRS = -2\n', 9,
     "RS must not be negative"),
])
def test_process_file_diode_errors_name_the_line(text, line, reason):
    with pytest.raises(ProcessError, match=reason) as error:
        parse_process(text, "p.toml")
    assert error.value.line == line


# -- against ngspice ------------------------------------------------------------------------------


def _names(circuit):
    nodes = [n for n in circuit.nodes if n != "0"]
    devices = [d.name for d in circuit.devices]
    return nodes, devices, [f"v({n})" for n in nodes] + [f"@{d.lower()}[{'ic' if d[0] in 'Qq' else 'id'}]"
                                                          for d in devices]


@needs_ngspice
@pytest.mark.parametrize("deck", ["diode_biased_source", "diode_reference", "diode_forward"])
def test_operating_point_matches_ngspice(deck):
    circuit = read_netlist(DECKS / f"{deck}.cir")
    nodes, devices, names = _names(circuit)
    table = run_reference(reference_deck(circuit, control="{control}"), "op", names)
    assert table.shape == (1, 1 + len(names))
    ref = dict(zip(names, table[0, 1:]))
    op = operating_point(circuit)
    for node in nodes:
        assert abs(op.voltage(node) - ref[f"v({node})"]) < VOLTAGE_TOL, node
    for name, vector in zip(devices, names[len(nodes):]):
        assert op.devices[name].output_current == pytest.approx(ref[vector], rel=CURRENT_REL, abs=1e-12), name


@needs_ngspice
def test_process_diode_matches_ngspice():
    process = load_process(demo_process_path())
    circuit = parse_netlist("d\nVdd vdd 0 3\nR1 vdd a 10k\nD1 a 0 DN area=3\n.model DN D\n")
    table = run_reference(reference_deck(circuit, process, control="{control}"), "op", ["v(a)"])
    assert abs(operating_point(circuit, process).voltage("a") - table[0, 1]) < VOLTAGE_TOL


@needs_ngspice
def test_forward_voltage_over_temperature_matches_ngspice():
    circuit = read_netlist(DECKS / "diode_forward.cir")
    table = run_reference(reference_deck(circuit, control="{control}"), "dc temp -40 125 5", ["v(a)"])
    assert table.shape == (34, 2)
    ours = sweep_temperature(circuit, -40.0, 125.0, 34).probe("v(a)")
    assert np.allclose(table[:, 0], np.linspace(-40.0, 125.0, 34))
    assert np.max(np.abs(ours - table[:, 1])) < VOLTAGE_TOL


@needs_ngspice
@pytest.mark.parametrize("temperature", [27.0, 110.0])
def test_small_signal_capacitance_matches_ngspice(temperature):
    # ngspice fills @d[cd] in its small-signal pass; the junction law of VJ and CJO over temperature is SPICE3's
    circuit = parse_netlist("c\nV1 a 0 0.55 ac 1\nD1 a 0 DC area=2\nV2 k 0 -3\nD2 k 0 DC\n"
                            ".model DC D (IS=1e-14 CJO=2p VJ=0.7 M=0.4 TT=5n FC=0.5)\n")
    deck = reference_deck(circuit, temperature=temperature, control="{control}")
    table = run_reference(deck, "op\nac lin 1 1 1", ["@d1[cd]", "@d2[cd]"])
    op = operating_point(circuit, temperature=temperature)
    assert op.devices["D1"].small_signal["cj"] == pytest.approx(table[0, 1], rel=1e-5)
    assert op.devices["D2"].small_signal["cj"] == pytest.approx(table[0, 2], rel=1e-5)
