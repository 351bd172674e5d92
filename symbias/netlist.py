"""Read and write netlist text (the SPICE subset documented in docs/netlist.md).

First step of the text side: text -> :class:`~symbias.circuit.Circuit`.
Line numbers are kept on every element so later errors can point at them.

Grammar in short: the first line is the title; ``*`` starts a comment line,
``;`` an end-of-line comment; a line starting with ``+`` continues the
previous one; element lines start with their SPICE letter (R C L V I G E F H
D Q M X; the kinds of :mod:`symbias.elements`); dot cards ``.model``, ``.param``, ``.subckt``/``.ends``, ``.match``
(a symbias extension declaring matched devices) and ``.end``; simulator
control cards (``.op``, ``.dc``, ``.tran``, ``.options`` ...) are ignored.

Examples
--------
>>> c = parse_netlist('''simple mirror
... Iref 0 in 100u
... Q1 in in 0 QN
... Q2 out in 0 QN
... Vout out 0 1
... .model QN npn (BF=100 VAF=50)
... ''')
>>> [e.name for e in c.devices], c.models["qn"].params["BF"]
(['Q1', 'Q2'], 100)
"""

from __future__ import annotations

import re
from contextlib import contextmanager
from dataclasses import dataclass
from fractions import Fraction
from pathlib import Path

from .circuit import GROUND, Circuit, Element, Model, SimulatorCard, validate
from .elements import KINDS
from .errors import CircuitError, LimitError, NetlistError, SymbiasError
from .expressions import ZERO, Expr, Number, Symbol, parse_value, try_parse_number
from .limits import MAX_ELEMENTS, MAX_SUBCIRCUIT_DEPTH, temperature_problem
from .netlist_lines import Line, logical_lines, read_text, top_lines

__all__ = ["parse_netlist", "read_netlist", "format_netlist", "Line"]

_IGNORED_CARDS = {
    ".op", ".dc", ".ac", ".tran", ".noise", ".tf", ".options", ".option", ".print", ".plot", ".probe",
    ".save", ".control", ".endc", ".temp", ".meas", ".measure", ".ic", ".nodeset", ".global", ".width", ".sens",
    ".four", ".func", ".csparam",
}


_TOKEN = re.compile(r"\{[^}]*\}?|'[^']*'?|[^\s,()=]+|=")


def _tokens(text: str) -> list[str]:
    """Split on blanks, commas and parentheses; keep ``{...}`` and ``=`` whole."""
    return _TOKEN.findall(text)


def _split_params(tokens: list[str], line: int) -> tuple[list[str], dict[str, str]]:
    """Separate positional tokens from ``name=value`` pairs."""
    positional: list[str] = []
    named: dict[str, str] = {}
    i = 0
    while i < len(tokens):
        if i + 1 < len(tokens) and tokens[i + 1] == "=":
            if i + 2 >= len(tokens):
                raise NetlistError(f"parameter {tokens[i]!r} has no value after '='", line=line)
            named[tokens[i].lower()] = tokens[i + 2]
            i += 3
            continue
        if tokens[i] == "=":
            raise NetlistError("'=' without a parameter name", line=line)
        if named:
            raise NetlistError(f"positional value {tokens[i]!r} after name=value parameters", line=line)
        positional.append(tokens[i])
        i += 1
    return positional, named


def _node(name: str) -> str:
    low = name.lower()
    return GROUND if low in ("0", "gnd") else low


def _value(text: str, names, line: int) -> Expr:
    try:
        return parse_value(text, names)
    except SymbiasError as err:  # syntax (NetlistError) or a size limit (LimitError)
        raise type(err)(err.reason, line=line) from None


@dataclass
class _Subckt:
    name: str
    ports: list[str]
    defaults: dict[str, str]
    body: list[Line]
    line: int


def parse_netlist(text: str, path: str | None = None, *, check: bool = True) -> Circuit:
    """Parse netlist text into a :class:`Circuit`.

    Parameters
    ----------
    text : str
        The netlist; the first line is the title.
    path : str, optional
        File name used in error messages.
    check : bool, default True
        Run :func:`~symbias.circuit.validate` on the result.

    Raises
    ------
    NetlistError
        On a syntax or value error, with ``path`` and ``line`` set.
    CircuitError
        On a structural fault found by validation.

    Examples
    --------
    >>> c = parse_netlist("divider\\nV1 in 0 1\\nR1 in out 1k\\nR2 out 0 RB\\n")
    >>> c.nodes, str(c.element("R2").value)
    (('0', 'in', 'out'), 'RB')
    """
    try:
        return _parse(text, path, check)
    except SymbiasError as err:
        raise err.located(path) from None


