"""The README works as written: every command of the tour and the Python example run.

Reference: the README itself (what a new user types after the two set-up
commands); ngspice (Debian's package) runs the deck the tour writes.
"""

from __future__ import annotations

import shlex
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]


def _blocks(language: str) -> list[list[str]]:
    blocks, inside, current = [], False, []
    for line in (ROOT / "README.md").read_text().splitlines():
        if line.strip() == f"```{language}":
            inside, current = True, []
        elif inside and line.strip() == "```":
            inside = False
            blocks.append(current)
        elif inside:
            current.append(line)
    return blocks


def _tour() -> list[str]:
    tour = next(b for b in _blocks("sh") if b and b[0].startswith(". .venv/bin/activate"))
    return [line.split("  #")[0].strip() for line in tour[1:] if line.strip() and not line.startswith("#")]


@pytest.mark.parametrize("line", _tour())
def test_tour_command_runs(tmp_path, line):
    symbias = [sys.executable, "-m", "symbias"]
    for part in line.split("&&"):
        for written in ("wilson_signoff.cir", "wilson_iout.csv", "ranking.md", "tradeoff.png", "sink-note"):  # the tour writes to a scratch folder
            part = part.replace(written, str(tmp_path / written))
        words = shlex.split(part)
        if words[0] == "ngspice":
            if shutil.which("ngspice") is None:
                pytest.skip("ngspice is not installed")
            argv = words
        else:
            assert words[0] == "symbias", line
            argv = symbias + words[1:]
        done = subprocess.run(argv, cwd=ROOT, capture_output=True, text=True, timeout=300)
        assert done.returncode == 0, f"{line}: {done.stderr[-500:]}"
        assert done.stdout.strip() or "-o" in words, line
        assert "Traceback" not in done.stderr


def test_python_example_runs():
    code = "\n".join(next(b for b in _blocks("python") if any("import symbias" in l for l in b)))
    done = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr[-800:]
    assert "beta" in done.stdout
