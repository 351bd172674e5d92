"""Run ngspice in batch mode as a subprocess and read the numbers it prints.

Second step of the simulator side (deck text -> the simulator's output).
ngspice runs as ``ngspice -b deck.cir``: an argument list, no shell, in a
fresh temporary folder (the deck's relative names cannot reach the user's
files), with standard input closed and a timeout.  The user's own ngspice
set-up (``spinit``, ``~/.spiceinit``) applies, as in their own runs.

ngspice often exits with status 0 after an error (a missing model, a vector
it cannot print, an operating point that failed), so its output is read for
the marks of failure listed in :data:`FAILURE_MARKS`; any of them, a non-zero
exit, a timeout or a missing executable is a one-line
:class:`~symbias.errors.SimulatorError` quoting the simulator's own words.
Parameters it ignores on a model card are handed back as warnings.

Nothing of the output is evaluated: numbers are taken from ``name = number``
lines that match a strict pattern and converted with ``float``.

Examples
--------
>>> printed_values("v(a) = 1.5e+00\\n@q1[gm] = 3.8e-02\\n", ["v(a)", "@q1[gm]"])
{'v(a)': 1.5, '@q1[gm]': 0.038}
>>> failure_message("", "Error on line 3 or its substitute:\\n  q1 a a 0 qq\\ncould not find a valid modelname\\n")
'Error on line 3 or its substitute: q1 a a 0 qq: could not find a valid modelname'
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Mapping, Sequence

import numpy as np

from ..errors import SimulatorError

__all__ = ["INSTALL_HINT", "FAILURE_MARKS", "SimulatorRun", "simulator", "run_ngspice", "failure_message",
           "ignored_parameters", "printed_values", "read_wrdata", "wrdata_rows", "run_reference"]

#: What a user without ngspice is told.
INSTALL_HINT = ("ngspice is not installed or not on PATH: install it (Debian/Ubuntu: sudo apt-get install ngspice; "
                "Fedora: sudo dnf install ngspice; macOS: brew install ngspice) or give its path in SYMBIAS_NGSPICE")

#: Environment variable naming the ngspice executable to run instead of the one on PATH.
EXECUTABLE_VARIABLE = "SYMBIAS_NGSPICE"

#: Patterns of ngspice's output lines that mean the run failed, whatever its exit status, most telling
#: first (the message quotes the line of the first pattern found).
FAILURE_MARKS = (
    r"^error\b", r"\bfatal\b", r"dc solution failed", r"could not find (a valid|library|include)", r"can't find model",
    r"(library|include) file .* not found", r"section definition .* not found", r"unknown subckt",
    r"no such parameter", r"no such vector", r"not available or has zero length", r"undefined parameter",
    r"singular matrix", r"timestep too small", r"iteration limit", r"simulation\(s\) aborted",
    r"simulation interrupted", r"doanalyses:",
)
_MARKS = tuple(re.compile(mark, re.IGNORECASE) for mark in FAILURE_MARKS)

_NUMBER = r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?"
_PRINTED = re.compile(rf"^\s*(\S+)\s*=\s*({_NUMBER})\s*$")
_IGNORED = re.compile(r"unrecognized parameter \((\S+)\) - ignored", re.IGNORECASE)
_MODEL_CARD = re.compile(r"^\s*\.model\s+(\S+)", re.IGNORECASE)


@dataclass(frozen=True)
class SimulatorRun:
    """What one ngspice run printed.

    Attributes
    ----------
    stdout, stderr : str
    files : mapping of str to str
        Contents of the files asked for, written by the run in its folder.
    kept : str or None
        Where the deck was kept (when asked for).
    """

    stdout: str
    stderr: str
    files: Mapping[str, str]
    kept: str | None = None


def simulator(executable: str | None = None) -> str | None:
    """Path of the ngspice executable (``SYMBIAS_NGSPICE``, else ``ngspice`` on PATH), or None.

    Examples
    --------
    >>> simulator() is None or "ngspice" in simulator()
    True
    """
    name = executable or os.environ.get(EXECUTABLE_VARIABLE) or "ngspice"
    return shutil.which(name)


def run_ngspice(deck: str, *, timeout: float = 60.0, keep: str | Path | None = None, files: Sequence[str] = (),
                where: str | None = None, executable: str | None = None) -> SimulatorRun:
    """Run ``ngspice -b`` on deck text in a temporary folder and check its output for failure.

    Parameters
    ----------
    deck : str
    timeout : float
        Seconds before the run is stopped.
    keep : path, optional
        A folder to keep the deck (``deck.cir``) and the simulator's output (``ngspice.log``) in.
    files : sequence of str
        Names of files the deck writes (``wrdata``) to read back.
    where : str, optional
        The netlist the deck comes from, for error messages.

    Raises
    ------
    SimulatorError
        ngspice missing, a timeout, a non-zero exit or a failure in its output; the message quotes ngspice.
    """
    exe = simulator(executable)
    if exe is None:
        raise SimulatorError(INSTALL_HINT, path=where)
    try:
        with tempfile.TemporaryDirectory(prefix="symbias-ngspice-") as folder:
            return _run_in(Path(folder), exe, deck, timeout, keep, files, where)
    except OSError as err:  # no temporary folder, or the executable cannot be started
        raise SimulatorError(f"cannot run ngspice ({exe}): {err.strerror or err}", path=where) from None


def _run_in(folder: Path, exe: str, deck: str, timeout: float, keep, files: Sequence[str],
            where: str | None) -> SimulatorRun:
    (folder / "deck.cir").write_text(deck, encoding="utf-8")
    try:
        done = subprocess.run([exe, "-b", "deck.cir"], cwd=folder, capture_output=True, text=True,
                              timeout=timeout, stdin=subprocess.DEVNULL, errors="replace")
    except subprocess.TimeoutExpired:
        kept = _keep(keep, deck, "", "")
        raise SimulatorError(f"ngspice did not finish within {timeout:g} s{_kept_note(kept)}", path=where) from None
    kept = _keep(keep, deck, done.stdout, done.stderr)
    message = failure_message(done.stdout, done.stderr)
    if message is None and done.returncode != 0:
        message = f"exit status {done.returncode}"
    if message is not None:
        raise SimulatorError(f"ngspice failed: {message}{_kept_note(kept)}", path=where)
    contents = {}
    for name in files:
        target = folder / name
        if not target.exists():
            raise SimulatorError(f"ngspice wrote no {name}{_kept_note(kept)}", path=where)
        contents[name] = target.read_text(encoding="utf-8", errors="replace")
    return SimulatorRun(done.stdout, done.stderr, contents, kept)


def _keep(folder: str | Path | None, deck: str, stdout: str, stderr: str) -> str | None:
    if folder is None:
        return None
    target = Path(folder)
    try:
        target.mkdir(parents=True, exist_ok=True)
        (target / "deck.cir").write_text(deck, encoding="utf-8")
        (target / "ngspice.log").write_text(stdout + ("\n" if stdout else "") + stderr, encoding="utf-8")
    except OSError as err:
        raise SimulatorError(f"cannot keep the deck in {folder}: {err.strerror or err}", path=str(folder)) from None
    return str(target / "deck.cir")


def _kept_note(kept: str | None) -> str:
    return f" (deck kept in {kept})" if kept else " (--keep-deck DIR keeps the deck)"


def failure_message(stdout: str, stderr: str) -> str | None:
    """ngspice's own words where its output shows a failure, in one line; None when it shows none.

    Examples
    --------
    >>> failure_message("No. of Data Rows : 1\\nv(a) = 1.0\\n", "Note: Transient op started\\n") is None
    True
    """
    lines = [line.strip() for line in (stderr + "\n" + stdout).splitlines()]
    # the title and the printed values are the user's words and numbers, never marks of failure
    lines = [line for line in lines if not line.lower().startswith("circuit:") and not _PRINTED.match(line)]
    for mark in _MARKS:
        for index, line in enumerate(lines):
            if mark.search(line):
                return _with_context(lines, index)
    return None


def _with_context(lines: list[str], index: int) -> str:
    """The line, and when it ends with a colon the two lines it introduces (the card and the cause), as one."""
    parts = [lines[index].rstrip(" -:")]
    if lines[index].endswith(":"):
        parts += [line.rstrip(" -:") for line in lines[index + 1:index + 3] if line]
    return ": ".join(parts)[:400]


def ignored_parameters(stdout: str, stderr: str) -> tuple[str, ...]:
    """The model-card parameters ngspice reports it ignored, one text each (``tox of model n``).

    Examples
    --------
    >>> ignored_parameters("", "Warning: Model issue on line 5 :\\n  .model n nmos (tox=4n) ...\\n"
    ...                    "unrecognized parameter (tox) - ignored\\n")
    ('tox of model n',)
    """
    found: list[str] = []
    model = None
    for line in (stderr + "\n" + stdout).splitlines():
        card = _MODEL_CARD.match(line)
        if card:
            model = card.group(1)
        ignored = _IGNORED.search(line)
        if ignored:
            text = ignored.group(1) + (f" of model {model}" if model else "")
            if text not in found:
                found.append(text)
    return tuple(found)


def printed_values(stdout: str, names: Sequence[str], where: str | None = None) -> dict[str, float]:
    """The numbers ngspice printed as ``name = number`` for each of ``names`` (case-insensitive).

    Raises
    ------
    SimulatorError
        When a name was not printed as a plain number.
    """
    printed: dict[str, float] = {}
    for line in stdout.splitlines():
        match = _PRINTED.match(line)
        if match:
            printed[match.group(1).lower()] = float(match.group(2))
    missing = [name for name in names if name.lower() not in printed]
    if missing:
        raise SimulatorError(f"ngspice printed no number for {', '.join(missing[:5])}", path=where)
    return {name: printed[name.lower()] for name in names}


def read_wrdata(path: str | Path, count: int) -> np.ndarray:
    """Rows of a ``wrdata`` file of ``count`` vectors (see :func:`wrdata_rows`).

    Raises
    ------
    SimulatorError
        When the file is missing or not a table of ``2 * count`` numeric columns.
    """
    path = Path(path)
    if not path.exists():
        raise SimulatorError(f"simulator wrote no {path.name}")
    return wrdata_rows(path.read_text(encoding="utf-8", errors="replace"), count, path.name)


def wrdata_rows(text: str, count: int, name: str = "wrdata") -> np.ndarray:
    """Rows of ``wrdata`` text of ``count`` vectors: the sweep value first, then each vector.

    ``wrdata`` writes each vector as a (scale, value) column pair; the scale is kept once.

    Raises
    ------
    SimulatorError
        When the text is not a table of ``2 * count`` numeric columns.

    Examples
    --------
    >>> wrdata_rows(" 0 1.5 0 2.5\\n", 2).tolist()
    [[0.0, 1.5, 2.5]]
    """
    rows = []
    for line in text.splitlines():
        words = line.split()
        if not words:
            continue
        if len(words) != 2 * count or not all(re.fullmatch(_NUMBER, w) for w in words):
            raise SimulatorError(f"{name}: expected {2 * count} numbers per row, got {line.strip()[:60]!r}")
        rows.append([float(w) for w in words])
    if not rows:
        raise SimulatorError(f"{name}: no rows")
    data = np.array(rows)
    return np.column_stack([data[:, 0], data[:, 1::2]])


def run_reference(deck_text: Sequence[str] | str, analysis: str, vectors: Sequence[str], *,
                  timeout: float = 60.0) -> np.ndarray:
    """Run a deck with ``analysis`` and return the vectors it gives, one row per point (the comparisons' runner).

    Parameters
    ----------
    deck_text : str
        Deck text holding the placeholder ``{control}`` (from
        :func:`symbias.simulator.deck.reference_deck` with ``control="{control}"``).
    analysis : str
        ``"op"``, ``"dc Vout 0 5 0.025"``, ``"dc temp -40 125 5"``, ``"op\\nac lin 1 1 1"`` ...
    vectors : sequence of str
        ngspice vector names: ``v(out)``, ``i(vout)``, ``@q1[ic]``.

    Raises
    ------
    SimulatorError
        When ngspice is missing, fails, or writes a table of the wrong shape.
    """
    text = deck_text if isinstance(deck_text, str) else "\n".join(deck_text)
    control = f"{analysis}\nwrdata out.txt {' '.join(vectors)}\nquit"
    run = run_ngspice(text.replace("{control}", control), timeout=timeout, files=("out.txt",))
    return wrdata_rows(run.files["out.txt"], len(vectors), "out.txt")
