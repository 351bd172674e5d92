"""The terminal: a rich console, plain-text capture, engineering numbers and the design-aid caution.

Lowest level of the renderers; every other renderer takes its console,
number format and caution text from here, so each is written once.

Examples
--------
>>> engineering(1.2244e6, "ohm"), engineering(4.94e-5, "A"), engineering(0.0)
('1.224Mohm', '49.4uA', '0')
>>> "local codes" in CAUTION
True
"""

from __future__ import annotations

import math
import sys
from typing import Any

from ..symbols import engineering  # written once, beside the units; shown from here

__all__ = ["CAUTION", "terminal_console", "render_to_string", "engineering", "ratio_text", "escaped", "SHOWN"]

#: Longest name or title shown in a table or header (the JSON output keeps every character).
SHOWN = 200

#: The caution every output carries: results are design aids.
CAUTION = ("Design aid: sign-off needs full simulation and measurement; high-voltage or safety-relevant "
           "circuits follow local codes and licensed practice.")

def escaped(text: object, limit: int | None = SHOWN) -> str:
    """Text from a netlist or a file, made safe inside rich markup and shortened to ``limit`` characters.

    A title like ``[/bold]`` would otherwise be read as markup (and refused
    by rich), and a 100,000-character name would take minutes to wrap.

    Examples
    --------
    >>> escaped("a [/bold] title"), escaped("x" * 300, 10)
    ('a \\\\[/bold] title', 'xxxxxxx...')
    """
    from rich.markup import escape

    shown = str(text)
    if limit is not None and len(shown) > limit:
        shown = shown[: limit - 3] + "..."
    return escape(shown)


def ratio_text(value: float | None) -> str:
    """A dimensionless ratio without an SI prefix (``0.98347``).

    Examples
    --------
    >>> ratio_text(0.983471), ratio_text(None)
    ('0.983471', '-')
    """
    return "-" if value is None or value != value else f"{value:.6g}"


def terminal_console(stream=None) -> Any:
    """A rich console on stdout, 120 columns wide when the output is not a terminal.

    Piped output (a file, a pager, a test) would otherwise wrap tables at 80 columns.
    """
    from rich.console import Console

    stream = stream or sys.stdout
    out = Console(file=stream, highlight=False)  # the automatic highlighter backtracks for minutes on long lines
    return out if out.is_terminal else Console(file=stream, width=120, highlight=False)


def render_to_string(renderable: Any, width: int = 100) -> str:
    """Render a rich object to plain text (for tests and files).

    Examples
    --------
    >>> render_to_string("plain").strip()
    'plain'
    """
    from rich.console import Console

    console = Console(width=width, record=True, color_system=None, file=_Null(), highlight=False)
    console.print(renderable)
    return console.export_text()


class _Null:
    def write(self, text: str) -> int:
        return len(text)

    def flush(self) -> None:
        pass
