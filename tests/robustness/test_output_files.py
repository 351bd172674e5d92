"""Files the tool writes are written whole or not at all: a failure leaves the old file and no temporary.

Finding of the adversarial run: ``deck -o`` on a full disk left 4 KiB of a new
deck and the old one gone.  Every file goes through
:func:`symbias.render.files.write_atomic` (a temporary file in the same folder,
renamed into place).  Checked here with a writer that raises, with
``os.replace`` and ``os.fsync`` failing as on a full disk (ENOSPC), with a real
full disk (a 8 KiB tmpfs in a private mount namespace, where the machine
allows one), and through the command line (``deck -o``, ``sweep --plot``).
"""

from __future__ import annotations

import errno
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from symbias.errors import OutputError
from symbias.render import files
from symbias.render.files import write_atomic, write_folder, write_text
from support.cli_checks import one_error_line, run_cli

ROOT = Path(__file__).resolve().parents[2]
OLD = "old deck\n.end\n"


def _full_disk(*args, **kwargs):
    raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))


def _folder_holds_only(folder: Path, *names: str) -> None:
    assert sorted(p.name for p in folder.iterdir()) == sorted(names)


def test_a_writer_that_raises_leaves_the_old_file_and_no_temporary(tmp_path):
    target = tmp_path / "deck.cir"
    target.write_text(OLD)

    def half_then_fail(temporary: Path) -> None:
        temporary.write_text("half a ne")
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    with pytest.raises(OutputError, match="No space left on device"):
        write_atomic(target, half_then_fail)
    assert target.read_text() == OLD
    _folder_holds_only(tmp_path, "deck.cir")


def test_a_writer_that_fails_otherwise_also_leaves_nothing_behind(tmp_path):
    target = tmp_path / "plot.png"
    target.write_bytes(b"old plot")

    def broken(temporary: Path) -> None:
        temporary.write_bytes(b"\x89PNG half")
        raise RuntimeError("renderer failed")

    with pytest.raises(RuntimeError):
        write_atomic(target, broken)
    assert target.read_bytes() == b"old plot"
    _folder_holds_only(tmp_path, "plot.png")


@pytest.mark.parametrize("failing", ["replace", "fsync"])
def test_a_full_disk_at_the_rename_or_the_write_keeps_the_old_file(tmp_path, monkeypatch, failing):
    target = tmp_path / "deck.cir"
    target.write_text(OLD)
    monkeypatch.setattr(files.os, failing, _full_disk)
    with pytest.raises(OutputError):
        write_text(target, "new deck\n" * 1000)
    monkeypatch.undo()
    assert target.read_text() == OLD
    _folder_holds_only(tmp_path, "deck.cir")


def test_a_folder_that_refuses_a_temporary_is_one_clean_error(tmp_path, monkeypatch):
    def refused(*args, **kwargs):
        raise PermissionError(errno.EACCES, os.strerror(errno.EACCES))

    monkeypatch.setattr(files.tempfile, "mkstemp", refused)
    with pytest.raises(OutputError, match="Permission denied"):
        write_text(tmp_path / "deck.cir", "new\n")
    assert list(tmp_path.iterdir()) == []


def test_the_old_permissions_are_kept_and_a_link_is_written_through(tmp_path):
    target = tmp_path / "deck.cir"
    target.write_text(OLD)
    target.chmod(0o640)
    link = tmp_path / "link.cir"
    link.symlink_to(target)
    write_text(link, "new\n")
    assert link.is_symlink() and target.read_text() == "new\n"
    assert target.stat().st_mode & 0o777 == 0o640


def test_deck_output_survives_a_failing_command(tmp_path, monkeypatch, capsys):
    status, out, err, changed = run_cli(tmp_path, monkeypatch, capsys, ["deck", "bad.cir", "-o", "deck.cir"],
                                        {"bad.cir": "t\nI1 0 a 1m\nR1 a 0 {1/0}\n", "deck.cir": OLD})
    assert status == 2 and out == "" and not changed
    assert one_error_line(err)["where"] == "bad.cir"


