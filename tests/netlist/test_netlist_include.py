""".include and .lib are followed: relative paths, sections, cycles, missing files, errors at their own file.

Finding of the trust review: both cards used to be ignored, so a deck that
keeps its models in a library file was read without them (and an element
defined there silently dropped).  The SPICE convention followed here (common
practice, as in the decks designers paste from their simulators):
``.include FILE`` brings in the whole file, ``.lib FILE SECTION`` the lines
between ``.lib SECTION`` and ``.endl`` of FILE; a file name is read relative
to the folder of the file that names it.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from symbias.analyses import output_resistance
from symbias.errors import CircuitError, LimitError, NetlistError
from symbias.limits import MAX_INCLUDE_DEPTH
from symbias.netlist import parse_netlist, read_netlist
from support.cli_checks import one_error_line, run_cli

MIRROR = "mirror\nIref 0 in 100u\nQ1 in in 0 QN\nQ2 out in 0 QN\nVout out 0 2\n"
MODEL = ".model QN npn (BF=100 VAF=50)\n"


def _write(folder: Path, files: dict[str, str]) -> None:
    for name, text in files.items():
        (folder / name).parent.mkdir(parents=True, exist_ok=True)
        (folder / name).write_text(text)


def test_an_included_model_gives_the_same_result_as_one_written_inline(tmp_path):
    _write(tmp_path, {"top.cir": MIRROR + ".include models/bjt.inc\n", "models/bjt.inc": "* models\n" + MODEL})
    included = read_netlist(tmp_path / "top.cir")
    inline = parse_netlist(MIRROR + MODEL)
    assert included.models["qn"].params == inline.models["qn"].params
    assert str(output_resistance(included, "Vout").expr) == str(output_resistance(inline, "Vout").expr) == "ro_Q2"


def test_nested_includes_are_read_relative_to_the_file_that_names_them(tmp_path):
    _write(tmp_path, {"top.cir": MIRROR + ".inc lib/all.inc\n", "lib/all.inc": ".include 'deep/bjt.inc'\n",
                      "lib/deep/bjt.inc": MODEL})
    assert "qn" in read_netlist(tmp_path / "top.cir").models


def test_lib_brings_in_only_its_section(tmp_path):
    library = ("* corners\n.lib typical\n.model QN npn (BF=100 VAF=50)\n.endl\n"
               ".lib slow\n.model QN npn (BF=40 VAF=20)\n.endl typical\n")
    _write(tmp_path, {"top.cir": MIRROR + ".lib corners.lib slow\n", "corners.lib": library})
    assert read_netlist(tmp_path / "top.cir").models["qn"].params["BF"] == 40


def test_an_included_file_stops_at_its_end_card(tmp_path):
    _write(tmp_path, {"top.cir": MIRROR + ".include m.inc\nR9 out 0 1k\n", "m.inc": MODEL + ".end\nR8 out 0 5\n"})
    circuit = read_netlist(tmp_path / "top.cir")
    assert circuit.has_element("R9") and not circuit.has_element("R8")


# (id, files, the error's file, its line, words of the cause)
ERRORS = [
    ("missing-file", {"top.cir": MIRROR + MODEL + ".include absent.inc\n"}, "top.cir", 7,
     "cannot read .include file absent.inc"),
    ("missing-section", {"top.cir": MIRROR + ".lib c.lib fast\n", "c.lib": ".lib typical\n" + MODEL + ".endl\n"},
     "top.cir", 6, "no section 'fast'"),
    ("section-without-endl", {"top.cir": MIRROR + ".lib c.lib typical\n", "c.lib": ".lib typical\n" + MODEL},
     "top.cir", 6, "has no .endl"),
    ("lib-without-section", {"top.cir": MIRROR + MODEL + ".lib c.lib\n"}, "top.cir", 7,
     ".lib expects a file and a section"),
    ("cycle", {"top.cir": MIRROR + MODEL + ".include a.inc\n", "a.inc": "R7 out 0 1k\n.include b.inc\n",
               "b.inc": ".include a.inc\n"}, "b.inc", 1, "include cycle: a.inc -> b.inc -> a.inc"),
    ("error-inside-an-included-file", {"top.cir": MIRROR + ".include m.inc\n",
                                       "m.inc": "* models\n.model QN npn (BF=)\n"}, "m.inc", 2, "no value"),
    ("continuation-first-in-an-included-file", {"top.cir": MIRROR + MODEL + ".include m.inc\n",
                                                "m.inc": "+ R5 out 0 1k\n"}, "m.inc", 1, "continuation"),
]


@pytest.mark.parametrize(("files", "where", "line", "words"), [pytest.param(*e[1:], id=e[0]) for e in ERRORS])
def test_include_errors_name_their_file_and_line(tmp_path, monkeypatch, capsys, files, where, line, words):
    status, out, err, changed = run_cli(tmp_path, monkeypatch, capsys, ["derive", "top.cir", "--rout", "Vout"], files)
    assert status == 2 and out == "" and not changed, err
    error = one_error_line(err)
    assert (error["where"], int(error["line"])) == (where, line), err
    assert words in error["cause"], err


def test_a_fault_of_an_included_element_points_at_the_include_line(tmp_path):
    """Validation after reading sees the element where it came in, as a subcircuit's elements point at their X."""
    _write(tmp_path, {"top.cir": MIRROR + MODEL + ".include extra.inc\n", "extra.inc": "* more\nR5 a b 1k\n"})
    with pytest.raises(CircuitError) as caught:
        read_netlist(tmp_path / "top.cir")
    assert caught.value.path.endswith("top.cir") and caught.value.line == 7
    assert "no connection to ground" in caught.value.reason


def test_includes_nested_beyond_the_limit_are_refused(tmp_path):
    files = {f"f{k}.inc": f".include f{k + 1}.inc\n" for k in range(MAX_INCLUDE_DEPTH + 3)}
    files["top.cir"] = MIRROR + MODEL + ".include f0.inc\n"
    _write(tmp_path, files)
    with pytest.raises(LimitError, match="MAX_INCLUDE_DEPTH"):
        read_netlist(tmp_path / "top.cir")


def test_text_without_a_file_reads_includes_from_the_working_folder(tmp_path, monkeypatch):
    _write(tmp_path, {"m.inc": MODEL})
    monkeypatch.chdir(tmp_path)
    assert "qn" in parse_netlist(MIRROR + ".include m.inc\n").models
    with pytest.raises(NetlistError, match="cannot read"):
        parse_netlist(MIRROR + ".include nowhere.inc\n")
