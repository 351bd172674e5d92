"""The simulator's operating point: ngspice's own numbers for the user's own model cards, read back exactly.

Reference: Debian's ngspice package (version 39).  The cards are invented
(``tests/decks/simulator/invented_kit.lib`` says so: a BSIM4 nmos and pmos and
full Gummel-Poon npn and pnp cards, two corners).  Checks:

* every instance parameter symbias asks for exists in ngspice's ``show`` output
  of its family (so the names in :mod:`symbias.simulator.families` are ngspice's);
* the values read back equal what ngspice's ``show`` prints for the same deck
  (its own 6-digit print), through the mappings of docs/dc.md (ro = 1/gds, ...);
* the exact output resistance of a BSIM4 cascode, evaluated with the gm, gmb
  and ro of the simulator's operating point, equals ngspice's own ``.ac`` output
  impedance of the same deck at 1 Hz within 0.1 %;
* the two corners of the library give two different operating points;
* with cards the built-in models describe exactly (Gummel-Poon with IS BF VAF,
  level-1 MOS), the simulator's operating point equals symbias's own (the
  agreement of the project's ngspice checks);
* terminal currents of pmos and pnp devices keep SPICE's signs (checked against
  the current of the resistor in series, which ngspice reports by itself).
"""

from __future__ import annotations

import re
import shutil
import subprocess
from dataclasses import replace
from pathlib import Path

import pytest

from symbias.netlist import parse_netlist, read_netlist
from symbias.pipeline import DeriveRequest, corner_points, derive, design_inputs, load_target, parse_quantity
from symbias.simulator.deck import write_deck
from symbias.simulator.families import FAMILIES
from symbias.simulator.ngspice import printed_values, run_ngspice
from symbias.simulator.operating_point import SimulatorSettings, simulator_operating_point

pytestmark = pytest.mark.skipif(shutil.which("ngspice") is None, reason="ngspice is not installed")

DECKS = Path(__file__).parents[1] / "decks" / "simulator"

#: One device of every family, each biased on, for ngspice's ``show``.
FAMILY_DECK = """one device per family
Vdd d 0 1.2
Vg g 0 0.9
M1 d g 0 0 N1 W=2u L=1u
M2 d g 0 0 N2 W=2u L=1u
M3 d g 0 0 N3 W=2u L=1u
M6 d g 0 0 N6 W=2u L=1u
M9 d g 0 0 N9 W=2u L=1u
M8 d g 0 0 N8 W=2u L=1u
M14 d g 0 0 N14 W=2u L=1u
Ib 0 b 1u
Q1 d b 0 0 QG
Q4 d b 0 0 QV
R1 d a 10k
D1 a 0 DD
.model N1 nmos (level=1 vto=0.5 kp=100u)
.model N2 nmos (level=2 vto=0.5 kp=100u)
.model N3 nmos (level=3 vto=0.5 kp=100u)
.model N6 nmos (level=6 vto=0.5)
.model N9 nmos (level=9 vto=0.5 kp=100u)
.model N8 nmos (level=8 version=3.3)
.model N14 nmos (level=54 version=4.8)
.model QG npn (IS=1e-16 BF=100)
.model QV npn (level=4 IS=1e-16)
.model DD d (IS=1e-14)
"""


def _show(deck_text: str, devices: list[str]) -> dict[str, dict[str, float]]:
    """ngspice's ``show`` table of each device, parsed here (name, then a number per line)."""
    body = deck_text.split(".control")[0] if ".control" in deck_text else deck_text.replace(".end\n", "")
    control = ".control\nop\n" + "\n".join(f"show {d}" for d in devices) + "\nquit\n.endc\n.end\n"
    text = run_ngspice(body.rstrip("\n") + "\n" + control).stdout
    tables: dict[str, dict[str, float]] = {}
    current = None
    for line in text.splitlines():
        words = line.split()
        if len(words) == 2 and words[0] == "device":
            current = tables.setdefault(words[1], {})
        elif current is not None and len(words) == 2 and re.fullmatch(r"[-+0-9.eE]+", words[1]):
            current[words[0]] = float(words[1])
    return tables


