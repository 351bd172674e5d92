"""A design note as Markdown with LaTeX math (``$...$`` inline, ``$$`` displayed) and figure links.

Renderer (:class:`~symbias.note.model.Note` -> text).  Figures are linked by
file name (``schematic.svg`` beside ``note.md``); every number is printed as
:attr:`~symbias.note.model.Number.text`.

Examples
--------
>>> from symbias.note.model import Note, Paragraph, Provenance, Section, Table, Number
>>> note = Note("Design note: demo", "demo", (Section("a", "A", (Paragraph("gain $A_i$"),
...             Table(("x", "y"), (("r", Number(2e6, "ohm")),)))),), Provenance("0", "", (), 1))
>>> print(note_markdown(note))
# Design note: demo
<BLANKLINE>
## A
<BLANKLINE>
gain $A_i$
<BLANKLINE>
| x | y |
|---|---|
| r | 2 Mohm |
<BLANKLINE>
"""

from __future__ import annotations

from ..note.model import Bullets, Code, Figure, Math, Note, Number, Paragraph, Table

__all__ = ["note_markdown", "cell_text"]


def cell_text(cell) -> str:
    """A table cell as text: a number's printed form, or the text itself."""
    return cell.text if isinstance(cell, Number) else str(cell)


def _table(table: Table) -> list[str]:
    lines = []
    if table.caption:
        lines += [f"*{table.caption}*", ""]
    lines.append("| " + " | ".join(table.header) + " |")
    lines.append("|" + "---|" * len(table.header))
    for row in table.rows:
        lines.append("| " + " | ".join(cell_text(c).replace("|", "\\|") for c in row) + " |")
    return lines + [""]


def _block(block) -> list[str]:
    if isinstance(block, Paragraph):
        return [block.text, ""]
    if isinstance(block, Math):
        return ["$$", block.latex, "$$", ""]
    if isinstance(block, Table):
        return _table(block)
    if isinstance(block, Code):
        return [f"```{block.language}", block.text, "```", ""]
    if isinstance(block, Bullets):
        return [f"- {item}" for item in block.items] + [""]
    if isinstance(block, Figure):
        return [f"![{block.caption}]({block.name}.svg)", "", f"*{block.caption}* ([PNG]({block.name}.png))", ""]
    raise TypeError(f"unknown note block {type(block).__name__}")  # a programming error, not user input


def note_markdown(note: Note) -> str:
    """The whole note as Markdown."""
    lines = [f"# {note.title}", ""]
    for section in note.sections:
        lines += [f"## {section.title}", ""]
        for block in section.blocks:
            lines += _block(block)
    return "\n".join(lines)
