"""A design note as one standalone HTML file: math as MathML, figures inlined, nothing fetched.

Renderer (:class:`~symbias.note.model.Note` + figure files -> text).  LaTeX is
converted to MathML by latex2mathml when the note is written, so a browser
shows the equations without any script; figures are embedded as base64 SVG
data; the style sheet is inline.  The page references no remote script, font,
style or image.

Examples
--------
>>> from symbias.note.model import Math, Note, Paragraph, Provenance, Section
>>> note = Note("Design note: demo", "demo", (Section("a", "A", (Paragraph("gain $A_i$"),
...             Math(r"A_i = \\frac{1}{1 + 2/\\beta}"))),), Provenance("0", "", (), 1))
>>> page = note_html(note, {})
>>> "<math" in page and "\\\\frac" not in page and "http" not in page.replace("http://www.w3.org", "")
True
"""

from __future__ import annotations

import base64
import html
from pathlib import Path
from typing import Mapping

from ..note.model import Bullets, Code, Figure, Math, Note, Number, Paragraph, Table, inline_parts
from .note_markdown import cell_text

__all__ = ["note_html", "mathml", "STYLE"]

#: The page's whole style sheet (inline: the page fetches nothing).
STYLE = """
body { font-family: serif; max-width: 56em; margin: 2em auto; padding: 0 1em; line-height: 1.45; color: #111; }
h1 { font-size: 1.6em; } h2 { font-size: 1.25em; border-bottom: 1px solid #ccc; margin-top: 1.8em; }
table { border-collapse: collapse; margin: 0.6em 0 1em 0; font-size: 0.92em; }
th, td { border: 1px solid #bbb; padding: 0.2em 0.55em; text-align: left; vertical-align: top; }
td.number { text-align: right; white-space: nowrap; } caption { font-style: italic; text-align: left; }
pre { background: #f5f5f5; padding: 0.6em; overflow-x: auto; font-size: 0.88em; }
figure { margin: 1em 0; } figure img { max-width: 100%; border: 1px solid #eee; }
figcaption { font-style: italic; font-size: 0.92em; }
math[display="block"] { margin: 0.6em 0; display: block; overflow-x: auto; max-width: 100%; }
"""


def mathml(latex: str, display: bool = False) -> str:
    """LaTeX -> MathML (no namespace attribute: HTML5 knows ``<math>``)."""
    from latex2mathml.converter import convert

    text = convert(latex, display="block" if display else "inline")
    return text.replace(' xmlns="http://www.w3.org/1998/Math/MathML"', "")


def _inline(text: str) -> str:
    out = []
    for kind, content in inline_parts(text):
        if kind == "math":
            out.append(mathml(content))
        elif kind == "bold":
            out.append(f"<strong>{html.escape(content)}</strong>")
        elif kind == "code":
            out.append(f"<code>{html.escape(content)}</code>")
        else:
            out.append(html.escape(content))
    return "".join(out)


def _table(table: Table) -> str:
    parts = ["<table>"]
    if table.caption:
        parts.append(f"<caption>{html.escape(table.caption)}</caption>")
    parts.append("<tr>" + "".join(f"<th>{_inline(h)}</th>" for h in table.header) + "</tr>")
    for row in table.rows:
        cells = [f'<td class="number">{html.escape(c.text)}</td>' if isinstance(c, Number)
                 else f"<td>{_inline(cell_text(c))}</td>" for c in row]
        parts.append("<tr>" + "".join(cells) + "</tr>")
    return "\n".join(parts + ["</table>"])


def _figure(block: Figure, images: Mapping[str, Path]) -> str:
    path = images.get(block.name)
    caption = f"<figcaption>{_inline(block.caption)}</figcaption>"
    if path is None:
        return f"<figure>{caption}</figure>"
    data = base64.b64encode(Path(path).read_bytes()).decode("ascii")
    kind = "svg+xml" if Path(path).suffix == ".svg" else "png"
    return (f'<figure><img id="figure-{block.name}" alt="{html.escape(block.caption)}" '
            f'src="data:image/{kind};base64,{data}">{caption}</figure>')


def _block(block, images: Mapping[str, Path]) -> str:
    if isinstance(block, Paragraph):
        return f"<p>{_inline(block.text)}</p>"
    if isinstance(block, Math):
        return mathml(block.latex, display=True)
    if isinstance(block, Table):
        return _table(block)
    if isinstance(block, Code):
        return f"<pre><code>{html.escape(block.text)}</code></pre>"
    if isinstance(block, Bullets):
        return "<ul>" + "".join(f"<li>{_inline(item)}</li>" for item in block.items) + "</ul>"
    if isinstance(block, Figure):
        return _figure(block, images)
    raise TypeError(f"unknown note block {type(block).__name__}")  # a programming error, not user input


def note_html(note: Note, images: Mapping[str, Path]) -> str:
    """The standalone page; ``images`` maps a figure's name to its file (SVG preferred), embedded as data."""
    body = [f"<h1>{html.escape(note.title)}</h1>"]
    for section in note.sections:
        body.append(f'<h2 id="{section.key}">{html.escape(section.title)}</h2>')
        body += [_block(block, images) for block in section.blocks]
    return "\n".join(["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
                      f"<title>{html.escape(note.title)}</title>", f"<style>{STYLE}</style>", "</head>", "<body>",
                      *body, "</body>", "</html>", ""])
