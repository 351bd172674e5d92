"""The topology library files: format, validation, errors, command line and generated docs.

The format is documented in ``docs/library-format.md``; every check here is about the
files and the loader, not about circuit theory (the family modules check the formulas).
"""

from __future__ import annotations

import json
import pickle
from pathlib import Path

import pytest
import sympy

from library_checks import library
from symbias.cli import main
from symbias.errors import LibraryError
from symbias.library import (
    ENV_VAR,
    FAMILIES,
    TECHNOLOGIES,
    find_topology,
    library_dirs,
    load_library,
    load_topology,
    parse_topology,
    resolve,
    shipped_dir,
)

ROOT = Path(__file__).resolve().parents[1]
GOOD = (ROOT / "topologies" / "bjt-simple-mirror.toml").read_text(encoding="utf-8")


def test_shipped_library_is_the_source_checkout_folder():
    assert shipped_dir() == ROOT / "topologies"


def test_every_file_parses_and_validates():
    files = sorted((ROOT / "topologies").glob("*.toml"))
    assert len(files) >= 28
    topologies = [load_topology(f) for f in files]
    for path, topology in zip(files, topologies):
        assert topology.id == path.stem, "the file is named after its identifier"
        assert topology.family in FAMILIES and topology.technology in TECHNOLOGIES
        assert topology.references and all(isinstance(r.year, int) and r.year > 1900 for r in topology.references)
        assert all(f.source and f.assumptions for f in topology.formulas)
        assert len(topology.description.split()) >= 30, "a paragraph, not a label"


def test_library_has_the_28_required_topologies_by_family():
    counts = {}
    for topology in library().values():
        counts[(topology.family == "reference", topology.technology)] = counts.get(
            (topology.family == "reference", topology.technology), 0) + 1
    assert counts[(False, "bjt")] >= 16 and counts[(False, "mos")] >= 8
    assert counts[(True, "bjt")] + counts[(True, "mos")] >= 4


@pytest.mark.parametrize("identifier", sorted(library()))
def test_roles_resolve_to_elements(identifier):
    topology = library()[identifier]
    circuit = topology.circuit()
    output = topology.roles["output"]
    if topology.family == "reference":
        assert output in circuit.nodes
    else:
        assert circuit.element(output).kind == "V"
    for key in ("input", "transfer"):
        if key in topology.roles:
            assert circuit.element(topology.roles[key]).kind in ("I", "V")
    for key in ("supply", "bias", "outputs"):
        for name in topology.roles.get(key, ()):
            assert circuit.has_element(name)
    if topology.family == "current-mirror":
        assert circuit.element(topology.roles["input"]).kind == "I"
    # every free symbol of the netlist is a design variable with a default
    assert set(topology.defaults()) == {v.name for v in topology.variables}


@pytest.mark.parametrize("identifier", sorted(library()))
def test_every_topology_derives_rout_and_transfer(identifier):
    from symbias.commands.show import derive_topology

    derived = dict(derive_topology(library()[identifier]))
    assert derived["rout"].quantity == "output_resistance"
    assert derived["rout"].symbols
    if library()[identifier].family != "reference" or library()[identifier].roles.get("supply"):
        assert "transfer" in derived


def test_element_lines_are_file_lines():
    topology = find_topology("bjt-simple-mirror")
    lines = GOOD.splitlines()
    for element in topology.circuit().elements:
        assert lines[element.line - 1].strip().startswith(element.name)