def test_every_name_symbias_reads_is_in_ngspice_show_output():
    circuit = parse_netlist(FAMILY_DECK)
    devices = [d.name.lower() for d in circuit.devices]
    shown = _show(write_deck(circuit).text, devices)
    by_device = {"m1": "MOS level 1", "m2": "MOS level 2", "m3": "MOS level 3", "m6": "MOS level 6",
                 "m9": "MOS level 9", "m8": "BSIM3", "m14": "BSIM4", "q1": "Gummel-Poon", "q4": "VBIC",
                 "d1": "junction diode"}
    assert {f.name for f in FAMILIES} == set(by_device.values())
    for device, name in by_device.items():
        family = next(f for f in FAMILIES if f.name == name)
        missing = [p for p in family.reads if p not in shown[device]]
        assert not missing, (device, missing)
    # and the whole route reads every family without an error
    op = simulator_operating_point(circuit)
    assert op.devices["M14"].small_signal["gm"] > 0 and op.devices["Q4"].small_signal["gm"] > 0


def _kept_deck(tmp_path, circuit):
    op = simulator_operating_point(circuit, settings=SimulatorSettings(keep=str(tmp_path / "kept")))
    return op, (tmp_path / "kept" / "deck.cir").read_text()


MIXED = """mixed devices from the invented kit
Vdd vdd 0 1.8
Iref vdd in 20u
M1 in in 0 0 NB W=4u L=0.5u
M2 dn in 0 0 NB W=8u L=0.5u m=2
Rn vdd dn 10k
M3 dp gp vdd vdd PB W=8u L=0.5u
Vgp gp 0 0.9
Rp dp 0 5k
Ib vdd b 5u
Q1 c b 0 0 QC area=2
Rc vdd c 20k
Ibp b2 0 5u
Q2 cp b2 vdd 0 QV
Rcp cp 0 20k
D1 vdd dd DK area=2
Rdd dd 0 50k
.lib "{library}" typical
.model DK d (IS=2e-15 N=1.05 RS=30 CJO=0.5p)
"""


def test_small_signal_values_equal_what_ngspice_prints_for_the_same_deck(tmp_path):
    source = tmp_path / "mixed.cir"
    source.write_text(MIXED.replace("{library}", str((DECKS / "invented_kit.lib").resolve())))
    op, deck = _kept_deck(tmp_path, read_netlist(source))
    shown = _show(deck, ["m1", "m2", "m3", "q1", "q2", "d1"])
    rel = 2e-5  # show prints six significant digits
    for name in ("M1", "M2", "M3"):
        small, table = op.devices[name].small_signal, shown[name.lower()]
        assert small["gm"] == pytest.approx(table["gm"], rel=rel)
        assert small["gmb"] == pytest.approx(table["gmbs"], rel=rel)
        assert small["ro"] == pytest.approx(1 / table["gds"], rel=rel)
        assert small["cgs"] == pytest.approx(-table["cgs"], rel=rel) and small["cgs"] > 0
        assert small["cdb"] == pytest.approx(table["capbd"], rel=rel)
        assert abs(op.devices[name].output_current) == pytest.approx(abs(table["id"]), rel=rel)
    for name in ("Q1", "Q2"):
        small, table = op.devices[name].small_signal, shown[name.lower()]
        assert small["gm"] == pytest.approx(table["gm"], rel=rel)
        assert small["rpi"] == pytest.approx(1 / table["gpi"], rel=rel)
        assert small["ro"] == pytest.approx(1 / table["go"], rel=rel)
        assert small["rmu"] == pytest.approx(1 / table["gmu"], rel=rel)
        assert small["rb"] == pytest.approx(1 / table["gx"], rel=rel)
        assert small["cpi"] == pytest.approx(table["cpi"], rel=rel)
        assert small["cmu"] == pytest.approx(table["cmu"] + table["cbx"], rel=rel)
        assert small["ccs"] == pytest.approx(table["csub"], rel=rel)
        assert op.devices[name].currents["c"] == pytest.approx(table["ic"], rel=rel)
    assert op.devices["Q1"].small_signal["re"] == pytest.approx(3 / 2)  # RE of QC over area 2
    diode, table = op.devices["D1"].small_signal, shown["d1"]
    assert diode["rd"] == pytest.approx(1 / table["gd"] + 30 / 2, rel=rel)
    assert diode["cj"] == pytest.approx(table["cd"], rel=rel)
    # the pmos and the pnp keep SPICE's signs: current into the drain/collector is negative when on
    assert op.devices["M3"].currents["d"] == pytest.approx(-op.element_currents["Rp"], rel=1e-6)
    assert op.devices["Q2"].currents["c"] == pytest.approx(-op.element_currents["Rcp"], rel=1e-6)
    assert op.devices["M2"].currents["d"] == pytest.approx(op.element_currents["Rn"], rel=1e-6)
    assert op.devices["M3"].region == "saturation" and op.devices["M3"].limits["vth"] < 0
    assert op.devices["D1"].region == "forward"


