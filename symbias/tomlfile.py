"""TOML files (topology library, specs): decoding with located errors, and the line of every key.

Low level, shared by every reader of a TOML file (file text -> plain data and
a :class:`KeyLines` locator); it imports nothing from symbias but the errors.
``tomllib`` gives values without positions, so :class:`KeyLines` scans the
same text once to learn on which line each key, table header and multi-line
string sits; the reader uses it to name the line of every problem.

The scan follows the TOML lexical rules that matter for positions: basic and
literal strings (single- and multi-line, with escapes), comments, nesting of
arrays and inline tables, ``[table]`` and ``[[array]]`` headers, and dotted or
quoted keys.  A key written inside an inline table (``roles = { output =
"Vout" }``) is located at the line of the key that holds the table.

Examples
--------
>>> data, lines = read_toml('id = "x"\\n[roles]\\noutput = "Vout"\\n', "mine.toml")
>>> data["roles"]["output"], lines.of("output", "roles"), lines.of("id")
('Vout', 3, 1)
>>> read_toml('id = "x"\\ntitle = \\n', "mine.toml")
Traceback (most recent call last):
...
symbias.errors.LibraryError: mine.toml:2: TOML syntax: Invalid value
"""

from __future__ import annotations

import re
import tomllib

from .errors import LibraryError, SymbiasError

__all__ = ["KeyLines", "read_toml"]

_AT_LINE = re.compile(r"\s*\(at line (\d+), column \d+\)")
_AT_END = re.compile(r"\s*\(at end of document\)")
# Python refuses to convert integers of more than 4300 digits (a ValueError from tomllib)
_LONG_DIGITS = re.compile(r"\d{4000,}")

_BARE = r"[A-Za-z0-9_-]+"
_QUOTED = r'"(?:[^"\\]|\\.)*"|\'[^\']*\''
_PART = rf"(?:{_BARE}|{_QUOTED})"
_PATH = rf"{_PART}(?:\s*\.\s*{_PART})*"
_HEADER = re.compile(rf"\s*(\[\[?)\s*({_PATH})\s*\]")
_KEY = re.compile(rf"\s*({_PATH})\s*=\s*")
_SPECIAL = re.compile(r"\"\"\"|'''|[\"'#\[\]{}]")
_BASIC_STOP = re.compile(r'\\.?|"')
_LITERAL_STOP = re.compile("'")
_PARTS = re.compile(rf"({_BARE})|\"((?:[^\"\\]|\\.)*)\"|'([^']*)'")


def read_toml(text: str, path: str, error: type[SymbiasError] = LibraryError) -> tuple[dict, "KeyLines"]:
    """Decode a TOML file's text; return the data and its :class:`KeyLines`.

    Raises
    ------
    LibraryError (or ``error``)
        For malformed TOML, with the line ``tomllib`` reports (the last line
        when the problem is the end of the text).
    """
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        message = str(err)
        found = _AT_LINE.search(message)
        line = int(found.group(1)) if found else max(1, len(text.splitlines()))
        reason = _AT_END.sub("", _AT_LINE.sub("", message)).strip() or "malformed TOML"
        raise error(f"TOML syntax: {reason}", path, line) from None
    except RecursionError:
        raise error("TOML syntax: arrays or inline tables nested too deep", path, KeyLines(text).deepest) from None
    except ValueError as err:  # an integer too long for Python to convert
        raise error(f"TOML value: {str(err).split(';')[0]}", path, _line_of(_LONG_DIGITS, text)) from None
    return data, KeyLines(text)


def _line_of(pattern: re.Pattern, text: str) -> int:
    for number, line in enumerate(text.splitlines(), start=1):
        if pattern.search(line):
            return number
    return 1


def _key_path(text: str) -> tuple[str, ...]:
    """The parts of a dotted, possibly quoted key: ``a."b c".d`` -> ``('a', 'b c', 'd')``."""
    return tuple(next(g for g in match.groups() if g is not None) for match in _PARTS.finditer(text))


