"""Design notes: every library topology, numbers equal to the API's, the deck against ngspice, the
HTML in a browser, byte-identical files.

References outside the project: Debian's ngspice runs the sign-off deck the note writes (its operating
point and its DC sweeps must land on the note's own numbers within the DC tolerances of
tests/test_deck.py: 1 mV, 0.5 %); Debian's chromium renders the standalone HTML (MathML in place of
every equation, every figure decoded); PNG and SVG files are checked by their signatures.
"""

from __future__ import annotations

import re
import shutil
import subprocess
import warnings
from pathlib import Path

import numpy as np
import pytest

from symbias.library import load_library
from symbias.note import NoteRequest, build_note
from symbias.note.model import Figure, Plot
from symbias.pipeline import (SweepRequest, design_inputs, load_target, mirror_ratio, operating_point_of,
                              run_sweep)
from symbias.process import demo_process_path

QUICK = NoteRequest(output_points=9, temperature_points=5, supply_points=5, monte_carlo=20, samples=300)
SECTIONS = ("Purpose and scenario", "Schematic", "Netlist and element roles", "Output resistance and transfer",
            "DC mirror ratio and error budget", "Random error (device mismatch)", "Sensitivities",
            "Operating point", "Compliance", "Temperature", "Supply", "Cautions", "How this note was made")


def _note(name: str, request: NoteRequest = QUICK):
    target = load_target(name)
    inputs = design_inputs(target, demo_process_path())
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # matched devices that differ at bias are named in their own tests
        return target, inputs, build_note(target, inputs, request)


def test_every_library_topology_gets_a_note_with_its_schematic(tmp_path):
    from symbias.render.note_files import write_figures
    from symbias.render.note_markdown import note_markdown

    names = sorted(load_library())
    assert len(names) == 28
    for name in names:
        _, _, note = _note(name)
        text = note_markdown(note)
        for title in SECTIONS:
            assert f"## {title}\n" in text, (name, title)
        schematic = note.section("schematic").blocks[0]
        assert isinstance(schematic, Figure), name  # every shipped topology has a placement
        only_schematic = type(note)(note.title, note.subject, (note.section("schematic"),), note.provenance)
        folder = tmp_path / name
        folder.mkdir()
        png, svg = write_figures(only_schematic, folder)["schematic"]
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" and png.stat().st_size > 5000, name
        assert b"<svg" in svg.read_bytes()[:2000] and svg.stat().st_size > 5000, name


def test_numbers_in_the_note_are_the_api_numbers():
    from symbias.render.note_html import note_html
    from symbias.render.note_latex import escape, note_latex
    from symbias.render.note_markdown import note_markdown

    target, inputs, note = _note("bjt-wilson-mirror")
    ratio = mirror_ratio(target, inputs, "Vout", "Iref")
    table = dict((row[0], row[1]) for row in note.section("ratio").blocks[1].rows)
    assert table["ratio Iout/Iin"].value == ratio.ratio
    assert table["systematic error 1 - ratio/ideal"].value == ratio.error
    point = operating_point_of(target, inputs)
    nodes = dict(note.section("operating-point").blocks[1].rows)
    assert {k: n.value for k, n in nodes.items()} == {k: v for k, v in point.node_voltages.items() if k != "0"}
    sweep = run_sweep(target, inputs, SweepRequest("Vout", 0.0, 5.0, QUICK.output_points, "Iout(Vout)"))
    compliance = dict((row[0], row[1]) for row in note.section("compliance").blocks[1].rows)
    assert compliance["compliance by current (low side)"].value == sweep.metrics.by_current_low
    plot = next(b.content for b in note.section("compliance").blocks if isinstance(b, Figure))
    assert np.array_equal(plot.curves[0].y, sweep.values)
    texts = note_markdown(note), note_html(note, {}), note_latex(note)
    for section in note.sections:
        for number in section.numbers():
            for text in texts:
                shown = escape(number.text) if text is texts[2] else number.text
                assert shown in text, (section.key, number)


def _wrdata(path: Path) -> np.ndarray:
    from symbias.simulator.ngspice import wrdata_rows

    return wrdata_rows(path.read_text(), 1, path.name)