def read_netlist(path: str | Path, *, check: bool = True) -> Circuit:
    """Read and parse a netlist file.

    Raises
    ------
    NetlistError
        If the file cannot be read or parsed.

    Examples
    --------
    >>> [d.name for d in read_netlist("examples/wilson_mirror.cir").devices]
    ['Q1', 'Q2', 'Q3']
    """
    return parse_netlist(read_text(path), str(path), check=check)


def _parse(text: str, path: str | None, check: bool) -> Circuit:
    title, lines = logical_lines(text, path)
    cards = _Cards()
    for line in lines:
        with _at(line):
            if not cards.take(line):
                break
    cards.finish()

    elements: list[Element] = []
    budget = _Budget()
    for line in cards.top:
        with _at(line):
            if line.text.startswith("."):
                card = line.text.split()[0].lower()
                if card in _IGNORED_CARDS:
                    continue
                raise NetlistError(f"unknown control card {card!r}", line=line.number)
            elements.extend(_element_or_instance(line, cards.params, cards.models, cards.subckts, prefix="",
                                                 mapping={}, depth=0, budget=budget))

    circuit = Circuit(title=title, elements=tuple(elements), models=cards.models, params=cards.params,
                      groups={g: members for g, (members, _) in cards.groups.items()}, path=path,
                      simulator_cards=_simulator_cards(text, path, cards.models))
    _check_groups(circuit, cards.groups)
    if check:
        validate(circuit)
    return circuit


@contextmanager
def _at(line: Line):
    """Errors about a line from an included file name that file and its own line."""
    try:
        yield
    except SymbiasError as err:
        origin, number = line.where
        if origin is None:
            raise
        raise type(err)(err.reason, path=origin, line=number) from None


_PARAM_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*", re.ASCII)


class _Cards:
    """Pass 1 over the lines: subcircuit bodies, models, parameters and matched groups; the rest kept in order."""

    def __init__(self) -> None:
        self.top: list[Line] = []
        self.subckts: dict[str, _Subckt] = {}
        self.current: _Subckt | None = None
        self.models: dict[str, Model] = {}
        self.params: dict[str, Expr] = {}
        self.param_lines: dict[str, int] = {}
        self.groups: dict[str, tuple[tuple[str, ...], int]] = {}

    def take(self, line: Line) -> bool:
        """Read one line; False at ``.end``."""
        card = line.text.split()[0].lower()
        if card == ".subckt":
            self._subckt(line)
        elif card == ".ends":
            if self.current is None:
                raise NetlistError(".ends without .subckt", line=line.number)
            self.subckts[self.current.name] = self.current
            self.current = None
        elif card == ".model":
            _add_model(line, self.models)
        elif self.current is not None:
            self.current.body.append(line)
        elif card == ".param":
            _add_params(line, self.params, self.param_lines)
        elif card == ".match":
            self._match(line)
        elif card == ".end":
            return False
        else:
            self.top.append(line)
        return True

    def finish(self) -> None:
        if self.current is not None:
            raise NetlistError(f".subckt {self.current.name} has no .ends", line=self.current.line)

    def _subckt(self, line: Line) -> None:
        if self.current is not None:
            raise NetlistError("nested .subckt definitions are not supported", line=line.number)
        tokens = _tokens(line.text)
        if len(tokens) < 2:
            raise NetlistError(".subckt needs a name and its port nodes", line=line.number)
        name = tokens[1].lower()
        first = self.subckts.get(name)
        if first is not None:
            raise NetlistError(f"subcircuit {tokens[1]!r} is defined twice (first on line {first.line})",
                               line=line.number)
        positional, named = _split_params(tokens[2:], line.number)
        positional = [p for p in positional if p.lower() != "params:"]
        self.current = _Subckt(name, positional, named, [], line.number)

    def _match(self, line: Line) -> None:
        tokens = _tokens(line.text)
        if len(tokens) < 3:
            raise NetlistError(".match needs a group name and at least one device", line=line.number)
        if tokens[1] in self.groups:
            raise NetlistError(f".match group {tokens[1]!r} is declared twice (first on line "
                               f"{self.groups[tokens[1]][1]})", line=line.number)
        self.groups[tokens[1]] = (tuple(t.lower() for t in tokens[2:]), line.number)


