"""Sections of a design note about the circuit itself: purpose, schematic, netlist and roles,
operating points per corner, cautions and how the note was made.

Section builders of the note package (:class:`~symbias.note.context.NoteContext`
-> :class:`~symbias.note.model.Section`).  Numbers come from the operating
points of :mod:`symbias.pipeline` unchanged; the text says where each came from.

Examples
--------
>>> from symbias.pipeline import load_target, design_inputs
>>> from symbias.note.context import NoteRequest, note_context
>>> target = load_target("bjt-simple-mirror")
>>> context = note_context(target, design_inputs(target), NoteRequest(approximate=False))
>>> [b.__class__.__name__ for b in schematic_section(context).blocks]
['Figure']
>>> roles_section(context).blocks[1].rows[1][:3]
('Iref', 'current source', 'vcc, in')
"""

from __future__ import annotations

import hashlib
from pathlib import Path

from .context import NoteContext
from .model import Bullets, Code, Drawing, Figure, Number, Paragraph, Provenance, Section, Table

__all__ = ["purpose_section", "schematic_section", "roles_section", "operating_point_section", "cautions_section",
           "provenance", "provenance_section", "netlist_text", "file_hash", "bulk_notes"]

_ROLE_WORDS = {"input": "input", "output": "output", "outputs": "further output", "supply": "supply",
               "bias": "bias", "transfer": "transfer input"}
_KIND_WORDS = {"R": "resistor", "C": "capacitor", "L": "inductor", "V": "voltage source", "I": "current source",
               "Q": "bipolar transistor", "M": "MOS transistor", "D": "diode", "E": "voltage-controlled voltage source",
               "G": "voltage-controlled current source", "F": "current-controlled current source",
               "H": "current-controlled voltage source"}


def _models_phrase(context: NoteContext) -> str:
    if context.inputs.models == "ngspice":
        return "ngspice, run on the netlist's own model cards"
    return "symbias's built-in hand-analysis device models"


def purpose_section(context: NoteContext) -> Section:
    """What the block is and the scenario it is analysed in (process, temperature, source of the bias values)."""
    target, inputs = context.target, context.inputs
    process = inputs.process.name if inputs.process is not None else "the netlist's own .model cards"
    blocks = []
    if context.topology is not None:
        top = context.topology
        blocks.append(Paragraph(f"{top.title} (library topology `{top.id}`, family {top.family}). {top.description}"))
    else:
        blocks.append(Paragraph(f"The circuit of `{target.where}`, titled \u201c{target.title}\u201d."))
    role = {"mirror": "a current mirror: the output current follows the input current",
            "source": "a current source: the output current is set inside the cell",
            "reference": "a reference: its output is the voltage of node " + context.output}[context.kind]
    blocks.append(Paragraph(
        f"Scenario: the block is analysed as {role}. Process: {process}; temperature {inputs.temperature:g} degC; "
        f"bias values from {_models_phrase(context)}."))
    values = [(name, Number(value)) for name, value in sorted(inputs.values.items())]
    if values:
        rows = []
        variables = {v.name: v for v in context.topology.variables} if context.topology is not None else {}
        for name, number in values:
            variable = variables.get(name)
            unit = variable.unit if variable is not None else ""
            rows.append((f"`{name}`", Number(number.value, unit or "1"),
                         variable.description if variable is not None else "given value"))
        blocks.append(Table(("design variable", "value", "meaning"), tuple(rows), "Design values used"))
    if context.topology is not None:
        references = tuple(r.text for r in context.topology.references)
        blocks.append(Paragraph("Published analysis:"))
        blocks.append(Bullets(references))
    return Section("purpose", "Purpose and scenario", tuple(blocks))


def schematic_section(context: NoteContext) -> Section:
    """The schematic drawn from the library's placement, or why there is none and the netlist instead."""
    schematic = context.topology.schematic if context.topology is not None else None
    if schematic is None:
        why = ("This netlist carries no placement description, so no schematic is drawn; the netlist itself is "
               "the circuit:") if context.topology is None else (
               "This library topology has no [schematic] table, so no schematic is drawn; its netlist is the circuit:")
        return Section("schematic", "Schematic", (Paragraph(why), Code(netlist_text(context), "spice")))
    notes = bulk_notes(context.circuit)
    hidden = schematic.hidden(context.circuit)
    caption = "Schematic of the circuit analysed."
    if hidden:
        caption += f" Supply rails stand for {', '.join(hidden)}."
    if notes:
        caption += " Not drawn: " + "; ".join(notes) + "."
    drawing = Drawing("schematic", context.circuit, schematic, notes)
    return Section("schematic", "Schematic", (Figure(drawing, caption),))


def bulk_notes(circuit) -> tuple[str, ...]:
    """MOS bulks a drawing leaves out because they are not tied to their source: ``M3 bulk at 0``."""
    return tuple(f"{e.name} bulk at {e.nodes[3]}" for e in circuit.elements_of("M") if e.nodes[3] != e.nodes[2])


def netlist_text(context: NoteContext) -> str:
    """The netlist as the user wrote it (library netlist, or the file's text)."""
    if context.topology is not None:
        return context.topology.netlist.strip("\n")
    path = context.circuit.path
    if path and Path(path).is_file():
        return Path(path).read_text(encoding="utf-8", errors="replace").strip("\n")
    return context.target.title


