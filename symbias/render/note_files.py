"""Write a design note into a folder: figures (PNG and SVG), note.md, note.html, note.tex, each atomically.

Renderer (:class:`~symbias.note.model.Note` -> files).  Figures first (the
HTML embeds them), then the three texts; every file goes through
:mod:`symbias.render.files`, so an error leaves earlier files whole and no
partial file behind.  The same note gives the same bytes.

Examples
--------
>>> import tempfile, pathlib
>>> from symbias.note.model import Note, Paragraph, Provenance, Section
>>> note = Note("Design note: demo", "demo", (Section("a", "A", (Paragraph("text"),)),), Provenance("0", "", (), 1))
>>> with tempfile.TemporaryDirectory() as tmp:
...     sorted(p.name for p in write_note(note, tmp))
['note.html', 'note.md', 'note.tex']
"""

from __future__ import annotations

from pathlib import Path

from ..errors import OutputError
from ..note.model import Drawing, Note

__all__ = ["write_note", "write_figures", "NOTE_FILES"]

#: The text files of a note.
NOTE_FILES = ("note.md", "note.html", "note.tex")


def write_figures(note: Note, folder: str | Path) -> dict[str, tuple[Path, ...]]:
    """Every figure as ``<name>.png`` and ``<name>.svg``; figure name -> paths (PNG first)."""
    from .figures import FORMATS, write_plot
    from .schematic import draw_schematic, save_schematic

    out = {}
    for figure in note.figures():
        content = figure.content
        if isinstance(content, Drawing):
            drawing = draw_schematic(content.circuit, content.schematic)
            paths = tuple(Path(folder) / f"{content.name}.{kind}" for kind in FORMATS)
            for path in paths:
                save_schematic(drawing, path)
            out[figure.name] = paths
        else:
            out[figure.name] = write_plot(content, folder)
    return out


def write_note(note: Note, folder: str | Path) -> tuple[Path, ...]:
    """Write the figures and the three texts into ``folder`` (which must exist); return the paths written.

    Raises
    ------
    OutputError
        When ``folder`` is not a folder or a file cannot be written.
    """
    from .files import write_text
    from .note_html import note_html
    from .note_latex import note_latex
    from .note_markdown import note_markdown

    folder = Path(folder)
    if not folder.is_dir():
        raise OutputError(f"{folder} is not a folder", path="-o")
    figures = write_figures(note, folder)
    images = {name: paths[-1] for name, paths in figures.items()}
    texts = {"note.md": note_markdown(note), "note.html": note_html(note, images), "note.tex": note_latex(note)}
    for name, text in texts.items():
        write_text(folder / name, text, "-o")
    return tuple(p for paths in figures.values() for p in paths) + tuple(folder / n for n in NOTE_FILES)
