"""The design note's frequency and noise sections: every number is the API's, for a mirror and a reference.

References: the note must carry, unchanged, the numbers of ``frequency_analysis`` and
``noise_analysis``, which tests/spectral/test_frequency.py and test_noise_ngspice.py hold to Debian's
ngspice (`.ac` output impedance of a MOS cascode, supply rejection of a bandgap core, `.noise`), and print
each one the same way in Markdown, HTML and LaTeX; PNG and SVG files are checked by their signatures.
The analyses here run without the note's operating point (each solves its own), so the comparison also
holds the point the note hands them to the one the pipeline finds.
"""

from __future__ import annotations

import functools
import math
import warnings

import numpy as np
import pytest

from symbias.errors import UsageError
from symbias.note import NoteRequest, build_note
from symbias.note.model import Figure
from symbias.pipeline import design_inputs, load_target
from symbias.pipeline.frequency import FrequencyRequest, frequency_analysis
from symbias.pipeline.noise import NoiseRequest, default_noise_output, noise_analysis
from symbias.process import demo_process_path

QUICK = NoteRequest(output_points=9, temperature_points=5, supply_points=5, monte_carlo=0, samples=300)
#: A current mirror (output impedance) and a reference (supply rejection).
CELLS = ("mos-cascode-mirror", "brokaw-bandgap")


@functools.lru_cache(maxsize=None)
def _note(name: str, request: NoteRequest = QUICK, process: bool = True):
    target = load_target(name)
    inputs = design_inputs(target, demo_process_path() if process else None)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # matched devices that differ at bias are named in their own tests
        return target, inputs, build_note(target, inputs, request)


def _rows(section, index: int) -> dict:
    return {row[0]: row[1] for row in section.blocks[index].rows}


def _plots(section) -> dict:
    return {b.content.name: b.content for b in section.blocks if isinstance(b, Figure)}


@pytest.mark.parametrize("name", CELLS)
def test_frequency_numbers_are_the_api_numbers(name):
    target, inputs, note = _note(name)
    section = note.section("frequency")
    assert section is not None and section.title == "Frequency response"
    result = frequency_analysis(target, inputs, FrequencyRequest(per_decade=QUICK.spectral_per_decade))
    response, label = result.response, result.formula.label
    rows = _rows(section, 1)
    low = abs(response.low_frequency)
    if name == "brokaw-bandgap":  # a reference: its supply rejection
        assert (result.quantity.kind, label) == ("voltage_gain", "v(vref)/v(Vcc)")
        assert rows[f"|{label}| at low frequency"].value == low
        assert rows[f"|{label}| at low frequency, in dB"].value == 20 * math.log10(low)
    else:
        assert (result.quantity.kind, label) == ("output_resistance", "Rout at Vout")
        assert rows[f"{label} at low frequency"].value == low
    corner = next(v for k, v in rows.items() if "3 dB" in k)
    assert corner.value == response.corner and corner.unit == "Hz"
    roots = section.blocks[2].rows
    for kind, api in (("pole", response.pole_frequencies), ("zero", response.zero_frequencies)):
        shown = [row[1].value for row in roots if row[0] == kind]
        assert len(shown) >= 1 and all(min(abs(api - hz)) <= 1e-12 * hz for hz in shown), kind
        assert sorted(set(np.round(api, 6))) == sorted(set(np.round(shown, 6))), kind  # each pair once
    plots = _plots(section)
    magnitude, phase = plots["frequency_magnitude"], plots["frequency_phase"]
    assert np.array_equal(magnitude.curves[0].x, response.frequencies)
    assert np.array_equal(magnitude.curves[0].y, response.magnitude) and magnitude.log_y and magnitude.log_x
    assert np.array_equal(phase.curves[0].y, response.phase)


@pytest.mark.parametrize("name", CELLS)
def test_noise_numbers_are_the_api_numbers(name):
    target, inputs, note = _note(name)
    section = note.section("noise")
    assert section is not None and section.title == "Output noise"
    request = NoiseRequest(output=default_noise_output(target), per_decade=QUICK.spectral_per_decade, at=1e3,
                           closed_form=False)
    result = noise_analysis(target, inputs, request)
    spectrum = result.spectrum
    rows = _rows(section, 1)
    assert rows["density at 1 kHz"].value == result.density_at and rows["density at 1 kHz"].unit == spectrum.output.unit
    assert rows["root density at 1 kHz"].value == math.sqrt(result.density_at)
    assert rows["integrated from 1 Hz to 100 MHz, rms"].value == math.sqrt(result.integrated)
    assert rows["1/f corner"].value == result.corner and rows["how the corner was found"] == result.corner_note
    ranked = [(row[0], row[2].value, row[3].value) for row in section.blocks[2].rows]
    assert ranked == [(r.element, r.density, r.share) for r in spectrum.by_element(1e3)]
    assert sum(share for _, _, share in ranked) == pytest.approx(1.0)
    plot = _plots(section)["noise"]
    assert np.array_equal(plot.curves[0].y, np.sqrt(spectrum.total))
    assert [c.label for c in plot.curves[1:]] == [r[0] for r in ranked[:len(plot.curves) - 1]]