def _check_groups(circuit: Circuit, groups: dict[str, tuple[tuple[str, ...], int]]) -> None:
    """Every ``.match`` member is a device of the circuit, in one group only."""
    seen: dict[str, str] = {}
    for group, (members, line) in groups.items():
        for member in members:
            if not circuit.has_element(member):
                raise CircuitError(f".match {group}: no device named {member!r}", line=line)
            element = circuit.element(member)
            if not KINDS[element.kind].is_device:
                raise CircuitError(f".match {group}: {element.name} is a {KINDS[element.kind].name}; only "
                                   "transistors and diodes are matched", line=line)
            if member in seen:
                raise CircuitError(f".match {group}: {element.name} is already in group {seen[member]}", line=line)
            seen[member] = group


def _simulator_cards(text: str, path: str | None, models: dict[str, Model]) -> tuple[SimulatorCard, ...]:
    """The top file's ``.include``/``.lib`` lines and ``.model`` cards, as written, for a simulator deck."""
    folder = Path(path).parent if path is not None else Path(".")
    cards: list[SimulatorCard] = []
    for line in top_lines(text):
        words = line.text.split()
        card = words[0].lower()
        if card in (".include", ".inc") and len(words) == 2:
            cards.append(SimulatorCard("include", line.text, line.number, file=str(folder / words[1].strip("'\""))))
        elif card == ".lib" and len(words) == 3:
            cards.append(SimulatorCard("lib", line.text, line.number, file=str(folder / words[1].strip("'\"")),
                                       section=words[2].strip("'\"").lower()))
        elif card == ".model" and len(words) > 1 and words[1].lower() in models:
            cards.append(SimulatorCard("model", line.text, line.number, model=models[words[1].lower()]))
    return tuple(cards)


def _add_model(line: Line, models: dict[str, Model]) -> None:
    tokens = _tokens(line.text)
    if len(tokens) < 3:
        raise NetlistError(".model needs a name and a type, e.g. '.model QN npn (BF=100)'", line=line.number)
    name, mtype = tokens[1], tokens[2].lower()
    positional, named = _split_params(tokens[3:], line.number)
    if positional:
        raise NetlistError(f".model {name}: expected NAME=value parameters, got {positional[0]!r}", line=line.number)
    values = {key.upper(): _value(text, {}, line.number) for key, text in named.items()}
    tnom = values.get("TNOM")
    if tnom is not None and tnom.is_number and temperature_problem(float(tnom)) is not None:
        raise NetlistError(f".model {name}: TNOM: {temperature_problem(float(tnom))}", line=line.number)
    if name.lower() in models:
        raise NetlistError(f"model {name!r} is defined twice (first on line {models[name.lower()].line})", line=line.number)
    models[name.lower()] = Model(name=name, type=mtype, params=values, line=line.number)


def _add_params(line: Line, params: dict[str, Expr], lines: dict[str, int]) -> None:
    """``.param a=1 b={2*a}``: a name may use only the names defined before it (never itself)."""
    tokens = _tokens(line.text)[1:]
    positional, named = _split_params(tokens, line.number)
    if positional or not named:
        raise NetlistError(".param expects name=value pairs", line=line.number)
    for key, text in named.items():
        if not _PARAM_NAME.fullmatch(key):
            raise NetlistError(f".param name {key!r} is not a name (a letter or _, then letters, digits, _)",
                               line=line.number)
        value = _value(text, params, line.number)
        if key in {n.lower() for n in value.names}:
            raise NetlistError(f".param {key} refers to itself", line=line.number)
        if key in params:
            raise NetlistError(f".param {key} is defined twice (first on line {lines[key]})", line=line.number)
        params[key] = value
        lines[key] = line.number
    for key, value in params.items():
        later = sorted(n for n in value.names if n.lower() in params and lines[n.lower()] >= lines[key])
        if later:
            raise NetlistError(f".param {key} uses {later[0]}, defined after it: define {later[0]} first",
                               line=lines[key])


class _Budget:
    """Counts the elements made so far, flattened subcircuits included (:data:`~symbias.limits.MAX_ELEMENTS`)."""

    def __init__(self) -> None:
        self.count = 0

    def spend(self, line: Line) -> None:
        self.count += 1
        if self.count > MAX_ELEMENTS:
            raise LimitError(f"the netlist has more than MAX_ELEMENTS = {MAX_ELEMENTS} elements once its subcircuits "
                             "are flattened; analyse a smaller part of it", line=line.number)


