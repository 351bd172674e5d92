"""Run the command line in process and check its answer to bad input: one line, the right place, no file touched.

Examples
--------
>>> ERROR_LINE.match("deck.cir:4: R2: undefined model 'QX'") is not None
True
"""

from __future__ import annotations

import re
from pathlib import Path

__all__ = ["ERROR_LINE", "snapshot", "run_cli", "one_error_line"]

#: ``where[:line]: cause``: where is a file or an option (``--temp``).
ERROR_LINE = re.compile(r"^(?P<where>[^:\s][^:]*?)(?::(?P<line>\d+))?: (?P<cause>\S.*)$")


def snapshot(folder: Path) -> dict[str, bytes]:
    """Every file under ``folder`` with its content."""
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def run_cli(folder: Path, monkeypatch, capsys, argv: list[str], files: dict[str, str] | None = None):
    """Write ``files`` into ``folder``, run ``symbias argv`` there; return (status, stdout, stderr, changed)."""
    from symbias.cli import main

    for name, text in (files or {}).items():
        (folder / name).write_text(text)
    monkeypatch.chdir(folder)
    before = snapshot(folder)
    try:
        status = main(argv)
    except SystemExit as stop:  # argparse refuses an option value
        status = stop.code
    out, err = capsys.readouterr()
    return status, out, err, snapshot(folder) != before


def one_error_line(err: str) -> re.Match:
    """The single error line of ``err`` (warnings aside), parsed; fails the test otherwise."""
    lines = [line for line in err.splitlines() if ": warning: " not in line]
    assert "Traceback" not in err, err
    assert len(lines) == 1, err
    match = ERROR_LINE.match(lines[0])
    assert match, lines[0]
    return match
