"""The design note as data: frozen sections of blocks (text, math, tables, figures, code), no formatting.

Domain layer of the note package.  A :class:`Note` is built by
:mod:`symbias.note.build` from the pipeline's results and written by the
renderers of :mod:`symbias.render` (Markdown, HTML, LaTeX, figures); nothing
here knows a file format.  Every number shown is a :class:`Number`, which keeps
the value the API returned beside the one text every renderer prints
(:attr:`Number.text`), so a test can hold the note to the API number by number.

Text of :class:`Paragraph` and table cells may hold inline math between ``$``
signs (LaTeX); :class:`Math` is a displayed equation.

Examples
--------
>>> Number(1.0136e-4, "A").text, Number(-0.01364, "1", percent=True).text
('101.4 uA', '-1.364 %')
>>> table = Table(("quantity", "value"), (("ratio", Number(1.0136, "1")),))
>>> table.numbers()[0].value
1.0136
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Any, Union

__all__ = ["Number", "Paragraph", "Math", "Table", "Code", "Bullets", "Curve", "Marker", "Plot", "Drawing",
           "Figure", "Section", "Provenance", "Note", "Block", "number_text", "inline_parts"]

_PREFIXES = ((1e12, "T"), (1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "u"), (1e-9, "n"),
             (1e-12, "p"), (1e-15, "f"))
#: Units printed with an SI prefix; others print the plain number.
_PREFIXED = ("A", "V", "ohm", "S", "F", "W", "Hz", "A/V", "V/A")


def number_text(value: float | None, unit: str = "", digits: int = 4, percent: bool = False) -> str:
    """The one text of a number in a note: ``digits`` significant figures, an SI prefix for SI units.

    Examples
    --------
    >>> number_text(3.05e6, "ohm"), number_text(0.6512, "V"), number_text(120.0, "1"), number_text(None, "V")
    ('3.05 Mohm', '651.2 mV', '120', '-')
    >>> number_text(-35.4, "ppm/degC")
    '-35.4 ppm/degC'
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    if math.isinf(value):
        return "infinite" if value > 0 else "-infinite"
    if percent:
        return f"{_significant(100.0 * value, digits)} %"
    suffix = "" if unit in ("", "1") else f" {unit}"
    if unit in _PREFIXED and value != 0:
        for scale, prefix in _PREFIXES:
            if abs(value) >= scale * 0.9999999:
                return f"{_significant(value / scale, digits)} {prefix}{unit}"
        return f"{_significant(value, digits)} {unit}"
    return f"{_significant(value, digits)}{suffix}"


def _significant(value: float, digits: int) -> str:
    text = f"{value:.{digits}g}"
    if "e" in text:
        mantissa, exponent = text.split("e")
        return f"{mantissa}e{int(exponent)}"
    return text


_INLINE = re.compile(r"(\$[^$]+\$|\*\*[^*]+\*\*|`[^`]+`)")


def inline_parts(text: str) -> tuple[tuple[str, str], ...]:
    """Running text split into ``("text" | "math" | "bold" | "code", content)`` parts.

    The inline grammar of notes: ``$...$`` math (LaTeX), ``**...**`` bold, backquotes for code.

    Examples
    --------
    >>> inline_parts("gain $A_i$ of **Q2** at `Vout`")
    (('text', 'gain '), ('math', 'A_i'), ('text', ' of '), ('bold', 'Q2'), ('text', ' at '), ('code', 'Vout'))
    """
    out = []
    for piece in _INLINE.split(text):
        if not piece:
            continue
        if piece.startswith("$") and len(piece) > 2:
            out.append(("math", piece[1:-1]))
        elif piece.startswith("**") and len(piece) > 4:
            out.append(("bold", piece[2:-2]))
        elif piece.startswith("`") and len(piece) > 2:
            out.append(("code", piece[1:-1]))
        else:
            out.append(("text", piece))
    return tuple(out)


