"""Writing result files safely: all or nothing, and never over a folder.

Every file symbias writes (decks, plots, exports, notes, ranking reports) goes
through :func:`write_atomic`: the content is written to a temporary file in
the destination folder and renamed into place, so a failure (a full disk, a
killed process, an error while rendering) leaves the old file intact and no
temporary file behind.  :func:`check_destination` refuses a missing folder, a
folder given as the file, or a name whose suffix does not say the format,
before any work is done.

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
import tempfile
from pathlib import Path
from typing import Callable, Iterable

from ..errors import OutputError

__all__ = ["check_destination", "write_atomic", "write_text"]


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
