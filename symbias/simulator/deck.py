"""Write a circuit as an ngspice deck: one line per element through its kind's ``deck`` hook.

First step of the simulator side (Circuit -> deck text).  Every element kind
of :mod:`symbias.elements` names its line writer here (``resistor_line``,
``value_line``, ``source_line``, ``controlled_line``, ``device_line``); the
model cards and ``.include``/``.lib`` lines come from
:mod:`symbias.simulator.cards`, which never rewrites a user's card.

What the deck assumes, it says in a comment header under the title:

* elements of flattened subcircuits are named as ngspice names them when it
  flattens a deck itself: the element letter, a dot, the instance path
  (``X1.Q2`` -> ``Q.X1.Q2``, ``X1.X3.R1`` -> ``R.X1.X3.R1``); nodes keep
  symbias's names (``x1.n``) - :class:`DeckNames` maps both ways;
* every value is a number (free symbols take the values given; the header
  lists them); ``m`` is written as ``m=`` and a BJT's or diode's ``area`` as
  ``area=``;
* the options of the project's own ngspice checks, :data:`TIGHT_OPTIONS`
  (with the simulator's defaults the operating point of a mirror is off by
  tens of microvolts), the temperature and the process TNOM;
* elements that an included file brings in are left to that file.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist("t\\nV1 a 0 1\\nR1 a b RX\\nQ1 b b 0 QN 2 m=3\\n.model QN npn (BF=80)\\n")
>>> deck = write_deck(c, values={"RX": 1e3}, control="op")
>>> [line for line in deck.text.splitlines() if not line.startswith("*")][1:5]
['V1 a 0 DC 1.0', 'R1 a b 1000.0', 'Q1 b b 0 QN area=2.0 m=3.0', '.model QN npn (BF=80)']
"""

from __future__ import annotations

from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Mapping

from ..circuit import Circuit, Element
from ..devices.dc_context import element_number
from ..elements import KINDS
from ..process import Process
from .cards import included_lines, model_lines, number_text

__all__ = ["TIGHT_OPTIONS", "DeckNames", "DeckContext", "Deck", "deck_names", "write_deck", "reference_deck",
           "resistor_line", "value_line", "source_line", "controlled_line", "device_line"]

#: Options of every deck: the tolerances the project's ngspice checks use, SPICE's usual GMIN.
TIGHT_OPTIONS = "reltol=1e-7 abstol=1e-16 vntol=1e-10 gmin=1e-12 itl1=500 itl2=500"

#: The caution every deck carries.
CAUTION = "sign-off rests on the foundry's models in the simulator, not on symbias's hand-analysis models"


@dataclass(frozen=True)
class DeckNames:
    """Element and node names in the deck, from symbias's names (element keys, lower case).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nV1 a 0 1\\nX1 a sub\\n.subckt sub p\\nR1 p n 1k\\nQ1 n n 0 QN\\n.ends\\n"
    ...                   ".model QN npn\\n")
    >>> names = deck_names(c)
    >>> names.element("x1.q1"), names.vector_of("X1.Q1", "gm"), names.voltage("x1.n")
    ('Q.X1.Q1', '@q.x1.q1[gm]', 'v(x1.n)')
    """

    elements: Mapping[str, str] = field(default_factory=dict)

    def __post_init__(self) -> None:
        object.__setattr__(self, "elements", MappingProxyType(dict(self.elements)))

    def __reduce__(self):
        return (DeckNames, (dict(self.elements),))

    def element(self, name: str) -> str:
        """The deck name of element ``name`` (any case)."""
        return self.elements[name.lower()]

    def vector_of(self, name: str, parameter: str) -> str:
        """The ngspice vector of an instance parameter: ``@q.x1.q1[gm]``."""
        return f"@{self.element(name).lower()}[{parameter}]"

    def branch(self, name: str) -> str:
        """The ngspice vector of the branch current of a V, L, E or H element: ``v1#branch``."""
        return f"{self.element(name).lower()}#branch"

    @staticmethod
    def voltage(node: str) -> str:
        """The ngspice vector of a node voltage: ``v(x1.n)``."""
        return f"v({node.lower()})"


