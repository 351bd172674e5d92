"""A design note as a LaTeX body for ``\\input`` in a larger document.

Renderer (:class:`~symbias.note.model.Note` -> text).  The body uses
``\\section*``, ``equation*`` (amsmath), ``tabular``, ``verbatim`` and
``\\includegraphics`` (graphicx); figures are named relative to
``\\symbiasnotedir`` (defined as ``.`` unless the including document sets it
first), so ``\\newcommand\\symbiasnotedir{notes/wilson}\\input{notes/wilson/note}``
places them.  Text is escaped; inline math passes through.

Examples
--------
>>> from symbias.note.model import Note, Paragraph, Provenance, Section
>>> note = Note("Design note: 5% sink", "demo", (Section("a", "A & B", (Paragraph("gain $A_i$ of `Q_2`"),)),),
...             Provenance("0", "", (), 1))
>>> print(note_latex(note).splitlines()[-2:])
['\\\\section*{A \\\\& B}', 'gain $A_i$ of \\\\texttt{Q\\\\_2}']
"""

from __future__ import annotations

from ..note.model import Bullets, Code, Figure, Math, Note, Paragraph, Table, inline_parts
from .note_markdown import cell_text

__all__ = ["note_latex", "escape"]

_SPECIAL = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#", "_": r"\_", "{": r"\{",
            "}": r"\}", "~": r"\textasciitilde{}", "^": r"\textasciicircum{}", "\u201c": "``", "\u201d": "''"}


def escape(text: str) -> str:
    """Plain text with LaTeX's special characters escaped."""
    return "".join(_SPECIAL.get(ch, ch) for ch in text)


def _inline(text: str) -> str:
    out = []
    for kind, content in inline_parts(text):
        if kind == "math":
            out.append(f"${content}$")
        elif kind == "bold":
            out.append(rf"\textbf{{{escape(content)}}}")
        elif kind == "code":
            out.append(rf"\texttt{{{escape(content)}}}")
        else:
            out.append(escape(content))
    return "".join(out)


def _block(block) -> list[str]:
    if isinstance(block, Paragraph):
        return [_inline(block.text), ""]
    if isinstance(block, Math):
        return [r"\begin{equation*}", block.latex, r"\end{equation*}", ""]
    if isinstance(block, Table):
        lines = [r"\begin{center}", r"\begin{tabular}{" + "l" * len(block.header) + "}", r"\hline",
                 " & ".join(_inline(h) for h in block.header) + r" \\", r"\hline"]
        lines += [" & ".join(_inline(cell_text(c)) for c in row) + r" \\" for row in block.rows]
        lines += [r"\hline", r"\end{tabular}"]
        if block.caption:
            lines.append(rf"\\[2pt] \textit{{{escape(block.caption)}}}")
        return lines + [r"\end{center}", ""]
    if isinstance(block, Code):
        return [r"\begin{verbatim}", block.text, r"\end{verbatim}", ""]
    if isinstance(block, Bullets):
        return [r"\begin{itemize}", *(rf"\item {_inline(item)}" for item in block.items), r"\end{itemize}", ""]
    if isinstance(block, Figure):
        return [r"\begin{center}", rf"\includegraphics[width=0.8\linewidth]{{\symbiasnotedir/{block.name}.png}}",
                r"\\", rf"\textit{{{_inline(block.caption)}}}", r"\end{center}", ""]
    raise TypeError(f"unknown note block {type(block).__name__}")  # a programming error, not user input


def note_latex(note: Note) -> str:
    """The note as a LaTeX body (needs amsmath and graphicx in the including document)."""
    lines = [f"% {escape(note.title)}: written by symbias {note.provenance.version}; needs amsmath, graphicx",
             r"\providecommand{\symbiasnotedir}{.}", rf"\subsection*{{{escape(note.title)}}}", ""]
    for section in note.sections:
        lines += [rf"\section*{{{escape(section.title)}}}"]
        for block in section.blocks:
            lines += _block(block)
    return "\n".join(lines)
