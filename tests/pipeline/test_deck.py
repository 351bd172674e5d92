"""``symbias deck``: the deck of every library topology and example runs in ngspice and lands on ``symbias bias``.

Reference: Debian's ngspice package (version 39), run here in batch mode on the
written deck; the node voltages and source currents it prints are compared with
symbias's own DC solve: voltages within 1 mV, currents within 0.5 % (the limits
the project set for its ngspice comparisons).  The models are the netlist's own
cards, written as written, so the only differences left are those of the
models themselves, which docs/dc.md lists (level-1 MOS is zero below
threshold, where symbias joins the square law to a subthreshold exponential).
"""

import re
import shutil
import subprocess
from pathlib import Path

import pytest

from symbias.cli import main
from symbias.library import load_library
from symbias.pipeline import design_inputs, load_target, operating_point_of
from symbias.process import demo_process_path

pytestmark = pytest.mark.skipif(shutil.which("ngspice") is None, reason="ngspice is not installed")

EXAMPLES = sorted(str(p) for p in Path("examples").glob("*.cir"))
#: What an example needs besides itself (its header says so).
EXTRA = {
    "examples/dc_cascode_sink.cir": ["--process", str(demo_process_path())],
    "examples/degenerated_mirror.cir": ["--set", "RE=1k"],
}
#: Cells with a zero-current state beside the working one: the deck gets the working state as .nodeset.
SEVERAL_STATES = ("brokaw-bandgap", "opamp-bandgap")
#: Documented model differences (docs/dc.md): M2 of the beta multiplier sits below threshold, where
#: ngspice's level 1 conducts nothing and symbias's MOS model continues into subthreshold.
CURRENT_TOLERANCE = {"mos-beta-multiplier": 3e-2}
VOLTAGE_TOLERANCE = {"mos-beta-multiplier": 2e-3}


def _ngspice_values(deck_path):
    done = subprocess.run(["ngspice", "-b", str(deck_path)], capture_output=True, text=True, timeout=60,
                          cwd=deck_path.parent)
    assert done.returncode == 0, done.stderr[-300:]
    assert "error" not in done.stderr.lower(), done.stderr[-300:]
    values = {}
    for name, number in re.findall(r"^\s*([\w#.]+)\s*=\s*([-+0-9.eE]+)\s*$", done.stdout, flags=re.M):
        values[name.lower()] = float(number)
    return values


def _options(target: str) -> list[str]:
    return EXTRA.get(target, [])


def _bias(target: str):
    loaded = load_target(target)
    options = _options(target)
    process = options[1] if options[:1] == ["--process"] else None
    values = {"RE": 1e3} if options[:1] == ["--set"] else None
    return loaded, operating_point_of(loaded, design_inputs(loaded, process, values=values))


@pytest.mark.parametrize("target", sorted(load_library()) + EXAMPLES)
def test_deck_of_every_topology_and_example_matches_bias(tmp_path, target):
    loaded, point = _bias(target)
    options = _options(target)
    if target in SEVERAL_STATES:
        options = options + [f"--guess={node}={volts!r}" for node, volts in point.node_voltages.items() if node != "0"]
    deck = tmp_path / "deck.cir"
    assert main(["deck", target, *options, "-o", str(deck)]) == 0
    lines = deck.read_text().splitlines()
    assert lines[1].startswith("* written by symbias")
    assert any(line.startswith(".options reltol=1e-7 abstol=1e-16 vntol=1e-10") for line in lines)
    spice = _ngspice_values(deck)
    volts, rel = VOLTAGE_TOLERANCE.get(target, 1e-3), CURRENT_TOLERANCE.get(target, 5e-3)
    checked = 0
    for node, value in point.node_voltages.items():
        if node != "0":
            assert spice[node] == pytest.approx(value, abs=volts), node
            checked += 1
    for source, amps in point.branch_currents.items():
        # 1 nA absolute: picoampere branches (an ideal amplifier's output) differ by GMIN leakage paths
        assert spice[f"{source.lower()}#branch"] == pytest.approx(amps, rel=rel, abs=1e-9), source
        checked += 1
    assert checked >= 3


