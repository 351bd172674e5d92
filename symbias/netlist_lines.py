"""Logical lines of netlist text, with the lines that ``.include`` and ``.lib`` bring in from other files.

First step of the text side (text -> lines; :mod:`symbias.netlist` reads the
lines into a :class:`~symbias.circuit.Circuit`).  Comments (``*`` lines, ``;``
and `` $ `` to the end of a line) and ``.control`` ... ``.endc`` blocks are
dropped, ``+`` continuations are joined, and every ``.include FILE`` and
``.lib FILE SECTION`` is replaced by the lines of that file (of that section,
between ``.lib SECTION`` and ``.endl``), recursively.  A file name is read
relative to the folder of the file that names it; an included file has no
title line; ``.end`` ends an included file.

Each :class:`Line` keeps two places: ``number``, its line in the top file
(for an included line: the line of the top-level ``.include`` that brought it
in, so later errors about its element point at the top file, as elements of a
subcircuit point at their ``X`` line), and ``origin``/``origin_line``, the file
and line the text is really on, which errors in reading the text name.  An
include cycle, a missing file or section, a file over
:data:`~symbias.limits.MAX_FILE_BYTES` and nesting deeper than
:data:`~symbias.limits.MAX_INCLUDE_DEPTH` are one-line errors at the
``.include`` line.

Examples
--------
>>> title, lines = logical_lines("my title\\nR1 a 0 1k ; load\\n+ m=2\\n* note\\n")
>>> title, [(line.number, line.text) for line in lines]
('my title', [(2, 'R1 a 0 1k m=2')])
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

from .errors import LimitError, NetlistError
from .limits import MAX_FILE_BYTES, MAX_INCLUDE_DEPTH

__all__ = ["Line", "logical_lines", "top_lines", "read_text"]

_INCLUDE_CARDS = (".include", ".inc", ".lib")


@dataclass(frozen=True)
class Line:
    """One logical netlist line.

    Parameters
    ----------
    number : int
        Its line in the top file (for an included line, the top-level ``.include`` line).
    text : str
        The text, continuations joined, comments removed.
    origin : str or None
        The included file the text is on (None: the top file).
    origin_line : int
        Its line in ``origin``.
    """

    number: int
    text: str
    origin: str | None = None
    origin_line: int = 0

    @property
    def where(self) -> tuple[str | None, int]:
        """(file or None for the top file, line) where the text really is."""
        return (self.origin, self.origin_line) if self.origin is not None else (None, self.number)


def read_text(path: str | Path, error=NetlistError, what: str = "netlist") -> str:
    """The UTF-8 text of an input file, refusing a file over :data:`~symbias.limits.MAX_FILE_BYTES`.

    Raises
    ------
    NetlistError (or ``error``)
        When the file cannot be read; the message names ``what`` it is.
    LimitError
        When it is larger than the limit.

    Examples
    --------
    >>> read_text("examples/simple_mirror.cir").splitlines()[0][:20]
    'Kestrel KT-40 sensor'
    """
    path = Path(path)
    try:
        size = path.stat().st_size
        if size > MAX_FILE_BYTES:
            raise LimitError(f"{path} has {size} bytes, more than MAX_FILE_BYTES = {MAX_FILE_BYTES}; split it or "
                             "leave out what the analysis does not need", path=str(path))
        return path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as err:
        reason = getattr(err, "strerror", None) or ("not UTF-8 text" if isinstance(err, UnicodeDecodeError) else err)
        raise error(f"cannot read {what}: {reason}", path=str(path)) from None


def _join(raw: list[str], first: int, origin: str | None) -> list[Line]:
    """Logical lines of physical lines numbered from ``first``, all in file ``origin``."""
    lines: list[Line] = []
    in_control = False
    for number, physical in enumerate(raw, start=first):
        stripped = physical.strip()
        low = stripped.lower()
        if low.startswith(".control"):
            in_control = True
            continue
        if in_control:
            in_control = not low.startswith(".endc")
            continue
        if not stripped or stripped.startswith("*"):
            continue
        stripped = stripped.split(";", 1)[0].split(" $ ", 1)[0].rstrip()
        if not stripped:
            continue
        if stripped.startswith("+"):
            if not lines:
                raise NetlistError("continuation line '+' with nothing to continue", path=origin, line=number)
            last = lines[-1]
            lines[-1] = Line(last.number, last.text + " " + stripped[1:].strip(), origin, last.origin_line)
            continue
        lines.append(Line(number, stripped, origin, number if origin is not None else 0))
    return lines


def logical_lines(text: str, path: str | None = None) -> tuple[str, list[Line]]:
    """The title and the logical lines of netlist text, included files expanded.

    Parameters
    ----------
    text : str
        The netlist; the first line is the title.
    path : str, optional
        Its file, whose folder included file names are read from (else the working folder).

    Raises
    ------
    NetlistError
        An empty netlist, a stray continuation, a missing or unreadable
        included file or section, an include cycle (each at its file and line).
    LimitError
        Included files nested deeper than :data:`~symbias.limits.MAX_INCLUDE_DEPTH`.
    """
    raw = text.splitlines()
    if not raw:
        raise NetlistError("empty netlist: the first line must be a title", line=1)
    lines = _join(raw[1:], 2, None)
    stack = (_key(path, None),) if path is not None else ()
    return raw[0].strip(), _expand(lines, path, stack, None)


def top_lines(text: str) -> list[Line]:
    """The logical lines of the top file alone, its ``.include`` and ``.lib`` lines kept as written.

    The simulator deck writes those lines back (:mod:`symbias.simulator.deck`).

    Examples
    --------
    >>> [line.text for line in top_lines("t\\n.lib 'models.lib' tt\\nR1 a 0 1k\\n")]
    [".lib 'models.lib' tt", 'R1 a 0 1k']
    """
    raw = text.splitlines()
    return _join(raw[1:], 2, None) if raw else []


def _key(path: str | None, section: str | None) -> tuple[str, str | None]:
    return (os.path.realpath(path) if path is not None else "<text>", section)


def _expand(lines: list[Line], path: str | None, stack: tuple, anchor: int | None) -> list[Line]:
    """``lines`` of file ``path`` with every include replaced by the lines it brings in."""
    out: list[Line] = []
    for line in lines:
        words = line.text.split()
        card = words[0].lower()
        if card not in _INCLUDE_CARDS:
            out.append(line if anchor is None else Line(anchor, line.text, line.origin, line.origin_line))
            continue
        origin, number = line.where
        where = dict(path=origin if origin is not None else path, line=number)
        name, section = _include_target(card, words, where)
        folder = Path(path).parent if path is not None else Path(".")
        target = folder / name
        key = _key(str(target), section)
        if key in stack:
            chain = " -> ".join(Path(k[0]).name for k in stack[stack.index(key):]) + f" -> {Path(name).name}"
            raise NetlistError(f"include cycle: {chain}", **where)
        if len(stack) > MAX_INCLUDE_DEPTH:
            raise LimitError(f"included files nest more than MAX_INCLUDE_DEPTH = {MAX_INCLUDE_DEPTH} deep; "
                             "include the files one after another instead", **where)
        try:
            body = read_text(target, what=f"{card} file {name}")
        except LimitError:
            raise
        except NetlistError as err:
            raise NetlistError(err.reason, **where) from None
        included = _join(body.splitlines(), 1, str(target))
        included = _section(included, section, name, where) if section else _until_end(included)
        out += _expand(included, str(target), stack + (key,), anchor if anchor is not None else line.number)
    return out


def _include_target(card: str, words: list[str], where: dict) -> tuple[str, str | None]:
    """(file name, section or None) of an include card."""
    arguments = [w.strip("'\"") for w in words[1:]]
    if card == ".lib":
        if len(arguments) != 2:
            raise NetlistError(".lib expects a file and a section: '.lib FILE SECTION'", **where)
        return arguments[0], arguments[1].lower()
    if len(arguments) != 1:
        raise NetlistError(f"{card} expects one file name: '{card} FILE'", **where)
    return arguments[0], None


def _until_end(lines: list[Line]) -> list[Line]:
    """The lines of an included file up to its ``.end``, if it has one."""
    for index, line in enumerate(lines):
        if line.text.split()[0].lower() == ".end":
            return lines[:index]
    return lines


def _section(lines: list[Line], section: str, name: str, where: dict) -> list[Line]:
    """The lines between ``.lib SECTION`` and its ``.endl``."""
    start = None
    for index, line in enumerate(lines):
        words = line.text.lower().split()
        if start is None and words[0] == ".lib" and len(words) == 2 and words[1].strip("'\"") == section:
            start = index + 1
        elif start is not None and words[0] == ".endl":
            return lines[start:index]
    if start is None:
        raise NetlistError(f"{name} has no section {section!r} (.lib {section} ... .endl)", **where)
    raise NetlistError(f"section {section!r} of {name} has no .endl", **where)