@pytest.mark.skipif(shutil.which("ngspice") is None, reason="Debian's ngspice is the reference")
@pytest.mark.parametrize("name", ["bjt-wilson-mirror", "mos-cascode-mirror", "bjt-widlar-source"])
def test_signoff_deck_agrees_with_ngspice(tmp_path, name):
    from symbias.pipeline.decks import signoff_deck, sweep_files

    target, inputs, note = _note(name)
    (tmp_path / "signoff.cir").write_text(signoff_deck(target, inputs, "signoff", note.sweeps))
    done = subprocess.run(["ngspice", "-b", "signoff.cir"], cwd=tmp_path, capture_output=True, text=True,
                          timeout=120)
    assert done.returncode == 0, done.stdout[-2000:]
    printed = dict(re.findall(r"^([\w.]+) = ([-+0-9.eE]+)$", done.stdout, re.M))  # "print all" of the op
    for node, number in note.section("operating-point").blocks[1].rows:
        assert float(printed[node]) == pytest.approx(number.value, abs=1e-3), node
    plots = {b.content.name: b.content for s in note.sections for b in s.blocks
             if isinstance(b, Figure) and isinstance(b.content, Plot)}
    names = [n for n in ("compliance", "temperature", "supply") if n in plots]
    assert len(names) == len(note.sweeps) >= 2
    for plot_name, data_file in zip(names, sweep_files(note.sweeps)):
        rows = _wrdata(tmp_path / data_file)
        x, y = np.asarray(plots[plot_name].curves[0].x), np.asarray(plots[plot_name].curves[0].y)
        spice = np.interp(x, rows[:, 0], rows[:, 1])
        scale = np.max(np.abs(y))
        assert np.max(np.abs(spice - y)) <= 5e-3 * scale + 1e-12, (plot_name, spice, y)


def test_same_inputs_give_the_same_files(tmp_path):
    from symbias.render.note_files import write_note

    _, _, first = _note("bjt-simple-mirror")
    _, _, second = _note("bjt-simple-mirror")
    (tmp_path / "a").mkdir()
    (tmp_path / "b").mkdir()
    written = write_note(first, tmp_path / "a")
    write_note(second, tmp_path / "b")
    assert len(written) == 13
    for path in written:
        assert path.read_bytes() == (tmp_path / "b" / path.name).read_bytes(), path.name
        assert path.stat().st_size > 0


_REMOTE = re.compile(r"(?:https?:|ftp:)?//[\w.-]+\.\w|url\(|@import|<script|<link", re.I)


def _written_note(tmp_path, name: str, request: NoteRequest = QUICK) -> Path:
    from symbias.render.note_files import write_note

    _, _, note = _note(name, request)
    write_note(note, tmp_path)
    return tmp_path / "note.html"


def test_html_is_standalone(tmp_path):
    page = _written_note(tmp_path, "mos-cascode-mirror").read_text()
    without_data = re.sub(r'src="data:image/[\w+]+;base64,[A-Za-z0-9+/=]+"', 'src=""', page)
    assert not _REMOTE.search(without_data), _REMOTE.search(without_data)
    assert "<math" in page and "$$" not in page and "\\frac" not in page
    assert page.count('src="data:image/svg+xml;base64,') == len(re.findall("<figure>", page)) == 5


_PROBE = """<script>
addEventListener("load", () => {
  const images = [...document.images];
  const maths = [...document.querySelectorAll("math")];
  document.body.dataset.images = images.length;
  document.body.dataset.loaded = images.filter(i => i.complete && i.naturalWidth > 50).length;
  document.body.dataset.maths = maths.length;
  document.body.dataset.drawn = maths.filter(m => m.getBoundingClientRect().height > 5).length;
});
</script>"""


def _chromium(*arguments: str) -> subprocess.CompletedProcess:
    return subprocess.run(["chromium", "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
                           "--virtual-time-budget=5000", *arguments], capture_output=True, timeout=120)


@pytest.mark.skipif(shutil.which("chromium") is None, reason="Debian's chromium renders the page")
def test_html_renders_math_and_every_figure_in_chromium(tmp_path):
    page = _written_note(tmp_path, "bjt-widlar-source")
    probe = tmp_path / "probe.html"  # the note with a test-only script that reports what the browser drew
    probe.write_text(page.read_text().replace("</body>", _PROBE + "</body>"))
    dom = _chromium("--dump-dom", probe.as_uri()).stdout.decode()
    found = dict(re.findall(r'data-(images|loaded|maths|drawn)="(\d+)"', dom))
    assert int(found["images"]) == 5 and found["loaded"] == found["images"], found
    assert int(found["maths"]) >= 4 and found["drawn"] == found["maths"], found
    text = re.sub(r"<[^>]+>", " ", dom)
    assert "$$" not in text and "\\frac" not in text and "\\mathrm" not in text
    shot = tmp_path / "shot.png"
    _chromium(f"--screenshot={shot}", "--window-size=1000,2600", page.as_uri())
    import matplotlib.image

    pixels = matplotlib.image.imread(shot)
    assert pixels.shape[0] >= 2000 and np.std(pixels[..., :3]) > 0.05  # not blank: text, tables, figures


