"""The topology library files: format, validation, errors, command line and generated docs.

The format is documented in ``docs/library-format.md``; every check here is about the
files and the loader, not about circuit theory (the family modules check the formulas).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
import sympy

from support.library_checks import library
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

ROOT = Path(__file__).resolve().parents[2]
GOOD = (ROOT / "topologies" / "bjt-simple-mirror.toml").read_text(encoding="utf-8")
NETLIST = GOOD.split('netlist = """\n')[1].split('"""')[0]


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
    from symbias.pipeline.topologies import describe

    results = describe(library()[identifier]).derivation.results
    assert results[0].formula.quantity == "output_resistance"
    assert results[0].formula.symbols
    if library()[identifier].family != "reference" or library()[identifier].roles.get("supply"):
        assert len(results) == 2


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
    ("bad default", lambda t: t.replace('default = "100u"', 'default = "lots"'), "not a number", 38),
    ("bad quantity", lambda t: t.replace('quantity = "current_gain"', 'quantity = "gain"'), "quantity 'gain'", 52),
    ("bad expression", lambda t: t.replace('expr = "1/(1 + 2/beta)"', 'expr = "1/(1 + 2/beta"'), "formula expr", 54),
    ("bad option", lambda t: t.replace("options = { ro = false,", "options = { rho = false,"), "option 'rho'", 55),
    ("large on exact", lambda t: t.replace('expr = "ro"', 'expr = "ro"\nlarge = ["ro"]'), "leading-order", 63),
    ("year type", lambda t: t.replace("year = 2009", 'year = "2009"'), "'year' must be an integer", 48),
    # regression: the identifier pattern ended in `$`, which also matches before a final newline
    ("id with a final newline", lambda t: t.replace('id = "bjt-simple-mirror"', 'id = "bjt-simple-mirror\\n"'),
     "id 'bjt-simple-mirror\\n'", 2),
    ("id not ASCII", lambda t: t.replace('id = "bjt-simple-mirror"', 'id = "bjt-simple-mirr\u00f6r"'), "id ", 2),
    # regression: an out-of-range default was reported as "<input>: number '1e400' ..." without file or line
    ("default beyond the exponent limit", lambda t: t.replace('default = "100u"', 'default = "1e400"'),
     "variable IREF: default: number '1e400' is out of range", 38),
    ("default beyond a double", lambda t: t.replace('default = "100u"', 'default = "1e308k"'), "out of range", 38),
    ("default as a huge TOML integer", lambda t: t.replace('default = "100u"', "default = 1" + "0" * 309),
     "out of range", 38),
    ("default as an integer too long to convert", lambda t: t.replace('default = "100u"', "default = 1" + "0" * 5000),
     "TOML value", 38),
    ("default as an infinite TOML float", lambda t: t.replace('default = "100u"', "default = 1e400"),
     "not a finite number", 38),
    ("default type", lambda t: t.replace('default = "100u"', "default = true"), "'default' must be a number", 38),
    ("variable name", lambda t: t.replace('name = "IREF"', 'name = "I REF"'), "not a valid symbol name", 36),
    ("empty title", lambda t: t.replace('title = "BJT simple current mirror"', 'title = " "'), "must not be empty", 3),
    ("year out of range", lambda t: t.replace("year = 2009", "year = 20090"), "year 20090 is out of range", 48),
    ("year boolean", lambda t: t.replace("year = 2009", "year = true"), "'year' must be an integer", 48),
    ("missing reference key", lambda t: t.replace('venue = "Wiley"\n', ""), "missing key 'venue' in [[references]]", 44),
    ("unknown role", lambda t: t.replace('supply = ["Vcc"]', 'supply = ["Vcc"]\nsink = "Vout"'), "unknown key 'sink'", 30),
    ("role list type", lambda t: t.replace('supply = ["Vcc"]', 'supply = "Vcc"'), "'supply' must be a list", 29),
    ("unknown formula key", lambda t: t.replace('form = "exact"\nexpr = "ro"', 'form = "exact"\nexpr = "ro"\nnote = "x"'),
     "unknown key 'note' in [[formulas]]", 63),
    ("unknown headroom key", lambda t: t.replace('input = "VBE"', 'input = "VBE"\nbody = "VBE"'), "unknown key 'body'", 34),
    ("bad headroom expression", lambda t: t.replace('output = "VCEsat"', 'output = "VCEsat +"'), "headroom.output", 32),
    ("option type", lambda t: t.replace("options = { ro = true, match", 'options = { ro = "yes", match'),
     "option 'ro' must be true or false", 14),
    ("match type", lambda t: t.replace("options = { ro = true, match = true", "options = { ro = true, match = 3"),
     "option 'match' must be true, false or a list", 14),
    ("unknown parasitic", lambda t: t.replace("options = { ro = false,", 'options = { parasitics = ["rx"], ro = false,'),
     "unknown parasitic 'rx'", 55),
    ("parasitics type", lambda t: t.replace("options = { ro = false,", 'options = { parasitics = "rb", ro = false,'),
     "option 'parasitics' must be a list", 55),
    ("netlist later line", lambda t: t.replace("Vout out 0 2", "Vout out 0 {VX}"), "netlist symbol 'VX'", 22),
    ("netlist title on the quotes line", lambda t: t.replace('netlist = """\nBJT', 'netlist = """BJT').replace(
        "Q2 out in 0 QN", "Z2 out in 0 QN"), "unknown element letter", 20),
    ("netlist with an escape", lambda t: t.replace("Vcc vcc 0 5\nIref", "Vcc vcc 0 5\\nIref"),
     "written out line by line", 16),
    ("netlist on one line", lambda t: t.replace(t[t.index('netlist = """'):t.index('"""\n\n[roles]') + 4],
                                                'netlist = "' + NETLIST.replace("\n", "\\n") + '"\n'),
     "multi-line string", 16),
    ("inline roles table", lambda t: t.replace('\n[roles]\ninput = "Iref"\noutput = "Vout"\nsupply = ["Vcc"]\n', "").replace(
        "options = { ro = true, match = true, beta = true }\n",
        'options = { ro = true, match = true, beta = true }\nroles = { input = "Iref", output = "Vload" }\n'),
     "roles.output", 15),
    ("dotted role key", lambda t: t.replace('\n[roles]\ninput = "Iref"\noutput = "Vout"\nsupply = ["Vcc"]\n', "").replace(
        "options = { ro = true, match = true, beta = true }\n",
        'options = { ro = true, match = true, beta = true }\nroles.output = "Vout"\nroles.input = "Q1"\n'),
     "roles.input", 16),
    ("nesting too deep", lambda t: t.replace('assumptions = ["Q1 and Q2 matched"',
                                             "assumptions = " + "[" * 2000 + "]" * 2000 + '\nx = ["Q1 and Q2 matched"'),
     "nested too deep", 56),
    ("TOML error at the end", lambda t: t + "\n[[formulas]\n", "TOML syntax", len(GOOD.splitlines()) + 2),
    # the sizing keys of docs/library-format.md
    ("unknown sizes value", lambda t: t.replace('sizes = "output-current"', 'sizes = "current"'), "sizes 'current'", 37),
    ("mirror without a sized variable", lambda t: t.replace('sizes = "output-current"\n', ""),
     "marks one variable sizes = 'output-current'", 35),
    ("zero-tc on a mirror", lambda t: t.replace('sizes = "output-current"', 'sizes = "zero-tc"'),
     "does not apply to a current-mirror", 37),
    ("rule names an unknown quantity", lambda t: t.replace('expr = "IOUT*(1 + 2/beta)"', 'expr = "IOUT*(1 + 2/hfe)"'),
     "hfe is neither a variable", 42),
    ("rule that depends on itself", lambda t: t.replace('expr = "IOUT*(1 + 2/beta)"', 'expr = "IREF*(1 + 2/beta)"'),
     "depend on each other: IREF -> IREF", 42),
    ("sized variable not positive", lambda t: t.replace('default = "100u"', 'default = "-1u"'),
     "needs a positive default", 38),
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


def _mutations(text: str):
    """Each ``key = value`` line of ``text`` with its value replaced by values of other types, or removed."""
    lines = text.splitlines()
    for number, line in enumerate(lines):
        key, equals, _ = line.partition(" = ")
        if not equals or not key.strip().isidentifier():
            continue
        for value in ('""', "0", "-1", "1e400", "true", "[]", '["x"]', "{}", '{ a = 1 }', '"x\\n"', None):
            changed = lines[:number] + ([f"{key} = {value}"] if value is not None else []) + lines[number + 1:]
            yield "\n".join(changed) + "\n"


def test_every_error_of_a_mutated_file_names_the_file_and_a_line():
    """Wrong types, empty and out-of-range values and missing keys, anywhere: a located one-line LibraryError."""
    count = 0
    for text in _mutations(GOOD):
        try:
            parse_topology(text, "mine.toml")
        except LibraryError as err:
            count += 1
            message = str(err)
            assert "\n" not in message and err.path == "mine.toml", message
            assert isinstance(err.line, int) and 1 <= err.line <= len(text.splitlines()), message
    assert count > 100, "most mutations are errors"


@pytest.mark.parametrize("identifier", sorted(library()))
def test_netlist_errors_name_the_file_line_of_the_netlist_line(identifier):
    """A bad line anywhere inside the multi-line netlist string is reported at its own line of the file."""
    path = Path(library()[identifier].path)
    lines = path.read_text(encoding="utf-8").splitlines()
    start = library()[identifier].netlist_line
    body = library()[identifier].netlist.splitlines()
    for offset, line in enumerate(body[1:], start=1):
        assert lines[start - 1 + offset] == line, "the netlist's lines are the file's lines"
        if line.startswith((".", "*", "+")) or not line.strip():
            continue
        broken = lines[:start - 1 + offset] + ["Zbad a b 1"] + lines[start + offset:]
        with pytest.raises(LibraryError) as info:
            parse_topology("\n".join(broken) + "\n", str(path))
        assert info.value.line == start + offset and "unknown element letter" in str(info.value)


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
    from symbias.pipeline.topologies import describe

    for entry, result in zip(record["derived"], describe(topology).derivation.results):
        formula = result.formula
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