#: (description, edit of the good file, expected message fragment, expected line or None)
BAD_FILES = [
    ("toml syntax", lambda t: t.replace('title = "BJT simple current mirror"', 'title = "unclosed'),
     "TOML syntax", 3),
    ("unknown key", lambda t: t.replace('technology = "bjt"', 'technology = "bjt"\ncolour = "red"'),
     "unknown key 'colour'", 6),
    ("missing key", lambda t: t.replace('technology = "bjt"\n', ""), "missing key 'technology'", None),
    ("bad family", lambda t: t.replace('family = "current-mirror"', 'family = "mirror"'), "family 'mirror'", 4),
    ("netlist syntax", lambda t: t.replace("Q2 out in 0 QN", "Z2 out in 0 QN"), "unknown element letter", 21),
    ("undefined model", lambda t: t.replace("Q2 out in 0 QN", "Q2 out in 0 QX"), "undefined model", 21),
    ("output role", lambda t: t.replace('output = "Vout"', 'output = "Vload"'), "roles.output", 28),
    ("input role kind", lambda t: t.replace('input = "Iref"', 'input = "Q1"'), "roles.input", 27),
    ("symbol without variable", lambda t: t.replace("Q2 out in 0 QN", "Q2 out in 0 QN\nR9 out 0 {RX}"),
     "netlist symbol 'RX'", 22),
    ("variable not in netlist", lambda t: t.replace('name = "IREF"', 'name = "IREF2"'), "netlist symbol 'IREF'", 19),
    ("bad default", lambda t: t.replace('default = "100u"', 'default = "lots"'), "not a number", 37),
    ("bad quantity", lambda t: t.replace('quantity = "current_gain"', 'quantity = "gain"'), "quantity 'gain'", 51),
    ("bad expression", lambda t: t.replace('expr = "1/(1 + 2/beta)"', 'expr = "1/(1 + 2/beta"'), "formula expr", 53),
    ("bad option", lambda t: t.replace("options = { ro = false,", "options = { rho = false,"), "option 'rho'", 54),
    ("large on exact", lambda t: t.replace('expr = "ro"', 'expr = "ro"\nlarge = ["ro"]'), "leading-order", 62),
    ("year type", lambda t: t.replace("year = 2009", 'year = "2009"'), "'year' must be an integer", 47),
]


@pytest.mark.parametrize("name,edit,fragment,line", BAD_FILES, ids=[b[0] for b in BAD_FILES])
def test_bad_files_give_one_line_errors_with_the_line(name, edit, fragment, line):
    text = edit(GOOD)
    assert text != GOOD, "the edit must change the file"
    with pytest.raises(LibraryError) as info:
        parse_topology(text, "mine.toml")
    message = str(info.value)
    assert "\n" not in message and message.startswith("mine.toml:")
    assert fragment in message
    if line is not None:
        assert info.value.line == line, message
        assert text.splitlines()[line - 1].strip(), "the line points at content"


def test_cli_reports_a_bad_user_file_in_one_line(tmp_path, capsys):
    (tmp_path / "broken.toml").write_text(GOOD.replace('family = "current-mirror"', 'family = "mirror"'))
    status = main(["list", "--library", str(tmp_path)])
    captured = capsys.readouterr()
    assert status == 2
    assert captured.err.strip().count("\n") == 0
    assert captured.err.startswith(f"{tmp_path / 'broken.toml'}:4: family 'mirror'")
    assert "Traceback" not in captured.err


