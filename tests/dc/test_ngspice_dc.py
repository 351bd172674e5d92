"""Operating points and sweeps checked against ngspice (Debian package) on the same decks.

The reference runs in batch mode (``ngspice -b``) with tight tolerances and
writes its vectors with ``wrdata``; the tests read that file and check that it
has the expected rows, not only the exit status.  Models are mapped by
:func:`symbias.simulator.deck.reference_deck` (Gummel-Poon with only IS, BF,
BR, NF, NR, VAF, XTI, EG, XTB; MOS level 1).  Limits from the DC issue:
currents within 0.5 %, voltages within 1 mV.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from symbias.dc.operating_point import operating_point
from symbias.simulator.deck import reference_deck
from symbias.simulator.ngspice import run_reference, simulator
from symbias.dc.sweep import sweep_source, sweep_temperature
from symbias.netlist import read_netlist

DECKS = Path(__file__).parents[1] / "decks"

pytestmark = pytest.mark.skipif(simulator() is None, reason="ngspice is not on PATH")

#: deck -> (swept variable, start, stop, step)
CASES = {
    "bjt_simple_mirror": ("Vout", 0.0, 5.0, 0.025),
    "bjt_cascode_mirror": ("Vout", 0.0, 5.0, 0.025),
    "bjt_wilson_mirror": ("Vout", 0.0, 5.0, 0.025),
    "mos_cascode_mirror": ("Vout", 0.0, 5.0, 0.025),
    "widlar_source": ("Vout", 0.0, 5.0, 0.025),
    "bandgap_core_startup": ("temp", -40.0, 125.0, 5.0),
}

VOLTAGE_TOL = 1e-3
CURRENT_REL = 5e-3


def _vectors(circuit):
    nodes = [n for n in circuit.nodes if n != "0"]
    sources = [e.name for e in circuit.elements if e.kind == "V"]
    devices = [d.name for d in circuit.devices]
    names = ([f"v({n})" for n in nodes] + [f"i({s.lower()})" for s in sources]
             + [f"@{d.lower()}[{'ic' if d[0] in 'Qq' else 'id'}]" for d in devices])
    return nodes, sources, devices, names


@pytest.mark.parametrize("deck", sorted(CASES))
def test_operating_point_matches_ngspice(deck):
    circuit = read_netlist(DECKS / f"{deck}.cir")
    nodes, sources, devices, names = _vectors(circuit)
    table = run_reference(reference_deck(circuit, control="{control}"), "op", names)
    assert table.shape == (1, 1 + len(names))
    ref = dict(zip(names, table[0, 1:]))
    op = operating_point(circuit)
    for node in nodes:
        assert abs(op.voltage(node) - ref[f"v({node})"]) < VOLTAGE_TOL, node
    currents = [(op.branch_currents[s], ref[f"i({s.lower()})"]) for s in sources]
    currents += [(op.devices[d].output_current, ref[names[len(nodes) + len(sources) + i]])
                 for i, d in enumerate(devices)]
    for ours, theirs in currents:
        assert ours == pytest.approx(theirs, rel=CURRENT_REL, abs=1e-12)


@pytest.mark.parametrize("deck", sorted(CASES))
def test_sweep_matches_ngspice(deck):
    circuit = read_netlist(DECKS / f"{deck}.cir")
    variable, start, stop, step = CASES[deck]
    points = int(round((stop - start) / step)) + 1
    if variable == "temp":
        names = ["v(vo)"]
        table = run_reference(reference_deck(circuit, control="{control}"), f"dc temp {start} {stop} {step}", names)
        assert table.shape == (points, 2)
        ours = sweep_temperature(circuit, start, stop, points).probe("v(vo)")
        assert np.allclose(table[:, 0], np.linspace(start, stop, points))
        assert np.max(np.abs(ours - table[:, 1])) < VOLTAGE_TOL
        return
    names = [f"i({variable.lower()})"]
    table = run_reference(reference_deck(circuit, control="{control}"), f"dc {variable} {start} {stop} {step}", names)
    assert table.shape == (points, 2)
    assert np.allclose(table[:, 0], np.linspace(start, stop, points))
    ours = sweep_source(circuit, variable, start, stop, points).probe(f"I({variable})")
    theirs = table[:, 1]
    mid = abs(theirs[points // 2])
    working = np.abs(np.abs(theirs) - mid) < 0.02 * mid
    assert working.sum() > points // 3
    assert np.all(np.abs(ours - theirs)[working] <= CURRENT_REL * np.abs(theirs[working]))
    # near and inside saturation/triode: within 0.5 % of full scale for the BJT
    # models, 1 % for MOS, whose triode/saturation edge is smoothed (docs/dc.md)
    scale = 1e-2 if deck.startswith("mos") else 5e-3
    assert np.max(np.abs(ours - theirs)) <= scale * np.max(np.abs(theirs))


def test_process_models_map_onto_the_simulator(tmp_path):
    """A deck whose models come from the demo process: the export resolves them the same way."""
    from symbias.process import demo_process_path, load_process

    deck = tmp_path / "demo.cir"
    deck.write_text(
        "pnp mirror and nmos sink from the demo process\n"
        "Vdd vdd 0 5\nIref in 0 40u\nQ1 in in vdd QP\nQ2 out in vdd QP 2\nVout out 0 2\n"
        "Ib 0 g 20u\nM1 g g 0 0 NCH W=10u L=2u\nM2 d g 0 0 NCH W=10u L=2u\nVd d 0 1.5\n"
        ".model QP pnp\n.model NCH nmos (LAMBDA=0.03)\n",
        encoding="utf-8",
    )
    circuit = read_netlist(deck)
    process = load_process(demo_process_path())
    nodes, sources, devices, names = _vectors(circuit)
    table = run_reference(reference_deck(circuit, process, control="{control}"), "op", names)
    assert table.shape == (1, 1 + len(names))
    ref = dict(zip(names, table[0, 1:]))
    op = operating_point(circuit, process)
    for node in nodes:
        assert abs(op.voltage(node) - ref[f"v({node})"]) < VOLTAGE_TOL
    for source in sources:
        assert op.branch_currents[source] == pytest.approx(ref[f"i({source.lower()})"], rel=CURRENT_REL, abs=1e-12)
    assert op.devices["Q2"].region == "active" and op.devices["M2"].region == "saturation"