def _element_or_instance(line, params, models, subckts, prefix, mapping, depth, budget) -> list[Element]:
    tokens = _tokens(line.text)
    if not tokens:  # e.g. a line of parentheses or commas only
        raise NetlistError(f"cannot read {line.text.strip()[:40]!r}: expected an element or a dot card",
                           line=line.number)
    name = tokens[0]
    letter = name[0].upper()
    if letter == "X":
        return _instance(line, tokens, params, models, subckts, prefix, mapping, depth, budget)
    if letter not in KINDS:
        raise NetlistError(f"unknown element letter {letter!r} in {name!r}", line=line.number)
    budget.spend(line)
    element = _element(line, tokens, params, models)
    if prefix or mapping:
        element = Element(
            name=prefix + element.name,
            kind=element.kind,
            nodes=tuple(mapping.get(n, n if n == GROUND else prefix.lower() + n) for n in element.nodes),
            value=element.value,
            control=(prefix + element.control) if element.control else None,
            model=element.model,
            params=element.params,
            line=element.line,
        )
    return [element]


def _instance(line, tokens, params, models, subckts, prefix, mapping, depth, budget) -> list[Element]:
    if depth > MAX_SUBCIRCUIT_DEPTH:
        raise LimitError(f"subcircuits nested more than MAX_SUBCIRCUIT_DEPTH = {MAX_SUBCIRCUIT_DEPTH} deep; "
                         "a subcircuit that contains itself? else flatten some levels", line=line.number)
    positional, named = _split_params(tokens[1:], line.number)
    if not positional:
        raise NetlistError(f"{tokens[0]}: missing subcircuit name", line=line.number)
    subname = positional[-1].lower()
    sub = subckts.get(subname)
    if sub is None:
        raise NetlistError(f"{tokens[0]}: undefined subcircuit {positional[-1]!r}", line=line.number)
    nodes = [_node(n) for n in positional[:-1]]
    if len(nodes) != len(sub.ports):
        raise NetlistError(
            f"{tokens[0]}: subcircuit {sub.name} has {len(sub.ports)} ports, got {len(nodes)} nodes", line=line.number
        )
    port_map = {}
    for port, node in zip(sub.ports, nodes):
        port_map[_node(port)] = node if node == GROUND else mapping.get(node, (prefix.lower() + node) if prefix else node)
    local = dict(params)
    for key, text in sub.defaults.items():
        local[key] = _value(text, params, sub.line)
    for key, text in named.items():
        if key not in sub.defaults:
            known = ", ".join(sorted(sub.defaults)) or "none"
            raise NetlistError(f"{tokens[0]}: subcircuit {sub.name} has no parameter {key!r} (its parameters: "
                               f"{known})", line=line.number)
        local[key] = _value(text, params, line.number)
    inner_prefix = prefix + tokens[0] + "."
    elements = []
    for body_line in sub.body:
        elements.extend(
            _element_or_instance(
                Line(line.number, body_line.text), local, models, subckts, inner_prefix, port_map, depth + 1, budget
            )
        )
    return elements


def _element(line: Line, tokens: list[str], params, models) -> Element:
    """One element line, read by the fields its kind declares in :mod:`symbias.elements`."""
    element = _fields(line, tokens, params, models)
    for key in _POSITIVE:
        value = element.params.get(key)
        if value is not None and value.is_number and not float(value) > 0:
            raise NetlistError(f"{element.name}: {key} must be positive, got {value}", line=line.number)
    return element


#: Instance parameters that must be positive when they are numbers (multiplier, area, MOS width and length).
_POSITIVE = ("m", "area", "w", "l")


def _fields(line: Line, tokens: list[str], params, models) -> Element:
    kind = KINDS[tokens[0][0].upper()]
    positional, named = _split_params(tokens[1:], line.number)
    inst = {k: _value(v, params, line.number) for k, v in named.items()}
    if kind.is_device:
        return _device(line, tokens[0], kind, positional, inst, models, params)
    if "ac" in kind.parameters:
        return _independent_source(line, tokens[0], kind, positional, inst, params)
    count = len(kind.terminals)
    fields = count + (2 if kind.controlled_by_source else 1)
    if len(positional) != fields:
        control = " Vcontrol" if kind.controlled_by_source else ""
        raise NetlistError(f"{tokens[0]}: expected '{tokens[0]} {' '.join(kind.terminals)}{control} value'",
                           line=line.number)
    nodes = tuple(_node(p) for p in positional[:count])
    control = positional[count] if kind.controlled_by_source else None
    return Element(tokens[0], kind.letter, nodes, _value(positional[-1], params, line.number), control=control,
                   params=inst, line=line.number)


_TRANSIENT_WORDS = ("pulse", "sin", "pwl", "exp", "sffm", "am", "distof1", "distof2")