def test_cli_unknown_identifier(capsys):
    assert main(["show", "bjt-simple-miror"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "did you mean bjt-simple-mirror" in err


def test_duplicate_identifier_is_an_error(tmp_path):
    (tmp_path / "copy.toml").write_text(GOOD)
    with pytest.raises(LibraryError, match="already defined"):
        load_library(extra_dirs=[tmp_path], environ={})


def test_missing_folder_is_an_error(tmp_path):
    with pytest.raises(LibraryError, match="does not exist"):
        load_library(extra_dirs=[tmp_path / "nope"], environ={})


def _user_folder(tmp_path: Path) -> Path:
    folder = tmp_path / "mine"
    folder.mkdir()
    text = GOOD.replace('id = "bjt-simple-mirror"', 'id = "my-mirror"').replace(
        'title = "BJT simple current mirror"', 'title = "My mirror"')
    (folder / "my-mirror.toml").write_text(text)
    return folder


def test_user_folders_from_option_and_environment(tmp_path, monkeypatch, capsys):
    folder = _user_folder(tmp_path)
    assert library_dirs([folder], environ={})[0] == folder
    assert main(["list", "--json", "--library", str(folder)]) == 0
    assert "my-mirror" in {row["id"] for row in json.loads(capsys.readouterr().out)}
    monkeypatch.setenv(ENV_VAR, str(folder))
    assert main(["list", "--json", "--family", "current-mirror", "--tech", "bjt"]) == 0
    rows = json.loads(capsys.readouterr().out)
    assert "my-mirror" in {row["id"] for row in rows}
    assert {row["family"] for row in rows} == {"current-mirror"}
    assert find_topology("my-mirror").title == "My mirror"


def test_resolve_identifier_netlist_and_library_file(tmp_path):
    circuit, topology = resolve("bjt-wilson-mirror", environ={})
    assert topology.id == "bjt-wilson-mirror" and len(circuit.devices) == 3
    deck = tmp_path / "mirror.cir"
    deck.write_text("t\nIref 0 in 1u\nQ1 in in 0 QN\nQ2 out in 0 QN\nVout out 0 1\n.model QN npn\n")
    circuit, topology = resolve(str(deck))
    assert topology is None and circuit.has_element("Q2")
    circuit, topology = resolve(str(ROOT / "topologies" / "mos-wilson-mirror.toml"))
    assert topology.id == "mos-wilson-mirror"
    with pytest.raises(LibraryError):
        resolve("no-such-topology", environ={})


def test_list_table_has_the_columns(capsys, monkeypatch):
    monkeypatch.setenv("COLUMNS", "220")
    assert main(["list"]) == 0
    out = capsys.readouterr().out
    for word in ("identifier", "title", "family", "devices", "headroom", "Rout", "bjt-wilson-mirror", "beta*ro/2"):
        assert word in out


def test_show_json_object(capsys):
    assert main(["show", "bjt-wilson-mirror", "--json"]) == 0
    record = json.loads(capsys.readouterr().out)
    for key in ("id", "family", "technology", "references", "netlist", "roles", "derived", "formulas"):
        assert key in record
    assert record["roles"]["output"] == "Vout" and record["roles"]["input"] == "Iref"
    assert record["netlist"].startswith("Wilson current mirror")
    topology = find_topology("bjt-wilson-mirror")
    from symbias.commands.show import derive_topology

    for entry, (_, formula) in zip(record["derived"], derive_topology(topology)):
        # sympy reads the exact string back (names such as beta need a local_dict: sympy's own functions)
        local = {name: sympy.Symbol(name) for name in entry["symbols"]}
        back = sympy.parse_expr(entry["exact"], local_dict=local)
        assert sympy.cancel(back - formula.expr.subs({s: local[s.name] for s in formula.expr.free_symbols})) == 0


def test_show_text(capsys):
    assert main(["show", "mos-regulated-cascode", "--no-derive"]) == 0
    out = capsys.readouterr().out
    assert "Sackinger" in out and "netlist" in out and "sign-off" in out


def test_derive_accepts_an_identifier_and_uses_the_roles(capsys):
    assert main(["derive", "bjt-simple-mirror", "--json", "--match", "--beta"]) == 0
    record = json.loads(capsys.readouterr().out)
    quantities = [r["quantity"] for r in record["results"]]
    assert quantities == ["output_resistance", "current_gain"]


def test_topology_pickles():
    topology = find_topology("brokaw-bandgap")
    assert pickle.loads(pickle.dumps(topology)) == topology


def test_generated_docs_are_up_to_date():
    # regenerate with: python -m symbias.library.docs docs/topologies.md
    from symbias.library.docs import render_markdown

    page = render_markdown(load_library([shipped_dir()]).values())
    assert (ROOT / "docs" / "topologies.md").read_text(encoding="utf-8") == page
    for topology in library().values():
        assert f"## {topology.title}" in page
    assert "$$" in page


def test_docs_check_command(tmp_path):
    from symbias.library.docs import main as docs_main

    target = tmp_path / "topologies.md"
    assert docs_main([str(target), "--check"]) == 1
    assert docs_main([str(target)]) == 0
    assert docs_main([str(target), "--check"]) == 0
