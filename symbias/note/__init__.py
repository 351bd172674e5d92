"""Design notes: the chosen circuit with its derivation, numbers, plots, schematic and cautions, as data.

Design layer, beside :mod:`symbias.design` and on :mod:`symbias.pipeline`:

* :mod:`~symbias.note.model`: the frozen document (sections of paragraphs,
  equations, tables of :class:`Number`, figures, code), no file format;
* :mod:`~symbias.note.context`: the request and the results every section
  shares (the derivation at the operating point);
* :mod:`~symbias.note.circuit_sections`, :mod:`~symbias.note.small_signal_sections`,
  :mod:`~symbias.note.dc_sections`, :mod:`~symbias.note.ranking`: one builder per section;
* :mod:`~symbias.note.build`: :func:`build_note`.

The renderers live in :mod:`symbias.render` (``note_markdown``, ``note_html``,
``note_latex``, ``figures``, ``schematic``) and ``symbias note`` writes them all
with the sign-off deck.

Sections, in order: purpose and scenario; (with a spec) the ranking; schematic;
netlist and element roles; output resistance and transfer (exact and leading
order, assumptions, worst error); DC mirror ratio and its systematic error by
cause; random error by device and Monte Carlo; sensitivities; operating point
per corner; compliance; temperature; supply; cautions; how the note was made.
"""

from __future__ import annotations

from .build import build_note
from .context import NoteRequest
from .model import Note, Number
from .ranking import CandidateRow, RankingSummary, ranking_summary

__all__ = ["build_note", "NoteRequest", "Note", "Number", "RankingSummary", "CandidateRow", "ranking_summary"]
