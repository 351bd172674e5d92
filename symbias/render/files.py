"""Writing result files safely: all or nothing, and never over a folder.

Every file symbias writes (decks, plots, exports, notes, ranking reports) goes
through :func:`write_atomic`: the content is written to a temporary file in
the destination folder and renamed into place, so a failure (a full disk, a
killed process, an error while rendering) leaves the old file intact and no
temporary file behind.  :func:`check_destination` refuses a missing folder, a
folder given as the file, or a name whose suffix does not say the format,
before any work is done.  :func:`write_folder` does the same for a folder of
files (a design note): they are written in a staging folder beside it and moved
in only when all of them exist.

Examples
--------
>>> import tempfile, pathlib
>>> with tempfile.TemporaryDirectory() as tmp:
...     target = pathlib.Path(tmp) / "deck.cir"
...     write_text(target, "title\\n.end\\n")
...     target.read_text(), sorted(p.name for p in pathlib.Path(tmp).iterdir())
('title\\n.end\\n', ['deck.cir'])
"""

from __future__ import annotations

import os
import shutil
import tempfile
from pathlib import Path
from typing import Callable, Iterable

from ..errors import OutputError

__all__ = ["check_destination", "check_folder", "write_atomic", "write_text", "write_figure", "write_folder"]


def check_destination(path: str | Path, suffixes: Iterable[str] | None = None, option: str = "--output") -> Path:
    """The destination as a Path, after checking it can be written as asked.

    Parameters
    ----------
    path : str or Path
    suffixes : iterable of str, optional
        Accepted suffixes (lower case, with the dot); None accepts any.
    option : str
        The option that named the file, for the message.

    Raises
    ------
    OutputError
        A folder, a missing parent folder, or a suffix not in ``suffixes``.

    Examples
    --------
    >>> check_destination("out.png", (".png", ".svg")).name
    'out.png'
    """
    target = Path(path)
    if str(path) == "" or target.is_dir():
        raise OutputError(f"{path} is a folder; give a file name", path=option)
    parent = target.parent if str(target.parent) else Path(".")
    if not parent.is_dir():
        raise OutputError(f"cannot write {path}: the folder {parent} does not exist", path=option)
    if suffixes is not None:
        allowed = tuple(suffixes)
        if target.suffix.lower() not in allowed:
            raise OutputError(f"{path}: the file name must end in {' or '.join(allowed)}", path=option)
    return target


def write_atomic(path: str | Path, write: Callable[[Path], None], option: str = "--output") -> None:
    """Call ``write(temporary_path)`` and rename the result onto ``path`` (all or nothing).

    The temporary file lives in the destination folder (so the rename is
    atomic), takes the old file's permissions (or the usual ones for a new
    file), and is removed whatever happens.  A symbolic link is written
    through: the file it points at is replaced, the link stays.

    Raises
    ------
    OutputError
        When the file cannot be written; ``path`` is then as it was before.
    """
    target = check_destination(path, option=option)
    if target.is_symlink():
        target = Path(os.path.realpath(target))
    folder = target.parent if str(target.parent) else Path(".")
    try:
        handle, temporary = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=folder)
    except OSError as err:
        raise OutputError(f"cannot write {path}: {err.strerror or err}", path=option) from None
    os.close(handle)
    try:
        os.chmod(temporary, _mode_for(target))
        write(Path(temporary))
        os.replace(temporary, target)
    except OSError as err:
        raise OutputError(f"cannot write {path}: {err.strerror or err}", path=option) from None
    finally:
        if os.path.lexists(temporary):
            os.unlink(temporary)


def _mode_for(target: Path) -> int:
    """Permissions of the file being replaced, else those a new file gets under the umask."""
    try:
        return target.stat().st_mode & 0o7777
    except FileNotFoundError:
        umask = os.umask(0)
        os.umask(umask)
        return 0o666 & ~umask


def write_text(path: str | Path, text: str, option: str = "--output") -> None:
    """Write text atomically (UTF-8), flushed to disk before it replaces the old file."""

    def write(temporary: Path) -> None:
        with open(temporary, "w", encoding="utf-8") as stream:
            stream.write(text)
            stream.flush()
            os.fsync(stream.fileno())

    write_atomic(path, write, option)


def write_figure(path: str | Path, draw: Callable[[Path, str], None], option: str = "--plot") -> None:
    """Write a figure atomically in the format its suffix names: ``draw(temporary_path, kind)``.

    ``kind`` is the suffix in lower case (``png``, ``svg``, ``pdf``); the
    caller has checked it with :func:`check_destination` before any work.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> write_figure(folder / "f.SVG", lambda temporary, kind: temporary.write_text(kind))
    >>> (folder / "f.SVG").read_text()
    'svg'
    """
    kind = str(path).rsplit(".", 1)[1].lower()
    write_atomic(path, lambda temporary: draw(temporary, kind), option)


def check_folder(folder: str | Path, option: str = "--output") -> Path:
    """``folder`` as a Path when a folder of results may be written there (before any work), else an error.

    Raises
    ------
    OutputError
        For a file given as the folder or a missing parent folder.
    """
    target = Path(folder)
    if target.exists() and not target.is_dir():
        raise OutputError(f"{target} is a file; give a folder", path=option)
    parent = target.parent if str(target.parent) else Path(".")
    if not parent.is_dir():
        raise OutputError(f"cannot write {target}: the folder {parent} does not exist", path=option)
    return target


def write_folder(folder: str | Path, fill: Callable[[Path], object], option: str = "--output") -> object:
    """Call ``fill(staging_folder)`` and move what it wrote into ``folder``, all or nothing; return its result.

    The staging folder lives beside ``folder`` (same file system).  A new
    ``folder`` is the staging folder renamed; into an existing one the files
    are moved one by one (each rename atomic).  Whatever fails, the staging
    folder is removed and ``folder`` holds what it held before.

    Raises
    ------
    OutputError
        For a missing parent folder, a file given as the folder, or a file that cannot be written.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> parent = pathlib.Path(tempfile.mkdtemp())
    >>> write_folder(parent / "note", lambda staging: (staging / "a.md").write_text("x"))
    1
    >>> sorted(p.name for p in parent.iterdir()), (parent / "note" / "a.md").read_text()
    (['note'], 'x')
    """
    target = check_folder(folder, option)
    parent = target.parent if str(target.parent) else Path(".")
    try:
        staging = Path(tempfile.mkdtemp(prefix=f".{target.name}.", suffix=".part", dir=parent))
    except OSError as err:
        raise OutputError(f"cannot write {target}: {err.strerror or err}", path=option) from None
    try:
        result = fill(staging)
        if not target.exists():
            os.rename(staging, target)
            return result
        for path in sorted(staging.rglob("*")):
            if path.is_file():
                destination = target / path.relative_to(staging)
                destination.parent.mkdir(parents=True, exist_ok=True)
                os.replace(path, destination)
        return result
    except OSError as err:
        raise OutputError(f"cannot write {target}: {err.strerror or err}", path=option) from None
    finally:
        if staging.exists():
            shutil.rmtree(staging, ignore_errors=True)