def deck_names(circuit: Circuit) -> DeckNames:
    """Deck names of every element: as written, or ngspice's own form for one with a dot in its name.

    Element names are unique in a circuit and the prefix is the element's own
    letter, so the deck names are unique too.
    """
    return DeckNames({e.key: f"{e.kind}.{e.name}" if "." in e.name else e.name for e in circuit.elements})


@dataclass(frozen=True)
class DeckContext:
    """What a ``deck`` hook receives besides its element: the circuit, the numbers and the names."""

    circuit: Circuit
    process: Process | None
    values: Mapping[str, float] | None
    names: DeckNames

    def number(self, element: Element, expr, what: str = "value") -> str:
        """An element's value or parameter as deck text (free symbols from ``values``).

        Raises
        ------
        CircuitError
            A free symbol without a number, at the element's line.
        """
        return number_text(element_number(element, expr, self.values, self.circuit.path, what))

    def head(self, element: Element, nodes: tuple[str, ...] | None = None) -> str:
        """Deck name and nodes."""
        return " ".join((self.names.element(element.name), *(element.nodes if nodes is None else nodes)))

    def instance(self, element: Element, keys: tuple[str, ...]) -> str:
        """``key=value`` for each of ``keys`` the element sets, in that order."""
        return "".join(f" {key}={self.number(element, element.params[key], key)}"
                       for key in keys if key in element.params)


def resistor_line(element: Element, context: DeckContext) -> str:
    """``Rname n1 n2 R [tc1=] [tc2=] [m=]``; TC1/TC2 from the instance, else from its process layer."""
    text = f"{context.head(element)} {context.number(element, element.value)}"
    tc = {}
    if "layer" in element.params and context.process is not None:
        layer = context.process.resistor(str(element.params["layer"]))
        tc = {"tc1": number_text(layer.tc1), "tc2": number_text(layer.tc2)}
    for key in ("tc1", "tc2"):
        if key in element.params:
            tc[key] = context.number(element, element.params[key], key)
    return text + "".join(f" {k}={v}" for k, v in tc.items()) + context.instance(element, ("m",))


def value_line(element: Element, context: DeckContext) -> str:
    """``Cname``/``Lname``/``Ename``/``Gname`` nodes, value, and ``m=`` where given."""
    return f"{context.head(element)} {context.number(element, element.value)}" + context.instance(element, ("m",))


def source_line(element: Element, context: DeckContext) -> str:
    """``Vname``/``Iname n+ n- DC value [AC mag]``."""
    text = f"{context.head(element)} DC {context.number(element, element.value)}"
    if "ac" in element.params:
        text += f" AC {context.number(element, element.params['ac'], 'ac')}"
    return text


def controlled_line(element: Element, context: DeckContext) -> str:
    """``Fname``/``Hname n+ n- Vcontrol value``, the control under its deck name."""
    return f"{context.head(element)} {context.names.element(element.control)} {context.number(element, element.value)}"


def device_line(element: Element, context: DeckContext) -> str:
    """``Q``/``M``/``D`` nodes, model, and the instance parameters of the kind (``area=``, ``w=``, ``l=``, ``m=``)."""
    keys = tuple(k for k in KINDS[element.kind].parameters if k != "m") + ("m",)
    return f"{context.head(element)} {element.model}" + context.instance(element, keys)


@dataclass(frozen=True)
class Deck:
    """A deck and what is needed to read the simulator's answers back.

    Attributes
    ----------
    text : str
    names : DeckNames
    notes : tuple of str
        What symbias assumed, as written in the header.
    """

    text: str
    names: DeckNames
    notes: tuple[str, ...] = ()