@dataclass(frozen=True)
class Number:
    """A number as the API gave it, with its unit; :attr:`text` is how every renderer prints it.

    Attributes
    ----------
    value : float or None
    unit : str
        SI unit, ``1`` for a plain ratio.
    percent : bool
        Print a fraction as a percentage.
    digits : int
        Significant figures.
    """

    value: float | None
    unit: str = ""
    percent: bool = False
    digits: int = 4

    def __post_init__(self) -> None:
        if self.value is not None:
            object.__setattr__(self, "value", float(self.value))

    @property
    def text(self) -> str:
        """The printed form (:func:`number_text`)."""
        return number_text(self.value, self.unit, self.digits, self.percent)


Cell = Union[str, Number]


@dataclass(frozen=True)
class Paragraph:
    """Running text; inline math between ``$`` signs."""

    text: str


@dataclass(frozen=True)
class Math:
    """A displayed equation (LaTeX), with an optional label in words."""

    latex: str
    label: str = ""


@dataclass(frozen=True)
class Table:
    """A table: header cells and rows of cells (text or :class:`Number`)."""

    header: tuple[str, ...]
    rows: tuple[tuple[Cell, ...], ...]
    caption: str = ""

    def numbers(self) -> tuple[Number, ...]:
        """Every number of the table, row by row."""
        return tuple(cell for row in self.rows for cell in row if isinstance(cell, Number))


@dataclass(frozen=True)
class Code:
    """Verbatim text (a netlist, a command line)."""

    text: str
    language: str = ""


@dataclass(frozen=True)
class Bullets:
    """A list of short items; inline math allowed."""

    items: tuple[str, ...]


@dataclass(frozen=True)
class Curve:
    """One data series of a plot (``x`` unused for a histogram)."""

    x: tuple[float, ...]
    y: tuple[float, ...]
    label: str = ""
    points: bool = False
    bins: int = 0


@dataclass(frozen=True)
class Marker:
    """A vertical (``axis="x"``) or horizontal line across a plot, with its label."""

    value: float
    label: str
    axis: str = "x"
    colour: str = "tab:red"


@dataclass(frozen=True)
class Plot:
    """A figure's data: curves, markers, shaded spans ``(first, last, label)`` and axis labels."""

    name: str
    title: str
    curves: tuple[Curve, ...]
    xlabel: str
    ylabel: str
    markers: tuple[Marker, ...] = ()
    spans: tuple[tuple[float, float, str], ...] = ()
    histogram: bool = False
    log_x: bool = False


@dataclass(frozen=True)
class Drawing:
    """A schematic: the circuit and its placement description."""

    name: str
    circuit: Any
    schematic: Any
    notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class Figure:
    """A figure block: a plot or a schematic, with its caption; files ``<name>.png`` and ``<name>.svg``."""

    content: Union[Plot, Drawing]
    caption: str

    @property
    def name(self) -> str:
        """The file stem of the figure."""
        return self.content.name


Block = Union[Paragraph, Math, Table, Code, Bullets, Figure]


@dataclass(frozen=True)
class Section:
    """A titled part of the note."""

    key: str
    title: str
    blocks: tuple[Block, ...]

    def numbers(self) -> tuple[Number, ...]:
        """Every number in the section's tables."""
        return tuple(n for block in self.blocks if isinstance(block, Table) for n in block.numbers())


@dataclass(frozen=True)
class Provenance:
    """What the note was made from: version, command line, inputs with their sha256."""

    version: str
    command: str
    inputs: tuple[tuple[str, str], ...]
    seed: int


@dataclass(frozen=True)
class Note:
    """A design note: title, sections in order, provenance.

    Attributes
    ----------
    title : str
    subject : str
        The topology id or the netlist file the note is about.
    sections : tuple of Section
    provenance : Provenance
    sweeps : tuple of SweepRequest
        The DC sweeps the note ran (output, temperature, supply), for the sign-off deck.
    """

    title: str
    subject: str
    sections: tuple[Section, ...]
    provenance: Provenance
    sweeps: tuple = ()

    def section(self, key: str) -> Section | None:
        """The section with that key (``schematic``, ``operating-point`` ...), or None."""
        return next((s for s in self.sections if s.key == key), None)

    def figures(self) -> tuple[Figure, ...]:
        """Every figure, in order."""
        return tuple(b for s in self.sections for b in s.blocks if isinstance(b, Figure))