def test_note_command_writes_everything_and_refuses_a_file_as_folder(tmp_path, capsys):
    from symbias.cli import main

    out = tmp_path / "note"
    assert main(["note", "bjt-simple-mirror", "--process", str(demo_process_path()), "--samples", "20",
                 "-o", str(out)]) == 0
    names = sorted(p.name for p in out.iterdir())
    assert names == sorted(["note.md", "note.html", "note.tex", "signoff.cir"] + [
        f"{n}.{k}" for n in ("schematic", "monte_carlo", "compliance", "temperature", "supply")
        for k in ("png", "svg")])
    text = (out / "note.md").read_text()
    assert "symbias note bjt-simple-mirror --process" in text and "sha256" in text
    assert "\\input" not in text and "\\section*{Cautions}" in (out / "note.tex").read_text()
    capsys.readouterr()
    blocked = tmp_path / "file"
    blocked.write_text("x")
    assert main(["note", "bjt-simple-mirror", "-o", str(blocked)]) == 2
    error = capsys.readouterr().err.strip().splitlines()
    assert len(error) == 1 and "is a file" in error[0]


def test_a_netlist_without_placement_shows_its_netlist():
    target = load_target("examples/simple_mirror.cir")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        note = build_note(target, design_inputs(target), QUICK)
    blocks = note.section("schematic").blocks
    assert "no placement description" in blocks[0].text and "Q2" in blocks[1].text


def test_ranking_section_reads_a_ranking_summary():
    from symbias.note.ranking import CandidateRow, RankingSummary

    summary = RankingSummary((
        CandidateRow("bjt-wilson-mirror", "Wilson", True, 1, 0.9, {"rout": (2.5e7, "ohm"), "headroom": (0.9, "V")}),
        CandidateRow("bjt-simple-mirror", "Simple", False, None, None, {"rout": (5e5, "ohm"), "headroom": (0.2, "V")},
                     ("rout 500 kohm below 20 Mohm",)),
    ), "bjt-wilson-mirror meets the spec best", "bjt-wilson-mirror")
    _, _, note = _note("bjt-wilson-mirror", NoteRequest(output_points=5, temperature_points=3, supply_points=3,
                                                        monte_carlo=0, approximate=False))
    target = load_target("bjt-wilson-mirror")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ranked = build_note(target, design_inputs(target, demo_process_path()), NoteRequest(
            output_points=5, temperature_points=3, supply_points=3, monte_carlo=0, approximate=False), summary)
    section = ranked.section("ranking")
    assert [s.key for s in ranked.sections][:2] == ["purpose", "ranking"]
    assert section.blocks[1].rows[1][2] == "no" and "best weighted score (0.9)" in section.blocks[-1].text
    assert any(isinstance(b, Figure) for b in section.blocks) and note.section("ranking") is None


@pytest.mark.parametrize("edit, line, reason", [
    ('Q2 = "2 1.2 left"', 'Q9 = "2 1.2 left"', "no element named 'Q9'"),
    ('Q2 = "2 1.2 left"', 'Q2 = "2 up left"', 'expects "COLUMN ROW [DIRECTION]"'),
    ('Q2 = "2 1.2 left"', 'Q2 = "2 1.2 down"', "control side"),
    ('Q2 = "2 1.2 left"', 'Q2 = "0 1.2 left"', "Q1 already sits at column 0, row 1.2"),
    ('rails = ["vcc"]', 'rails = ["vdd"]', "no node 'vdd'"),
])
def test_schematic_table_errors_name_file_and_line(edit, line, reason):
    from symbias.errors import LibraryError
    from symbias.library import parse_topology, shipped_dir

    text = (shipped_dir() / "bjt-simple-mirror.toml").read_text()
    changed = text.replace(edit, line)
    number = changed.splitlines().index(line) + 1
    with pytest.raises(LibraryError) as caught:
        parse_topology(changed, "mine.toml")
    assert str(caught.value).startswith(f"mine.toml:{number}: ") and reason in str(caught.value)


def test_an_unplaced_element_is_named_at_the_place_table():
    from symbias.errors import LibraryError
    from symbias.library import parse_topology, shipped_dir

    text = (shipped_dir() / "bjt-simple-mirror.toml").read_text().replace('Vout = "3 0.6 down"\n', "")
    number = text.splitlines().index("[schematic.place]") + 1
    with pytest.raises(LibraryError, match=rf"^mine.toml:{number}: schematic: element Vout has no place"):
        parse_topology(text, "mine.toml")


def test_a_ranking_from_the_engine_becomes_the_ranking_section():
    from symbias.design.rank import rank_candidates
    from symbias.note import ranking_summary
    from symbias.note.ranking import ranking_section

    ranking = rank_candidates(Path(__file__).parents[2] / "examples" / "sensor_bias_spec.toml",
                              only=("mos-wide-swing-cascode-mirror", "mos-simple-mirror"), samples=50)
    summary = ranking_summary(ranking)
    section = ranking_section(summary, "mos-wide-swing-cascode-mirror")
    rows = {row[0].strip("*"): row for row in section.blocks[1].rows}
    assert set(rows) == {"mos-wide-swing-cascode-mirror", "mos-simple-mirror"}
    for candidate in ranking.candidates:
        shown = rows[candidate.id]
        assert shown[2] == ("yes" if candidate.feasible else "no")
        rout = section.blocks[1].header.index("rout")
        assert shown[rout].value == candidate.metrics["rout"].value
    assert summary.verdict == ranking.verdict