@pytest.mark.parametrize("name", CELLS)
def test_every_spectral_number_prints_the_same_in_every_format(name):
    from symbias.render.note_html import note_html
    from symbias.render.note_latex import escape, note_latex
    from symbias.render.note_markdown import note_markdown

    _, _, note = _note(name)
    markdown, html, latex = note_markdown(note), note_html(note, {}), note_latex(note)
    for key in ("frequency", "noise"):
        numbers = note.section(key).numbers()
        assert len(numbers) >= 5, key
        for number in numbers:
            assert number.text in markdown and number.text in html and escape(number.text) in latex, (key, number)


def test_spectral_figures_are_written_and_not_empty(tmp_path):
    from symbias.render.note_files import write_figures

    _, _, note = _note("brokaw-bandgap")
    only = type(note)(note.title, note.subject, (note.section("frequency"), note.section("noise")), note.provenance)
    written = write_figures(only, tmp_path)
    assert sorted(written) == ["frequency_magnitude", "frequency_phase", "noise"]
    for png, svg in written.values():
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" and png.stat().st_size > 5000, png.name
        assert b"<svg" in svg.read_bytes()[:2000] and svg.stat().st_size > 5000, svg.name


def test_the_noise_frequency_of_a_spec_moves_the_ranking():
    from symbias.note.context import note_context
    from symbias.note.spectral_sections import noise_section

    target = load_target("bjt-simple-mirror")
    inputs = design_inputs(target, demo_process_path())
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        context = note_context(target, inputs, NoteRequest(approximate=False, noise_frequency=1e5))
        section = noise_section(context)
    result = noise_analysis(target, inputs, NoiseRequest(output="Vout", per_decade=10, at=1e5, closed_form=False))
    assert _rows(section, 1)["density at 100 kHz"].value == result.density_at
    assert section.blocks[2].caption == "Contributions at 100 kHz, largest first"


def _one_sentence(section) -> str:
    text = section.blocks[0].text
    assert text.endswith(".") and ". " not in text, text
    return text


def test_a_cell_without_capacitances_says_so_and_keeps_its_value():
    target, inputs, note = _note("examples/simple_mirror.cir", process=False)  # its card gives no CJE, CJC, TF
    section = note.section("frequency")
    assert _one_sentence(section) == "Rout at Vout is flat over frequency: the model cards give no capacitance at " \
                                     "the operating point."
    result = frequency_analysis(target, inputs, FrequencyRequest(per_decade=QUICK.spectral_per_decade))
    assert _rows(section, 1)["Rout at Vout at low frequency"].value == abs(result.response.low_frequency)
    assert not any(isinstance(b, Figure) for b in section.blocks)
    assert note.section("noise").blocks[1].rows[0][1].value > 0  # white noise needs no capacitance


def test_an_analysis_that_cannot_be_done_gives_one_sentence_with_its_reason(tmp_path):
    deck = tmp_path / "load.cir"
    deck.write_text("Mirror with a load capacitance given only as a symbol\nVCC vcc 0 5\nIref vcc in 20u\n"
                    "Q1 in in 0 QN\nQ2 out in 0 QN\nCload out 0 CX\nVout out 0 2.5\n"
                    ".model QN npn (IS=1e-16 BF=120 VAF=60)\n.end\n")
    _, _, note = _note(str(deck))
    for key in ("frequency", "noise"):
        section = note.section(key)
        assert len(section.blocks) == 1 and "CX" in _one_sentence(section), key
        assert _one_sentence(section).startswith("Not computed: "), key
    assert note.section("operating-point") is not None  # the rest of the note is there


@pytest.mark.parametrize("field, value", [("spectral_per_decade", 0), ("noise_frequency", -1.0),
                                          ("noise_frequency", math.inf)])
def test_bad_spectral_requests_are_refused(field, value):
    with pytest.raises(UsageError):
        NoteRequest(**{field: value})


def test_the_note_command_ranks_noise_at_the_spec_noise_frequency(tmp_path, monkeypatch, capsys):
    from pathlib import Path

    from symbias.cli import main
    from symbias.design import rank

    spec = (Path(__file__).parents[2] / "examples" / "sensor_bias_spec.toml").read_text()
    spec = spec.replace('process = "demo"', f'process = "{demo_process_path()}"')
    spec = spec.replace("[limits]\n", '[limits]\nnoise_max = "20pA/sqrt(Hz)"\nnoise_frequency = "20k"\n')
    (tmp_path / "spec.toml").write_text(spec)
    ranked = rank.rank_candidates  # the whole library takes long; two candidates make the same note section
    monkeypatch.setattr(rank, "rank_candidates", lambda spec, **kw: ranked(spec, **kw, only=(
        "mos-wide-swing-cascode-mirror", "mos-simple-mirror")))
    assert main(["note", "mos-simple-mirror", "--spec", str(tmp_path / "spec.toml"), "--samples", "20",
                 "-o", str(tmp_path / "note")]) == 0
    capsys.readouterr()
    text = (tmp_path / "note" / "note.md").read_text()
    assert "*Contributions at 20 kHz, largest first*" in text and "| density at 20 kHz |" in text