def test_exact_output_resistance_at_the_simulator_point_equals_its_ac_impedance():
    """Rout of a BSIM4 cascode: exact formula with ngspice's gm, gmb, ro against ngspice's own .ac at 1 Hz."""
    target = load_target(str(DECKS / "bsim4_cascode.cir"))
    inputs = design_inputs(target, models="ngspice")
    request = DeriveRequest(quantities=(parse_quantity("output_resistance", "Vout", "--rout"),), at_bias=inputs)
    ours = derive(target, request).results[0].value
    deck = write_deck(target.circuit, control="set numdgt=15\nac lin 1 1 1\nlet z = real(-1/i(vout))\nprint z\nquit")
    text = deck.text.replace("\nVout out 0 DC 1.2\n", "\nVout out 0 DC 1.2 AC 1\n")
    assert "AC 1" in text
    theirs = printed_values(run_ngspice(text).stdout, ["z"])["z"]
    assert theirs > 1e6  # a cascode: megaohms
    assert ours == pytest.approx(theirs, rel=1e-3)


def test_two_corners_give_two_operating_points():
    target = load_target(str(DECKS / "corner_mirror.cir"))
    points = corner_points(target, design_inputs(target, models="ngspice", corners=("typical", "fast")))
    (first, typical), (second, fast) = points.points
    assert (first, second) == ("typical", "fast")
    # BF 110 -> 150 and IS 2.1e-17 -> 3e-17 in the invented library: base current and VBE both change
    assert fast.devices["Q1"].small_signal["beta"] > 1.2 * typical.devices["Q1"].small_signal["beta"]
    assert fast.voltage("in") < typical.voltage("in") - 5e-3
    built_in = corner_points(target, replace(design_inputs(target, corners=("typical", "fast"))))
    assert built_in.points[1][1].voltage("in") < built_in.points[0][1].voltage("in")


def test_cards_the_built_in_models_describe_give_the_built_in_operating_point():
    from symbias.dc.operating_point import operating_point

    for path in ("examples/wilson_mirror.cir", "tests/decks/mos_cascode_mirror.cir"):
        circuit = read_netlist(path)
        ours, theirs = operating_point(circuit), simulator_operating_point(circuit)
        assert theirs.method == "ngspice" and set(theirs.devices) == set(ours.devices)
        for node, volts in ours.node_voltages.items():
            assert theirs.voltage(node) == pytest.approx(volts, abs=1e-5)
        for name, device in ours.devices.items():
            for key in ("gm", "ro"):
                assert theirs.devices[name].small_signal[key] == pytest.approx(device.small_signal[key], rel=1e-4)
            assert theirs.devices[name].region == (device.region if name[0] == "M" else "unknown")


def test_ngspice_itself_prints_the_same_numbers_as_a_separate_run():
    """The readback is ngspice's: a second, independent run of the kept deck prints the same node voltage."""
    circuit = read_netlist(DECKS / "bsim4_cascode.cir")
    op = simulator_operating_point(circuit)
    done = subprocess.run(["ngspice", "-b", "/dev/stdin"], input=write_deck(circuit, control="op\nprint v(c)\nquit").text,
                          capture_output=True, text=True, timeout=60, cwd=DECKS)
    match = re.search(r"^v\(c\) = (\S+)$", done.stdout, flags=re.M)
    assert match and float(match.group(1)) == pytest.approx(op.voltage("c"), rel=1e-6)


def test_the_temperature_reaches_the_simulator():
    """At 85 degC the Gummel-Poon card (IS, BF, VAF; XTI, EG, XTB at their defaults) gives the built-in point."""
    from symbias.dc.operating_point import operating_point

    circuit = read_netlist("examples/wilson_mirror.cir")
    hot, cold = simulator_operating_point(circuit, temperature=85.0), simulator_operating_point(circuit)
    assert hot.temperature == 85.0 and hot.voltage("in") < cold.voltage("in") - 0.05  # VBE falls ~2 mV/K
    ours = operating_point(circuit, temperature=85.0)
    for node, volts in ours.node_voltages.items():
        assert hot.voltage(node) == pytest.approx(volts, abs=1e-5), node