SUBCIRCUITS = """subcircuits in a deck
Vcc vcc 0 5
Iref vcc in 50u
X1 in out vcc mirror
Xb vcc nb bias
M9 nd nb vcc vcc PM W=20u L=2u m=2
R9 nd 0 20k
Vout out 0 2.5
.subckt mirror i o top
Q1 i i e 0 QN area=2 m=3
Q2 o i e2 0 QN area=2 m=3
Vs e 0 0
Vs2 e2 0 0
F1 top o Vs 0.01
.ends
.subckt bias top b
Xi top b half
R2 b 0 30k
.ends
.subckt half t m
R1 t m 10k
.ends
.model QN npn (IS=1e-16 BF=100 VAF=50)
.model PM pmos (VTO=-0.7 KP=40u LAMBDA=0.02)
"""


def test_subcircuit_elements_get_legal_names_and_m_stays_m(tmp_path):
    """Finding of the trust review: X1.Q1 read as a subcircuit call, m=3 written as area 3."""
    source = tmp_path / "subckt.cir"
    source.write_text(SUBCIRCUITS)
    deck = tmp_path / "deck.cir"
    assert main(["deck", str(source), "-o", str(deck)]) == 0
    text = deck.read_text()
    assert "\nQ.X1.Q1 in in x1.e 0 QN area=2.0 m=3.0\n" in text
    assert "\nF.X1.F1 vcc out V.X1.Vs 0.01\n" in text
    assert "\nR.Xb.Xi.R1 vcc nb 10000.0\n" in text
    assert "\nM9 nd nb vcc vcc PM w=2e-05 l=2e-06 m=2.0\n" in text
    spice = _ngspice_values(deck)
    point = operating_point_of(load_target(str(source)), design_inputs(load_target(str(source))))
    for node, value in point.node_voltages.items():
        if node != "0":
            assert spice[node] == pytest.approx(value, abs=1e-3), node
    for source_name, amps in point.branch_currents.items():
        deck_name = source_name if "." not in source_name else f"V.{source_name}"
        assert spice[f"{deck_name.lower()}#branch"] == pytest.approx(amps, rel=5e-3, abs=1e-12), source_name


def test_user_cards_are_written_as_written(tmp_path):
    """The deck never rewrites a user's model card; process parameters a card leaves out go before its own."""
    source = tmp_path / "cards.cir"
    source.write_text("cards\nVdd vdd 0 3\nIref vdd in 10u\nQ1 in in 0 QP2\nM1 d in 0 0 NX W=1u L=1u\n"
                      "Rd vdd d 10k\nQ2 vdd in e QD\nRe e 0 10k\n"
                      ".model QP2 npn (BF=80 ikf=2m RB=50 Cje=1p)\n"
                      ".model NX nmos (level=54 version=4.8 vth0=0.4 toxe=4n)\n.model QD npn\n")
    deck = tmp_path / "deck.cir"
    assert main(["deck", str(source), "-p", str(demo_process_path()), "-o", str(deck)]) == 0
    lines = deck.read_text().splitlines()
    assert ".model NX nmos (level=54 version=4.8 vth0=0.4 toxe=4n)" in lines
    card = next(line for line in lines if line.startswith(".model QP2"))
    assert card.endswith("BF=80 ikf=2m RB=50 Cje=1p)") and "IS=" in card and "BVEBO" not in card
    assert any(line.startswith("* QP2: the netlist's card as written, with IS") for line in lines)


def test_lib_lines_are_written_with_absolute_files_and_the_corner(tmp_path):
    source = Path("tests/decks/simulator/bsim4_cascode.cir")
    deck = tmp_path / "deck.cir"
    assert main(["deck", str(source), "--corner", "fast", "-o", str(deck)]) == 0
    library = (source.parent / "invented_kit.lib").resolve()
    assert f'.lib "{library}" fast' in deck.read_text().splitlines()
    assert not any(line.startswith(".model") for line in deck.read_text().splitlines())
    spice = _ngspice_values(deck)
    assert spice["vout#branch"] == pytest.approx(-20e-6, rel=0.02)


def test_deck_refuses_a_free_symbol_and_writes_nothing(tmp_path, capsys):
    out = tmp_path / "deck.cir"
    assert main(["deck", "examples/degenerated_mirror.cir", "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("examples/degenerated_mirror.cir:7:") and "RE" in err[0]
    assert not out.exists()


def test_deck_with_set_value_runs(tmp_path):
    out = tmp_path / "deck.cir"
    assert main(["deck", "examples/degenerated_mirror.cir", "--set", "RE=1k", "-o", str(out)]) == 0
    spice = _ngspice_values(out)
    assert spice["vout#branch"] < 0  # the mirror sinks current from Vout
    assert "* free symbols as numbers: RE = 1000" in out.read_text()

