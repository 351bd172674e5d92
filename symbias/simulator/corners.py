"""Process corners: a netlist read again with another section of its ``.lib`` files.

A foundry kit keeps its corners as sections of one library file (``.lib
models.lib tt``, ``ff``, ``ss`` ...).  Choosing a corner re-reads the netlist
with the section of each of its ``.lib FILE SECTION`` lines replaced by the
corner wherever FILE has a section of that name, so the built-in models, the
deck and the simulator all see the same cards.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> lib_sections(parse_netlist("t\\nR1 a 0 1k\\nI1 0 a 1m\\n"))
{}
"""

from __future__ import annotations

import re

from ..circuit import Circuit
from ..errors import NetlistError, UsageError
from ..netlist import parse_netlist
from ..netlist_lines import read_text, top_lines

__all__ = ["lib_sections", "at_corner"]

#: The section word of a ``.lib FILE SECTION`` line.
_SECTION = re.compile(r"(\.lib\s+\S+\s+)(['\"]?)[^\s'\"]+\2", re.IGNORECASE)


def _sections(file: str) -> tuple[str, ...]:
    """Section names of a library file (``.lib NAME`` lines), lower case."""
    try:
        text = read_text(file, what="library file")
    except NetlistError:
        return ()
    found = []
    for line in top_lines("\n" + text):
        words = line.text.split()
        if words[0].lower() == ".lib" and len(words) == 2:
            found.append(words[1].strip("'\"").lower())
    return tuple(dict.fromkeys(found))


def lib_sections(circuit: Circuit) -> dict[int, tuple[str, ...]]:
    """Netlist line of each ``.lib FILE SECTION`` card -> the sections FILE offers.

    Examples
    --------
    >>> from symbias.netlist import read_netlist
    >>> lib_sections(read_netlist("tests/decks/simulator/corner_mirror.cir"))
    {6: ('typical', 'fast')}
    """
    return {card.line: _sections(card.file) for card in circuit.simulator_cards if card.kind == "lib" and card.file}


def at_corner(circuit: Circuit, corner: str) -> Circuit:
    """The circuit read again with ``corner`` as the section of every ``.lib`` line whose file has it.

    Raises
    ------
    UsageError
        When the circuit was not read from a file or no ``.lib`` file of it has the section.
    NetlistError, CircuitError
        From reading the netlist again.

    Examples
    --------
    >>> from symbias.netlist import read_netlist
    >>> c = read_netlist("tests/decks/simulator/corner_mirror.cir")
    >>> float(at_corner(c, "fast").models["qc"].params["BF"])
    150.0
    """
    offered = lib_sections(circuit)
    chosen = corner.lower()
    lines = [line for line, sections in offered.items() if chosen in sections]
    if circuit.path is None or not lines:
        listed = ", ".join(sorted({s for sections in offered.values() for s in sections})) or "none: no .lib line"
        raise UsageError(f"--corner {corner}: no .lib file of {circuit.path or 'the circuit'} has a section of that "
                         f"name (sections: {listed})", path=circuit.path)
    text = read_text(circuit.path)
    physical = text.splitlines(keepends=True)
    for number in lines:
        changed, found = _SECTION.subn(lambda m: m.group(1) + corner, physical[number - 1], count=1)
        if not found:
            raise UsageError(f"--corner {corner}: cannot change the section of the .lib line (written over several "
                             "lines?)", path=circuit.path, line=number)
        physical[number - 1] = changed
    return parse_netlist("".join(physical), circuit.path)
