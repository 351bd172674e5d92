"""``symbias deck``: the sign-off deck runs in ngspice and lands on symbias's operating point.

Reference: Debian's ngspice package, run in batch mode on the written deck; its
printed node voltages and source currents are compared with symbias's own DC
solve (voltages within 1 mV, currents within 0.5 %, the limits of issue 4).
"""

import re
import shutil
import subprocess

import pytest

from symbias.cli import main
from symbias.pipeline import design_inputs, load_target, operating_point_of

pytestmark = pytest.mark.skipif(shutil.which("ngspice") is None, reason="ngspice is not installed")


def _ngspice_values(deck_path):
    done = subprocess.run(["ngspice", "-b", str(deck_path)], capture_output=True, text=True, timeout=60)
    assert done.returncode == 0, done.stderr[-300:]
    values = {}
    for name, number in re.findall(r"^\s*([\w#.]+)\s*=\s*([-+0-9.eE]+)\s*$", done.stdout, flags=re.M):
        values[name.lower()] = float(number)
    return values


@pytest.mark.parametrize("target", ["examples/wilson_mirror.cir", "examples/widlar_source.cir",
                                    "mos-cascode-mirror", "bjt-cascode-mirror"])
def test_deck_operating_point_matches_ngspice(tmp_path, target):
    deck = tmp_path / "deck.cir"
    assert main(["deck", target, "-o", str(deck)]) == 0
    assert deck.read_text().splitlines()[1].startswith("* written by symbias")
    spice = _ngspice_values(deck)
    loaded = load_target(target)
    point = operating_point_of(loaded, design_inputs(loaded))
    checked = 0
    for node, volts in point.node_voltages.items():
        if node != "0":
            assert spice[node] == pytest.approx(volts, abs=1e-3), node
            checked += 1
    for source, amps in point.branch_currents.items():
        assert spice[f"{source.lower()}#branch"] == pytest.approx(amps, rel=5e-3, abs=1e-12), source
        checked += 1
    assert checked >= 4


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
