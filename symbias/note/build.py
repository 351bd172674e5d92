"""Build a design note: every section from the pipeline's results, in the order a reviewer reads them.

Top of the note package (target + design inputs + request -> :class:`~symbias.note.model.Note`).
The renderers of :mod:`symbias.render` write it as Markdown, HTML and LaTeX
with its figures; :mod:`symbias.commands.note` only wires the command line.

Examples
--------
>>> from symbias.pipeline import load_target, design_inputs
>>> target = load_target("bjt-widlar-source")
>>> note = build_note(target, design_inputs(target), NoteRequest(approximate=False, monte_carlo=0,
...                   output_points=11, temperature_points=6, supply_points=5))
>>> [s.key for s in note.sections][:4]
['purpose', 'schematic', 'netlist', 'small-signal']
"""

from __future__ import annotations

from typing import Any

from ..pipeline import DesignInputs, Target
from .circuit_sections import (cautions_section, operating_point_section, provenance, provenance_section,
                               purpose_section, roles_section, schematic_section)
from .context import NoteRequest, note_context
from .dc_sections import compliance_section, random_section, ratio_section, supply_section, temperature_section
from .model import Note
from .small_signal_sections import sensitivities_section, small_signal_section

__all__ = ["build_note"]


def build_note(target: Target, inputs: DesignInputs, request: NoteRequest | None = None,
               ranking: Any = None) -> Note:
    """The design note of a target (see :mod:`symbias.note` for the sections).

    Parameters
    ----------
    target, inputs
        What is analysed and with which numbers (:mod:`symbias.pipeline.targets`).
    request : NoteRequest, optional
        Sweep sizes, Monte Carlo samples, seed, what to record.
    ranking : RankingSummary, optional
        A ranking against a spec (:func:`symbias.note.ranking.ranking_summary`) for the ranking section.

    Raises
    ------
    SymbiasError
        From the pipeline (a circuit without an operating point, an unknown output, ...).
    """
    from .ranking import ranking_section

    context = note_context(target, inputs, request or NoteRequest())
    compliance, output_sweep = compliance_section(context)
    temperature, temperature_sweep = temperature_section(context)
    supply, supply_sweep = supply_section(context)
    sweeps = tuple(s for s in (output_sweep, temperature_sweep, supply_sweep) if s is not None)
    sections = [purpose_section(context), schematic_section(context), roles_section(context),
                small_signal_section(context), ratio_section(context), random_section(context),
                sensitivities_section(context), operating_point_section(context), compliance, temperature, supply]
    if ranking is not None:
        chosen = target.topology.id if target.topology is not None else target.where
        sections.insert(1, ranking_section(ranking, chosen))
    record = provenance(context)
    sections += [cautions_section(context), provenance_section(record)]
    title = f"Design note: {target.topology.title if target.topology is not None else target.title}"
    subject = target.topology.id if target.topology is not None else target.where
    return Note(title, subject, tuple(sections), record, sweeps)
