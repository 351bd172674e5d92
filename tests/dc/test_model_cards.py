"""Model parameters out of range, parameters and levels the models do not have: clear errors and warnings.

``IS=0``, ``NF=-1`` and ``PHI=-0.6`` used to be accepted (one gave a
traceback); a ``.model nch nmos level=54 ... vth0=0.45`` card became level 1
with VTO = 0 without a word.  Now an out-of-range value is a one-line error
naming the file, the line, the parameter and its valid range (exit 2), a
parameter or level the model does not use is named in a warning, and a
foreign level without the model's essential parameters is an error.

References: the valid ranges are those of the SPICE models the device models
follow (the ngspice manual's BJT, MOSFET level 1 and diode parameter tables,
from memory: saturation currents, emission coefficients, KP and PHI positive;
Early voltage, LAMBDA, GAMMA and capacitances non-negative; grading and
depletion coefficients below 1 - common practice).  The level numbers are
SPICE's (MOS level 1 is the square law; 54 is a BSIM4 card).
"""

from __future__ import annotations

import pytest

from symbias.cli import main

BJT = "t\nI1 0 a 1m\nQ1 a a 0 QN\n.model QN npn ({card})\n"
MOS = "t\nV1 a 0 3\nI1 a d 10u\nM1 d d 0 0 NCH W=2u L=1u\n.model NCH nmos ({card})\n"
DIODE = "t\nV1 a 0 5\nR1 a k 1k\nD1 k 0 DX\n.model DX d ({card})\n"


@pytest.mark.parametrize("template, card, words", [
    (BJT, "IS=0 BF=100", "model QN: IS = 0 is out of range: IS > 0 (transport saturation current, A)"),
    (BJT, "NF=-1", "model QN: NF = -1 is out of range: NF > 0 (forward emission coefficient)"),
    (BJT, "BF=0", "model QN: BF = 0 is out of range: BF > 0"),
    (BJT, "VAF=-50", "model QN: VAF = -50 is out of range: VAF >= 0"),
    (MOS, "VTO=0.5 KP=1e-4 GAMMA=0.4 PHI=-0.6", "model NCH: PHI = -0.6 is out of range: PHI > 0"),
    (MOS, "VTO=0.5 KP=0", "model NCH: KP = 0 is out of range: KP > 0"),
    (MOS, "VTO=0.5 KP=1e-4 LAMBDA=-0.1", "model NCH: LAMBDA = -0.1 is out of range: LAMBDA >= 0"),
    (DIODE, "IS=1e-14 N=0", "model DX: N = 0 is out of range: N > 0"),
    (DIODE, "IS=1e-14 CJO=1p M=1.2", "model DX: M = 1.2 is out of range: 0 <= M < 1"),
])
def test_out_of_range_parameter_is_a_one_line_error(tmp_path, capsys, template, card, words):
    deck = tmp_path / "bad.cir"
    deck.write_text(template.format(card=card))
    line = template.format(card=card).splitlines().index(next(l for l in template.format(card=card).splitlines()
                                                             if l.startswith(".model"))) + 1
    assert main(["bias", str(deck)]) == 2
    captured = capsys.readouterr()
    err = captured.err.strip()
    assert err == f"{deck}:{line}: {words}" or (err.startswith(f"{deck}:{line}: ") and words in err)
    assert "\n" not in err and "Traceback" not in err and captured.out == ""


def test_out_of_range_value_in_a_process_file_points_at_the_process_file(tmp_path, capsys):
    process = tmp_path / "p.toml"
    process.write_text("[process]\nname = 'x'\ntnom = 27\n\n[devices.QN]\ntype = 'npn'\nIS = 0\nBF = 100\n"
                       "VAF = 50\nNF = 1\nXTI = 3\nEG = 1.1\nXTB = 0\n")
    deck = tmp_path / "q.cir"
    deck.write_text("t\nI1 0 a 1m\nQ1 a a 0 QN\n.model QN npn\n")
    assert main(["bias", str(deck), "--process", str(process)]) == 2
    assert capsys.readouterr().err.strip() == (f"{process}:5: model QN: IS = 0 is out of range: IS > 0 "
                                               "(transport saturation current, A)")


def test_foreign_level_without_level1_parameters_is_refused(tmp_path, capsys):
    deck = tmp_path / "bsim.cir"
    deck.write_text("t\nV1 a 0 3\nI1 a d 10u\nM1 d d 0 0 nch W=2u L=1u\n"
                    ".model nch nmos level=54 vth0=0.45 toxe=2n\n")
    assert main(["bias", str(deck)]) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith(f"{deck}:5: model nch: LEVEL=54 is not modelled (the MOS model is level 1)")
    assert "gives no VTO, KP: the result would be meaningless" in err and "\n" not in err


def test_foreign_level_with_process_parameters_warns_and_names_what_is_ignored(tmp_path, capsys):
    deck = tmp_path / "bsim.cir"
    deck.write_text("t\nV1 a 0 3\nI1 a d 10u\nM1 d d 0 0 NCH W=2u L=1u\n"
                    ".model NCH nmos level=54 vth0=0.45 toxe=2n\n")
    assert main(["bias", str(deck), "--process", "symbias/data/demo_process.toml"]) == 0
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1  # once, though the circuit is stamped several times
    assert err[0].startswith(f"{deck}:5: warning: model NCH: LEVEL=54 is not modelled; solved with the MOS model")
    assert err[0].endswith("ignored: TOXE, VTH0")


@pytest.mark.parametrize("template, card, words", [
    (BJT, "IS=1e-16 BF=100 NE=1.5 IKF=10m", "model QN: IKF, NE not modelled by the bipolar model"),
    (MOS, "VTO=0.5 KP=1e-4 U0=400", "model NCH: U0 not modelled by the MOS model"),
    (DIODE, "IS=1e-14 IKF=1 TRS1=1e-3", "model DX: IKF, TRS1 not modelled by the diode model"),
])
def test_unused_parameters_are_named_in_one_warning(tmp_path, capsys, template, card, words):
    deck = tmp_path / "d.cir"
    deck.write_text(template.format(card=card))
    assert main(["sweep", str(deck), "--vary", "V1" if "V1" in template else "I1", "--from", "1" if "V1" in template
                 else "1e-4", "--to", "3" if "V1" in template else "1e-3", "--points", "5", "--out", "V(a)"]) == 0
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and words in err[0] and "(ignored; see docs/dc.md)" in err[0]