def write_deck(circuit: Circuit, process: Process | None = None, temperature: float = 27.0,
               values: Mapping[str, float] | None = None, *, control: str = "", options: str = TIGHT_OPTIONS,
               guess: Mapping[str, float] | None = None) -> Deck:
    """The ngspice deck of a circuit: header, elements, models, options, ``.nodeset``, control block.

    Parameters
    ----------
    control : str
        Lines of the ``.control`` block (none: no block).
    options : str
        ``.options`` text; temperature and TNOM are added.
    guess : mapping, optional
        Node -> voltage written as ``.nodeset`` (the counterpart of the built-in solver's ``guess``).

    Raises
    ------
    CircuitError
        A free symbol without a number, two elements with one deck name.
    """
    names = deck_names(circuit)
    context = DeckContext(circuit, process, values, names)
    includes, anchors = included_lines(circuit)
    elements = [e for e in circuit.elements if e.line not in anchors]
    body = [KINDS[e.kind].hook("deck")(e, context) for e in elements]
    models, notes = model_lines(circuit, process, values)
    tnom = process.tnom if process is not None else 27.0
    notes = _notes(circuit, values, names, options, temperature, tnom, len(elements) < len(circuit.elements)) + notes
    lines = [circuit.title or "symbias deck", *(f"* {note}" for note in notes), *includes, *body, *models,
             f".options {options} temp={number_text(temperature)} tnom={number_text(tnom)}".replace("  ", " ")]
    if guess:
        lines.append(".nodeset " + " ".join(f"v({node.lower()})={number_text(v)}" for node, v in guess.items()))
    if control.strip():
        lines += [".control", *control.strip().splitlines(), ".endc"]
    lines.append(".end")
    return Deck("\n".join(lines) + "\n", names, tuple(notes))


def _notes(circuit: Circuit, values, names: DeckNames, options: str, temperature: float, tnom: float,
           left_to_includes: bool) -> list[str]:
    notes = ["written by symbias for ngspice (its checks run ngspice 39)", CAUTION]
    renamed = [f"{e.name} -> {names.element(e.name)}" for e in circuit.elements if "." in e.name]
    if renamed:
        notes.append("subcircuits flattened, elements named as ngspice names them: " + ", ".join(renamed[:6])
                     + (" ..." if len(renamed) > 6 else ""))
    used = sorted({name for e in circuit.elements for v in (e.value, *e.params.values()) if v is not None
                   for name in v.names} | {name for m in circuit.models.values() for v in m.params.values()
                                            for name in v.names})
    if used:
        numbers = {k.lower(): v for k, v in (values or {}).items()}
        notes.append("free symbols as numbers: " + ", ".join(f"{n} = {numbers[n.lower()]:g}" for n in used
                                                              if n.lower() in numbers))
    if left_to_includes:
        notes.append("elements of included files are read from those files")
    if any(card.kind in ("include", "lib") for card in circuit.simulator_cards):
        notes.append(".include/.lib lines as written, their files made absolute")
    notes.append(f"options {options.strip() or '(simulator defaults)'}; {temperature:g} degC, TNOM {tnom:g} degC")
    return notes


def reference_deck(circuit: Circuit, process: Process | None = None, temperature: float = 27.0,
                   values: Mapping[str, float] | None = None, *, control: str = "op", options: str = TIGHT_OPTIONS,
                   guess: Mapping[str, float] | None = None) -> str:
    """Deck text for the comparisons with ngspice (:func:`write_deck`'s text).

    ``control="{control}"`` leaves a placeholder that
    :func:`symbias.simulator.ngspice.run_reference` fills in.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nV1 a 0 1\\nR1 a b RX\\nQ1 b b 0 QN\\n.model QN npn (BF=80)\\n")
    >>> print([line for line in reference_deck(c, values={"RX": 1e3}).splitlines() if line[0] == "R"][0])
    R1 a b 1000.0
    """
    return write_deck(circuit, process, temperature, values, control=control, options=options, guess=guess).text