def _independent_source(line: Line, name: str, kind, positional: list[str], inst: dict, params) -> Element:
    """``V/I n+ n- [DC] value [AC mag [phase]] [transient...]``; the DC value must be given."""
    n = line.number
    if len(positional) < 2:
        raise NetlistError(f"{name}: expected '{name} node+ node- [DC] value'", line=n)
    rest = positional[2:]
    value = None
    i = 0
    while i < len(rest):
        word = rest[i].lower()
        if word == "dc" and i + 1 < len(rest):
            value = _value(rest[i + 1], params, n)
            i += 2
        elif word == "ac" and i + 1 < len(rest):
            inst["ac"] = _value(rest[i + 1], params, n)
            i += 2
            if i < len(rest) and _looks_numeric(rest[i]):
                i += 1  # AC phase
        elif word in _TRANSIENT_WORDS:
            break  # transient specification: not used by symbias
        elif i == 0:
            value = _value(rest[i], params, n)
            i += 1
        else:
            raise NetlistError(f"{name}: unexpected {rest[i]!r}", line=n)
    if value is None:
        unit = kind.value_unit
        raise NetlistError(f"{name}: no value: write '{name} {positional[0]} {positional[1]} VALUE' "
                           f"(0 for a {'0 V ammeter' if unit == 'V' else 'source that is off'})", line=n)
    return Element(name, kind.letter, (_node(positional[0]), _node(positional[1])), value, params=inst, line=n)


def _device(line: Line, name: str, kind, positional: list[str], inst: dict, models, params) -> Element:
    """``X n1 n2 ... model [area]``: the model is the first known model name after the fewest terminals."""
    n = line.number
    low, high = min(kind.node_counts), max(kind.node_counts)
    usage = f"'{name} {' '.join(kind.terminals[:low])}{' [' + kind.terminals[-1] + ']' if kind.optional else ''} " \
            f"model{' [area]' if 'area' in kind.parameters else ''}'"
    index = next((i for i, t in enumerate(positional) if t.lower() in models and i >= low), None)
    if index is None:
        if len(positional) > low:
            raise NetlistError(f"{name}: undefined model {positional[low]!r}", line=n)
        raise NetlistError(f"{name}: expected {usage}", line=n)
    if index > high:
        raise NetlistError(f"{name}: expected {low}{'-' + str(high) if high > low else ''} nodes before the model, "
                           f"got {index}", line=n)
    extra = positional[index + 1:]
    if extra and "area" not in kind.parameters:
        raise NetlistError(f"{name}: unexpected {extra[0]!r} after the model (expected {usage})", line=n)
    if len(extra) > 1:
        raise NetlistError(f"{name}: unexpected {extra[1]!r} after the area", line=n)
    if extra:
        inst["area"] = _value(extra[0], params, n)
    return Element(name, kind.letter, tuple(_node(p) for p in positional[:index]), None, model=positional[index],
                   params=inst, line=n)


def _looks_numeric(text: str) -> bool:
    return try_parse_number(text) is not None


def _format_value(value: Expr) -> str:
    if value is None:
        return ""
    if isinstance(value, Symbol):
        return value.name
    if isinstance(value, Number):
        if value.value.denominator == 1:
            return str(value.value.numerator)
        shown = repr(float(value))
        if Fraction(shown) == value.value:
            return shown
    return "{" + str(value).replace("**", "^") + "}"


def format_netlist(circuit: Circuit) -> str:
    """Write a circuit back as netlist text that :func:`parse_netlist` reads.

    Examples
    --------
    >>> c = parse_netlist("t\\nR1 a 0 {2*RE}\\nI1 0 a 1m\\n")
    >>> print(format_netlist(c).splitlines()[1])
    R1 a 0 {2*RE}
    """
    out = [circuit.title]
    for element in circuit.elements:
        parts = [element.name, *element.nodes]
        if element.kind in ("F", "H"):
            parts.append(element.control or "")
        if KINDS[element.kind].is_device:
            parts.append(element.model or "")
            parts += [f"{k}={_format_value(v)}" for k, v in element.params.items()]
        else:
            parts.append(_format_value(element.value))
            parts += [f"{k}={_format_value(v)}" for k, v in element.params.items() if k != "ac"]
        out.append(" ".join(parts))
    for model in circuit.models.values():
        params = " ".join(f"{k}={_format_value(v)}" for k, v in model.params.items())
        out.append(f".model {model.name} {model.type} ({params})")
    for group, members in circuit.groups.items():
        out.append(f".match {group} {' '.join(members)}")
    out.append(".end")
    return "\n".join(out) + "\n"