def roles_section(context: NoteContext) -> Section:
    """The netlist and a table of elements: kind, nodes, value and role."""
    roles: dict[str, list[str]] = {}
    for key, value in context.target.roles.items():
        for name in (value if isinstance(value, tuple) else (value,)):
            roles.setdefault(name.lower(), []).append(_ROLE_WORDS.get(key, key))
    rows = []
    for element in context.circuit.elements:
        value = _value_text(element.value) if element.value is not None else (element.model or "")
        if element.kind in ("Q", "M", "D"):
            value = f"{element.model}" + "".join(f" {k}={v}" for k, v in element.params.items())
        role = ", ".join(roles.get(element.key, [])) or _device_role(context, element)
        rows.append((element.name, _KIND_WORDS.get(element.kind, element.kind), ", ".join(element.nodes),
                     f"`{value}`" if value else "", role))
    if context.kind == "reference":
        rows.append((context.output, "node", context.output, "", "output"))
    return Section("netlist", "Netlist and element roles", (
        Code(netlist_text(context), "spice"),
        Table(("element", "kind", "nodes", "value or model", "role"), tuple(rows)),
    ))


def _value_text(value) -> str:
    """An element value as written: a number in SPICE-like form (``3.3``, not ``33/10``), else its expression."""
    return f"{float(value):g}" if value.is_number else str(value)


def _device_role(context: NoteContext, element) -> str:
    """A transistor's part, from the operating point: its region."""
    device = context.point.devices.get(element.name) if element.kind in ("Q", "M", "D") else None
    return f"{device.type}, {device.region} at the operating point" if device is not None else ""


def operating_point_section(context: NoteContext) -> Section:
    """Node voltages, output currents and device values at every corner (the written one when none is named)."""
    from ..pipeline import corner_points

    points = corner_points(context.target, context.inputs) if context.inputs.corners else None
    corners = points.points if points is not None else ((None, context.point),)
    blocks = [Paragraph(f"At {context.inputs.temperature:g} degC, bias values from {_models_phrase(context)}. "
                        "Currents into the element's first terminal are SPICE's; output currents count as the "
                        "transistor at the output drives them.")]
    for corner, point in corners:
        name = f"corner {corner}" if corner else "nominal"
        blocks += _point_tables(context, point, name)
    states = context.point.states
    if states is not None and states.several:
        words = f"{len(states.states)} DC states exist; the note reports the {states.reason}."
        if states.needs_startup:
            words += " A zero-current state exists: the circuit needs a start-up circuit."
        blocks.append(Paragraph(words))
    return Section("operating-point", "Operating point", tuple(blocks))


def _point_tables(context: NoteContext, point, name: str) -> list:
    from ..conventions import output_currents

    nodes = tuple((node, Number(value, "V")) for node, value in point.node_voltages.items() if node != "0")
    out = [Table(("node", "voltage"), nodes, f"Node voltages ({name})")]
    currents = tuple((current.label, Number(value, "A"), current.meaning)
                     for current, value in output_currents(context.circuit, point.branch_currents))
    if currents:
        out.append(Table(("output", "current", "counts"), currents, f"Output currents ({name})"))
    by_kind: dict[str, list] = {}
    for device in point.devices.values():
        by_kind.setdefault(device.kind, []).append(device)
    for devices in by_kind.values():
        columns = devices[0].table()
        header = ("device", "type", "region", *(f"{label} [{unit}]" for label, _, unit in columns))
        rows = tuple((d.name, d.type, d.region, *(Number(value, unit) for _, value, unit in d.table()))
                     for d in devices)
        out.append(Table(header, rows, f"Devices ({name})"))
    return out


def cautions_section(context: NoteContext) -> Section:
    """What the numbers rest on and what they do not cover."""
    source = ("ngspice with the netlist's own model cards" if context.inputs.models == "ngspice" else
              "symbias's built-in hand-analysis models (Ebers-Moll transport with the Early effect, the square law "
              "joined to subthreshold), not the foundry's models")
    items = (
        f"Bias values came from {source}; sweeps and Monte Carlo use the built-in models.",
        "The small-signal results hold about one operating point under the stated model assumptions; they do not "
        "cover large-signal transients, start-up dynamics, layout parasitics or self-heating.",
        "Sign-off needs full simulation with the foundry's models (the deck beside this note is a start) and "
        "measurement of the built circuit.",
        "High-voltage or safety-relevant designs follow local codes and licensed engineering practice.",
    )
    return Section("cautions", "Cautions", (Bullets(items),))


def file_hash(path: str | Path) -> str:
    """sha256 of a file's bytes (hex)."""
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


def provenance(context: NoteContext) -> Provenance:
    """The version, the command line and the sha256 of every input file that exists."""
    from .. import __version__

    request = context.request
    files = list(request.input_files)
    if context.topology is not None and context.topology.path:
        files.append(context.topology.path)
    elif context.circuit.path:
        files.append(context.circuit.path)
    if context.inputs.process is not None and context.inputs.process.path:
        files.append(context.inputs.process.path)
    found = tuple((_shown_path(f), file_hash(f)) for f in dict.fromkeys(files) if Path(f).is_file())
    return Provenance(request.version or __version__, request.command, found, request.seed)


def _shown_path(path: str | Path) -> str:
    """A path relative to the working folder when it lies inside it (the note then reads the same elsewhere)."""
    path = Path(path).resolve()
    try:
        return str(path.relative_to(Path.cwd().resolve()))
    except ValueError:
        return str(path)


def provenance_section(record: Provenance) -> Section:
    """How to make this note again: version, command, inputs and their sha256, seed."""
    rows = tuple((f"`{path}`", f"`{digest}`") for path, digest in record.inputs)
    return Section("reproduce", "How this note was made", (
        Paragraph(f"symbias {record.version}; Monte Carlo and error-search seed {record.seed}. "
                  "The same inputs give the same files."),
        Code(record.command or "(built from the library API)", "sh"),
        Table(("input", "sha256"), rows),
    ))