class KeyLines:
    """On which line each key, table header and multi-line string of a TOML text sits.

    Parameters
    ----------
    text : str
        The whole file.

    Attributes
    ----------
    deepest : int
        Line where arrays and inline tables are nested deepest.

    Examples
    --------
    >>> lines = KeyLines("[[refs]]\\nyear = 1\\n[[refs]]\\nyear = 2\\nnote = '''\\nfirst\\n'''\\n")
    >>> lines.of("year", "refs", 1), lines.string_start("note", "refs", 1)
    (4, 6)
    """

    def __init__(self, text: str):
        self.text_lines = text.splitlines()
        self.keys: dict[tuple[str, int | None, str], int] = {}
        self.headers: dict[tuple[str, int | None], int] = {}
        # (table, index, key) -> (first line of the value, characters before it on that line, delimiter)
        self.strings: dict[tuple[str, int | None, str], tuple[int, int, str]] = {}
        self.deepest = 1
        self._quote: str | None = None
        self._depth = 0
        self._most = 0
        self._table: tuple[str, int | None] = ("", None)
        self._counts: dict[str, int] = {}
        for number, line in enumerate(self.text_lines, start=1):
            self._line(number, line)

    def of(self, key: str, table: str = "", index: int | None = None) -> int:
        """Line of ``key`` in ``table`` (element ``index`` of an array of tables).

        Falls back to the key holding the table (an inline table), then to the
        table's header, then to line 1.
        """
        parent, _, name = table.rpartition(".")
        return (self.keys.get((table, index, key)) or (table and self.keys.get((parent, None, name)))
                or self.headers.get((table, index)) or 1)

    def string_start(self, key: str, table: str = "", index: int | None = None) -> int | None:
        """Line of the first character of a multi-line string value, or None if it is not one."""
        place = self.strings.get((table, index, key))
        return place[0] if place else None

    def holds_verbatim(self, key: str, value: str, table: str = "", index: int | None = None) -> bool:
        """True when the decoded multi-line string ``value`` is written line for line in the file.

        False for a single-line string and for a string that uses escapes or
        line-ending backslashes: its lines do not sit on consecutive file lines.
        """
        place = self.strings.get((table, index, key))
        if place is None:
            return False
        first, skip, delimiter = place
        if first > len(self.text_lines):
            return False
        region = "\n".join([self.text_lines[first - 1][skip:], *self.text_lines[first:]])
        return region.startswith(value) and region[len(value):].startswith(delimiter)

    # -- the scan ------------------------------------------------------------------------
    def _line(self, number: int, line: str) -> None:
        start = 0
        if self._quote is None and self._depth == 0:
            start = self._statement(number, line)
        self._characters(number, line, start)
        if self._quote in ('"', "'"):
            self._quote = None  # single-line strings end with their line (tomllib reports the error)

    def _statement(self, number: int, line: str) -> int:
        """Record a header or a key at the start of a line; return where its value starts."""
        header = _HEADER.match(line)
        if header:
            table = ".".join(_key_path(header.group(2)))
            index = None
            if header.group(1) == "[[":
                index = self._counts.get(table, 0)
                self._counts[table] = index + 1
            self._table = (table, index)
            self.headers.setdefault(self._table, number)
            return len(line)
        key = _KEY.match(line)
        if not key:
            return 0
        table, index = self._table
        parts = _key_path(key.group(1))
        for depth in range(len(parts)):
            inner = ".".join(p for p in (table, *parts[:depth]) if p)
            self.keys.setdefault((inner, index if depth == 0 else None, parts[depth]), number)
        rest = line[key.end():]
        for opening in ('"""', "'''"):
            if rest.startswith(opening):
                # TOML drops a newline right after the opening delimiter
                place = (number + 1, 0) if rest == opening else (number, key.end() + 3)
                self.strings.setdefault((table, index, ".".join(parts)), (*place, opening))
        return key.end()

    def _characters(self, number: int, line: str, i: int) -> None:
        """Follow strings, comments and brackets from position ``i`` to the end of the line."""
        n = len(line)
        while i < n:
            if self._quote is not None:
                i = self._string_end(line, i)
                continue
            found = _SPECIAL.search(line, i)
            if found is None or found.group() == "#":
                return
            token, i = found.group(), found.end()
            if token in "[{":
                self._depth += 1
                if self._depth > self._most:
                    self._most, self.deepest = self._depth, number
            elif token in "]}":
                self._depth = max(0, self._depth - 1)
            else:
                self._quote = token

    def _string_end(self, line: str, i: int) -> int:
        """Position after the closing delimiter of the open string, or the line's end."""
        quote = self._quote
        stop = _BASIC_STOP if quote[0] == '"' else _LITERAL_STOP
        while True:
            found = stop.search(line, i)
            if found is None:
                return len(line)
            i = found.end()
            if found.group()[0] == "\\" or not line.startswith(quote, found.start()):
                continue  # an escape, or a lone quote inside a triple-quoted string
            i = found.start() + len(quote)
            while len(quote) == 3 and i < len(line) and line[i] == quote[0]:
                i += 1  # up to two quotes may stand just before a closing delimiter
            self._quote = None
            return i