def test_deck_output_on_a_full_disk_is_one_line_and_keeps_the_old_deck(tmp_path, monkeypatch, capsys):
    (tmp_path / "deck.cir").write_text(OLD)
    monkeypatch.setattr(files.os, "replace", _full_disk)
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, ["deck", str(ROOT / "examples/simple_mirror.cir"),
                                                                  "-o", "deck.cir"])
    assert status == 2 and out == ""
    assert one_error_line(err)["where"] == "--output" and "No space left" in err
    assert (tmp_path / "deck.cir").read_text() == OLD
    _folder_holds_only(tmp_path, "deck.cir")


def test_a_plot_that_fails_to_render_keeps_the_old_plot(tmp_path, monkeypatch, capsys):
    pytest.importorskip("matplotlib")
    from symbias.render import plots

    def broken(result, path, kind):
        Path(path).write_bytes(b"half")
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(plots, "sweep_plot", broken)
    (tmp_path / "p.png").write_bytes(b"old plot")
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, [
        "sweep", str(ROOT / "examples/simple_mirror.cir"), "--vary", "Vout", "--from", "0", "--to", "5",
        "--points", "11", "--plot", "p.png"])
    assert status == 2 and one_error_line(err)["where"] == "--plot"
    assert (tmp_path / "p.png").read_bytes() == b"old plot"
    _folder_holds_only(tmp_path, "p.png")


def _private_tmpfs_available() -> bool:
    if sys.platform != "linux" or shutil.which("unshare") is None:
        return False
    probe = subprocess.run(["unshare", "-rm", "sh", "-c", "mount -t tmpfs -o size=8k tmpfs /mnt"],
                           capture_output=True)
    return probe.returncode == 0


@pytest.mark.skipif(not _private_tmpfs_available(), reason="no private mount namespace for a small tmpfs here")
def test_a_really_full_disk_keeps_the_old_deck(tmp_path):
    big = "big deck\nV1 n0 0 1\n" + "".join(f"R{i} n{i} n{i + 1} 1k\n" for i in range(400)) + "R999 n400 0 1k\n"
    (tmp_path / "big.cir").write_text(big)
    (tmp_path / "disk").mkdir()
    script = ("mount -t tmpfs -o size=8k tmpfs disk && printf 'old deck\\n' > disk/deck.cir && "
              f"{sys.executable} -m symbias deck big.cir -o disk/deck.cir; echo \"status=$?\"; "
              "cat disk/deck.cir; ls -A disk")
    done = subprocess.run(["unshare", "-rm", "sh", "-c", script], cwd=tmp_path, capture_output=True, text=True,
                          timeout=120)
    lines = done.stdout.splitlines()
    assert lines == ["status=2", "old deck", "deck.cir"], (done.stdout, done.stderr)
    assert done.stderr.strip() == "--output: cannot write disk/deck.cir: No space left on device"


def test_a_folder_of_results_is_written_whole_or_not_at_all(tmp_path):
    """A design note is a folder of files: a failure while writing them leaves the folder as it was."""
    def failing(staging):
        (staging / "note.md").write_text("half a note")
        raise OSError(28, "No space left on device")

    with pytest.raises(OutputError, match="No space left on device"):
        write_folder(tmp_path / "new-note", failing)
    assert sorted(p.name for p in tmp_path.iterdir()) == []  # neither the folder nor a staging folder
    old = tmp_path / "old-note"
    old.mkdir()
    (old / "note.md").write_text("the reviewed note")
    with pytest.raises(OutputError):
        write_folder(old, failing)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["old-note"]
    assert [p.name for p in old.iterdir()] == ["note.md"] and (old / "note.md").read_text() == "the reviewed note"
    assert write_folder(old, lambda staging: (staging / "note.md").write_text("new")) == 3
    assert (old / "note.md").read_text() == "new" and sorted(p.name for p in tmp_path.iterdir()) == ["old-note"]
