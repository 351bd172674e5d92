"""Text from a netlist or library file is shown as written, never read as terminal markup, and long text is shortened.

Findings of the adversarial run: a title or element name such as ``[/bold]``
reached the terminal renderer as markup, which refused it with a traceback;
a 100,000-character title took over a minute to wrap (now shortened to
200 characters on the terminal).  Each check below runs
the command line in process and reads its stdout.
"""

from __future__ import annotations

import pytest

from support.cli_checks import run_cli

MARKED = "a [/bold] title [red]\nI1 0 a[/x] 1m\nR[/y] a[/x] 0 1k\nR2 a[/x] 0 2k\n"


@pytest.mark.parametrize("argv", [["bias"], ["bias", "--all"], ["derive", "--rout", "a[/x]"],
                                  ["sweep", "--vary", "I1", "--from", "0.001", "--to", "0.002", "--points", "3",
                                   "--out", "V(a[/x])"]])
def test_markup_in_names_is_printed_as_text(tmp_path, monkeypatch, capsys, argv):
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, [argv[0], "deck.cir", *argv[1:]],
                                  {"deck.cir": MARKED})
    assert status == 0, err
    assert "a [/bold] title [red]" in out


def test_markup_in_a_library_file_is_printed_as_text(tmp_path, monkeypatch, capsys):
    from pathlib import Path

    source = (Path(__file__).resolve().parents[2] / "topologies" / "bjt-simple-mirror.toml").read_text()
    text = source.replace('id = "bjt-simple-mirror"', 'id = "marked"').replace(
        'title = "BJT simple current mirror"', 'title = "[/bold] mirror [red]"')
    (tmp_path / "lib").mkdir()
    for argv, shown in ((["list", "--library", "lib"], "[/bold]"),
                        (["show", "marked", "--library", "lib", "--no-derive"], "[/bold] mirror [red]")):
        status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, argv, {"lib/marked.toml": text})
        assert status == 0, err
        assert shown in out


def test_a_very_long_title_is_shortened(tmp_path, monkeypatch, capsys):
    netlist = "t " + "x" * 100_000 + "\nI1 0 a 1m\nR1 a 0 1k\n"
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, ["bias", "deck.cir"], {"deck.cir": netlist})
    assert status == 0, err
    assert "x" * 100 in out and "x" * 300 not in out and "..." in out
