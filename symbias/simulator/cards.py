"""The model side of a simulator deck: the user's ``.model`` cards and ``.include``/``.lib`` lines.

Part of the deck step (:mod:`symbias.simulator.deck` writes the elements and
calls :func:`model_lines`).  The rule is that a deck never rewrites a user's
model card:

* a ``.include``/``.lib`` line of the netlist is written back with its file
  made absolute (the simulator runs in another folder); the models, parameters
  and subcircuits it brings in are left to the simulator to read;
* a ``.model`` card of the netlist is written back as written (every
  parameter, its ``LEVEL``, its case and spelling), with two additions that
  make the deck describe the circuit symbias analysed: the SPICE parameters
  a process file supplies and a level-1 card leaves out are placed before the
  card's own ones (a card of another level is a model of its own, and the
  process file, which describes the built-in models, is not mixed into it),
  and a card whose values use free symbols is written with those values as
  numbers (the same numbers symbias used);
* a model the circuit holds without a card (a circuit built in Python, or
  whose models were replaced after reading) is written from its parameters.

Which process parameters have a simulator counterpart is listed per model
type in :data:`SPICE_PROCESS_KEYS`; the rest (``TCV BEX`` of the MOS
temperature law, ``BVEBO``, the mismatch coefficients ``AVT ABETA AIS``) are
named in the deck's header as not written.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn (BF=80 RB=50)\\n")
>>> lines, notes = model_lines(c, None, None)
>>> lines
['.model QN npn (BF=80 RB=50)']
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Mapping

from ..circuit import Circuit, Element, Model
from ..devices.dc_context import resolved_model_parameters
from ..devices.diode import DIODE_DEFAULTS
from ..process import Process

__all__ = ["SPICE_PROCESS_KEYS", "model_lines", "included_lines", "number_text"]

#: ``.model NAME TYPE rest`` (the type may touch the parenthesis).
_CARD = re.compile(r"^\s*\.model\s+(\S+)\s+([A-Za-z]+)\s*(.*)$", re.IGNORECASE)

#: Process-file parameters written into a deck, per model type (the SPICE names the simulator's
#: Gummel-Poon, level-1 MOS and junction-diode models take).
SPICE_PROCESS_KEYS: dict[str, tuple[str, ...]] = {
    "npn": ("IS", "BF", "BR", "NF", "NR", "VAF", "XTI", "EG", "XTB"),
    "pnp": ("IS", "BF", "BR", "NF", "NR", "VAF", "XTI", "EG", "XTB"),
    "nmos": ("VTO", "KP", "LAMBDA", "GAMMA", "PHI"),
    "pmos": ("VTO", "KP", "LAMBDA", "GAMMA", "PHI"),
    "d": tuple(DIODE_DEFAULTS) + ("CJ0", "CJ", "PB", "MJ"),
}


def number_text(value: float) -> str:
    """A float as the deck writes it: the shortest text that reads back to the same double.

    Examples
    --------
    >>> number_text(1e-16), number_text(2.0), number_text(1 / 3)
    ('1e-16', '2.0', '0.3333333333333333')
    """
    return repr(float(value))


def included_lines(circuit: Circuit) -> tuple[list[str], set[int]]:
    """The netlist's ``.include``/``.lib`` lines with absolute files, and the netlist lines they stand on.

    A ``.lib`` line keeps the section the circuit was read with (a corner is
    chosen by re-reading the netlist, :mod:`symbias.simulator.corners`).

    Returns
    -------
    lines : list of str
    anchors : set of int
        Top-file lines of the include cards: elements and models reported at
        one of them came from the file it names.
    """
    lines: list[str] = []
    anchors: set[int] = set()
    for card in circuit.simulator_cards:
        if card.kind not in ("include", "lib"):
            continue
        anchors.add(card.line)
        target = str(Path(card.file).resolve()) if card.file else ""
        if card.kind == "include":
            lines.append(f'.include "{target}"')
        else:
            lines.append(f'.lib "{target}" {card.section}')
    return lines, anchors


def model_lines(circuit: Circuit, process: Process | None,
                values: Mapping[str, float] | None) -> tuple[list[str], list[str]]:
    """The ``.model`` lines of a deck and the notes that say where each came from.

    Raises
    ------
    CircuitError
        A card value with a free symbol that has no number.
    """
    cards = {card.model.key: card for card in circuit.simulator_cards if card.kind == "model" and card.model}
    _, anchors = included_lines(circuit)
    users = _first_users(circuit)
    lines: list[str] = []
    notes: list[str] = []
    for key, model in circuit.models.items():
        card = cards.get(key)
        if card is not None and card.model != model:
            card = None  # the circuit's model was changed after reading: write what it holds now
        if card is None and model.line in anchors:
            notes.append(f"{model.name}: read by the simulator from the included file")
            continue
        element = users.get(key)
        added, skipped = _process_additions(model, process)
        if card is not None and all(v.is_number for v in model.params.values()):
            lines.append(_with_additions(card.text, added))
            notes.append(f"{model.name}: the netlist's card as written" + _addition_note(added, skipped, process))
            continue
        if element is None:
            notes.append(f"{model.name}: not written (no device uses it and its values need numbers)")
            continue
        lines.append(_from_parameters(circuit, element, model, process, values, added))
        why = "values resolved to numbers" if card is not None else "written from its parameters"
        notes.append(f"{model.name}: the netlist's card, {why}" + _addition_note(added, skipped, process))
    return lines, notes


def _first_users(circuit: Circuit) -> dict[str, Element]:
    users: dict[str, Element] = {}
    for element in circuit.devices:
        users.setdefault((element.model or "").lower(), element)
    return users


def _process_additions(model: Model, process: Process | None) -> tuple[dict[str, float], list[str]]:
    """Process parameters the card leaves out: those with a SPICE counterpart, and the names of the others."""
    levels = [float(v) for k, v in model.params.items() if k.upper() == "LEVEL" and v.is_number]
    if process is None or any(level != 1 for level in levels):
        return {}, []  # the process describes the built-in models; a card of another level is its own
    entry = process.device(model.name, model.type)
    if entry is None or entry.type != model.type:
        return {}, []
    on_card = {key.upper() for key in model.params}
    spice = SPICE_PROCESS_KEYS.get(model.type, ())
    added = {k: float(v) for k, v in entry.params.items() if k.upper() in spice and k.upper() not in on_card}
    skipped = sorted(k for k in entry.params if k.upper() not in spice and k.upper() not in on_card)
    return added, skipped


def _addition_note(added: Mapping[str, float], skipped: list[str], process: Process | None) -> str:
    if not added and not skipped:
        return ""
    where = Path(process.path).name if process is not None and process.path else "the process file"
    text = f", with {' '.join(added)} from {where}" if added else ""
    if skipped:
        text += f" ({' '.join(skipped)} not written: no simulator counterpart)"
    return text


def _with_additions(text: str, added: Mapping[str, float]) -> str:
    """The card's own text with process parameters placed before its own (the card's values stay last).

    Examples
    --------
    >>> _with_additions(".model QP npn(BF=80 ikf=2m)", {"IS": 1e-16})
    '.model QP npn (IS=1e-16 BF=80 ikf=2m)'
    """
    if not added:
        return text
    head = _CARD.match(text)
    body = head.group(3).strip() if head else ""
    if body.startswith("(") and body.endswith(")"):
        body = body[1:-1].strip()
    extra = " ".join(f"{k}={number_text(v)}" for k, v in added.items())
    return f".model {head.group(1)} {head.group(2)} ({extra} {body})".replace(" )", ")")


def _from_parameters(circuit: Circuit, element: Element, model: Model, process: Process | None,
                     values: Mapping[str, float] | None, added: Mapping[str, float]) -> str:
    """A card written from the circuit's model: its own parameters in order, as numbers."""
    _, resolved, tnom = resolved_model_parameters(circuit, element, None, values)
    own = {key: (tnom if key == "TNOM" else resolved[key]) for key in model.params}
    merged = {**added, **own}
    body = " ".join(f"{k}={number_text(v)}" for k, v in merged.items())
    return f".model {model.name} {model.type} ({body})".replace(" ()", "")
