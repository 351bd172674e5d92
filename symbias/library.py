"""The topology library: TOML files -> frozen :class:`Topology` objects.

Entry point of the library side (text file -> :class:`Topology`, which
yields a :class:`~symbias.circuit.Circuit`).  Each file in a library folder
describes one bias circuit: identity, description, published references, the
netlist, the roles of its elements, design variables with sizing rules and the
published formulas the engine must reproduce.  The file format is documented
in ``docs/library-format.md``.

Folders are searched in this order: those given on the command line
(``--library DIR``), those in the environment variable ``SYMBIAS_LIBRARY``
(``os.pathsep``-separated), then the shipped library (``topologies/`` next to
the package in a source checkout, else the copy installed with the package).
An identifier defined twice is an error.

Every error in a file is a :class:`~symbias.errors.LibraryError` that names the
file and the line.

Examples
--------
>>> top = find_topology("bjt-simple-mirror")
>>> top.family, top.technology, top.roles["output"]
('current-mirror', 'bjt', 'Vout')
>>> [e.name for e in top.circuit().devices]
['Q1', 'Q2']
"""

from __future__ import annotations

import difflib
import os
import re
import sys
import sysconfig
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any, Iterable, Mapping

from .errors import LibraryError, SymbiasError

__all__ = [
    "Reference",
    "Variable",
    "ExpectedFormula",
    "Topology",
    "parse_topology",
    "load_topology",
    "load_library",
    "library_dirs",
    "shipped_dir",
    "find_topology",
    "resolve",
    "FAMILIES",
    "TECHNOLOGIES",
    "FORMS",
    "FORMULA_QUANTITIES",
    "ENV_VAR",
]

#: Environment variable listing extra library folders (``os.pathsep``-separated).
ENV_VAR = "SYMBIAS_LIBRARY"

FAMILIES = ("current-source", "current-mirror", "reference")
TECHNOLOGIES = ("bjt", "mos")
FORMS = ("exact", "leading-order")

#: Quantities a published formula may describe; the first five are small-signal
#: analyses of :mod:`symbias.analyses`, ``dc_output`` a large-signal output value.
FORMULA_QUANTITIES = (
    "output_resistance",
    "current_gain",
    "voltage_gain",
    "transconductance",
    "transimpedance",
    "dc_output",
)

_OPTION_KEYS = ("ro", "gmb", "extras", "capacitances", "match", "beta", "symbolic_passives")
_ID = re.compile(r"^[a-z0-9][a-z0-9-]*$")
_NAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")

# key -> (required, allowed python types, description for messages)
_ROOT_KEYS = {
    "id": (True, str, "a string"),
    "title": (True, str, "a string"),
    "family": (True, str, "a string"),
    "technology": (True, str, "a string"),
    "description": (True, str, "a string"),
    "netlist": (True, str, "a string"),
    "options": (False, dict, "a table"),
    "roles": (True, dict, "a table"),
    "headroom": (False, dict, "a table"),
    "variables": (False, list, "an array of tables [[variables]]"),
    "references": (True, list, "an array of tables [[references]]"),
    "formulas": (False, list, "an array of tables [[formulas]]"),
}
_ROLE_KEYS = {
    "input": (False, str, "an element name"),
    "output": (True, str, "an element or node name"),
    "outputs": (False, list, "a list of element names"),
    "supply": (False, list, "a list of element names"),
    "bias": (False, list, "a list of element names"),
    "transfer": (False, str, "a source name"),
}
_HEADROOM_KEYS = {
    "output": (False, str, "an expression string"),
    "input": (False, str, "an expression string"),
    "supply": (False, str, "an expression string"),
}
_VARIABLE_KEYS = {
    "name": (True, str, "a name"),
    "default": (True, (str, int, float), "a number or a SPICE number string"),
    "unit": (False, str, "a string"),
    "description": (True, str, "a string"),
    "rule": (True, str, "a string"),
    "expr": (False, str, "an expression string"),
}
_REFERENCE_KEYS = {
    "author": (True, str, "a string"),
    "title": (True, str, "a string"),
    "venue": (True, str, "a string"),
    "year": (True, int, "an integer"),
    "chapter": (False, str, "a string"),
}
_FORMULA_KEYS = {
    "quantity": (True, str, "a string"),
    "form": (True, str, "a string"),
    "expr": (True, str, "an expression string"),
    "options": (False, dict, "a table"),
    "large": (False, list, "a list of symbol names"),
    "relative_to": (False, str, "an expression string"),
    "assumptions": (True, list, "a list of strings"),
    "source": (True, str, "a string"),
    "output": (False, str, "an element or node name"),
    "input": (False, str, "a source name"),
}


# -- domain objects -------------------------------------------------------------------
@dataclass(frozen=True)
class Reference:
    """A published source: book (with chapter) or paper.

    Examples
    --------
    >>> Reference("R. J. Widlar", "New developments in IC voltage regulators", "IEEE JSSC", 1971).text
    'R. J. Widlar, "New developments in IC voltage regulators", IEEE JSSC, 1971'
    """

    author: str
    title: str
    venue: str
    year: int
    chapter: str = ""

    @property
    def text(self) -> str:
        """One-line citation."""
        out = f'{self.author}, "{self.title}", {self.venue}, {self.year}'
        return f"{out}; {self.chapter}" if self.chapter else out


@dataclass(frozen=True)
class Variable:
    """A design variable of a topology: a free symbol of its netlist.

    Parameters
    ----------
    name : str
        Symbol name as used in the netlist (``RE``, ``IREF``).
    default : str
        Default value as written (SPICE number, e.g. ``"100u"``).
    value : float
        The default as a number.
    unit, description, rule : str
        Unit, meaning, and the rule that sizes it for a target.
    expr : str, optional
        The sizing rule as an expression over target quantities.
    """

    name: str
    default: str
    value: float
    unit: str = ""
    description: str = ""
    rule: str = ""
    expr: str | None = None


@dataclass(frozen=True)
class ExpectedFormula:
    """A published (or hand-derived) formula the engine is checked against.

    Parameters
    ----------
    quantity : str
        One of :data:`FORMULA_QUANTITIES`.
    form : str
        ``exact`` (must equal the derived result) or ``leading-order`` (the
        ratio to the derived result tends to 1 as the ``large`` symbols grow).
    expr : str
        The formula, a sympy-parseable string over the engine's symbol names.
    options : mapping
        Small-signal options it assumes (fields of ``SmallSignalOptions``).
    large : tuple of str
        Symbols taken to infinity, the first one fastest (leading-order only).
    relative_to : str, optional
        Compare ``(exact - relative_to)/(expr - relative_to)`` instead of the
        plain ratio: for gains near 1 the error term is what the formula states.
    assumptions : tuple of str
    source : str
        Where it is published, or "common practice" / "from memory" notes.
    output, input : str, optional
        Override the topology roles for this formula.
    line : int
        Line of the ``[[formulas]]`` header in the file.
    """

    quantity: str
    form: str
    expr: str
    options: Mapping[str, Any] = field(default_factory=dict)
    large: tuple[str, ...] = ()
    relative_to: str | None = None
    assumptions: tuple[str, ...] = ()
    source: str = ""
    output: str | None = None
    input: str | None = None
    line: int = 0

    def __post_init__(self) -> None:
        object.__setattr__(self, "options", MappingProxyType(dict(self.options)))
        object.__setattr__(self, "large", tuple(self.large))
        object.__setattr__(self, "assumptions", tuple(self.assumptions))

    def __reduce__(self):
        values = {k: getattr(self, k) for k in self.__dataclass_fields__}
        values["options"] = dict(values["options"])
        return (_rebuild_formula, (values,))

    @property
    def sympy_expr(self):
        """The formula as a sympy expression (read by the netlist expression parser).

        Examples
        --------
        >>> ExpectedFormula("current_gain", "exact", "1/(1 + 2/beta)").sympy_expr
        beta/(beta + 2)
        """
        import sympy

        from .expressions import parse_expression

        return sympy.together(parse_expression(self.expr).to_sympy())

    @property
    def small_signal(self) -> bool:
        """True when the quantity is a small-signal analysis."""
        return self.quantity != "dc_output"

    def small_signal_options(self):
        """The :class:`~symbias.linear.network.SmallSignalOptions` this formula assumes."""
        from .devices.options import SmallSignalOptions

        return SmallSignalOptions(**dict(self.options))


@dataclass(frozen=True)
class Topology:
    """One library circuit, as read from its file.

    ``roles`` maps ``input`` and ``output`` to names (``output`` is an element
    for sources and mirrors, the output node for references) and ``outputs``,
    ``supply``, ``bias`` to tuples of element names.  ``headroom`` maps
    ``output`` (compliance), ``input`` and ``supply`` to expression strings.
    """

    id: str
    title: str
    family: str
    technology: str
    description: str
    netlist: str
    roles: Mapping[str, Any]
    references: tuple[Reference, ...]
    variables: tuple[Variable, ...] = ()
    formulas: tuple[ExpectedFormula, ...] = ()
    headroom: Mapping[str, str] = field(default_factory=dict)
    options: Mapping[str, Any] = field(default_factory=dict)
    path: str | None = None
    netlist_line: int = 1

    def __post_init__(self) -> None:
        object.__setattr__(self, "roles", MappingProxyType(dict(self.roles)))
        object.__setattr__(self, "headroom", MappingProxyType(dict(self.headroom)))
        object.__setattr__(self, "options", MappingProxyType(dict(self.options)))

    def __reduce__(self):
        values = {k: getattr(self, k) for k in self.__dataclass_fields__}
        for key in ("roles", "headroom", "options"):
            values[key] = dict(values[key])
        return (_rebuild_topology, (values,))

    def circuit(self):
        """The parsed and validated :class:`~symbias.circuit.Circuit`.

        Element line numbers are those of the library file.

        Raises
        ------
        LibraryError
            When the netlist does not parse or validate.
        """
        return _netlist_circuit(self.netlist, self.path, self.netlist_line)

    def small_signal_options(self):
        """The topology's default :class:`~symbias.linear.network.SmallSignalOptions`."""
        from .devices.options import SmallSignalOptions

        return SmallSignalOptions(**dict(self.options))

    def defaults(self) -> dict[str, float]:
        """Default value of every design variable, by name."""
        return {v.name: v.value for v in self.variables}

    def transfer(self, circuit=None) -> tuple[str, str, str] | None:
        """The main transfer as ``(quantity, output, input)``, or None.

        The input is the ``transfer`` role, else the ``input`` role, else the
        first supply, else the first bias source; the quantity follows from the kinds of output and input
        (current out of a V element, or voltage at a node; driven by an I or a
        V source).
        """
        circuit = circuit if circuit is not None else self.circuit()
        source = (self.roles.get("transfer") or self.roles.get("input")
                  or next(iter(self.roles.get("supply", ())), None) or next(iter(self.roles.get("bias", ())), None))
        if source is None:
            return None
        output = self.roles["output"]
        current_out = circuit.has_element(output)
        current_in = circuit.element(source).kind == "I"
        quantity = {
            (True, True): "current_gain",
            (True, False): "transconductance",
            (False, True): "transimpedance",
            (False, False): "voltage_gain",
        }[(current_out, current_in)]
        return quantity, output, source

    def formulas_for(self, quantity: str) -> tuple[ExpectedFormula, ...]:
        """The expected formulas of one quantity, exact ones first."""
        found = [f for f in self.formulas if f.quantity == quantity]
        return tuple(sorted(found, key=lambda f: FORMS.index(f.form)))

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready fields (plain types only)."""
        return {
            "id": self.id,
            "title": self.title,
            "family": self.family,
            "technology": self.technology,
            "description": self.description,
            "references": [
                {"author": r.author, "title": r.title, "venue": r.venue, "year": r.year, "chapter": r.chapter}
                for r in self.references
            ],
            "netlist": self.netlist,
            "roles": {k: list(v) if isinstance(v, tuple) else v for k, v in self.roles.items()},
            "headroom": dict(self.headroom),
            "variables": [
                {"name": v.name, "default": v.default, "unit": v.unit, "description": v.description,
                 "rule": v.rule, "expr": v.expr}
                for v in self.variables
            ],
            "formulas": [
                {"quantity": f.quantity, "form": f.form, "expr": f.expr, "options": dict(f.options),
                 "large": list(f.large), "relative_to": f.relative_to, "assumptions": list(f.assumptions),
                 "source": f.source}
                for f in self.formulas
            ],
            "path": self.path,
        }


def _rebuild_topology(values: dict) -> Topology:
    return Topology(**values)


def _rebuild_formula(values: dict) -> ExpectedFormula:
    return ExpectedFormula(**values)


# -- reading one file -------------------------------------------------------------------
class _Lines:
    """Where keys sit in a TOML text, so errors can name a line.

    A light scan, enough for the flat layout of library files: ``[table]`` and
    ``[[array]]`` headers and ``key =`` lines outside multi-line strings.
    """

    _HEADER = re.compile(r"^\s*(\[\[?)\s*([A-Za-z0-9_.-]+)\s*\]\]?")
    _KEY = re.compile(r"^\s*([A-Za-z0-9_-]+)\s*=")

    def __init__(self, text: str):
        self.keys: dict[tuple[str, int | None, str], int] = {}
        self.headers: dict[tuple[str, int | None], int] = {}
        counts: dict[str, int] = {}
        table, index = "", None
        in_string = None
        for number, line in enumerate(text.splitlines(), start=1):
            if in_string:
                if line.count(in_string) % 2 == 1:
                    in_string = None
                continue
            header = self._HEADER.match(line)
            if header:
                table = header.group(2)
                if header.group(1) == "[[":
                    index = counts.get(table, 0)
                    counts[table] = index + 1
                else:
                    index = None
                self.headers[(table, index)] = number
                continue
            key = self._KEY.match(line)
            if key:
                self.keys.setdefault((table, index, key.group(1)), number)
            for quote in ('"""', "'''"):
                if line.count(quote) % 2 == 1:
                    in_string = quote
                    break

    def of(self, key: str, table: str = "", index: int | None = None) -> int:
        """Line of ``key`` in ``table`` (element ``index`` of an array), else of the table header."""
        return self.keys.get((table, index, key)) or self.headers.get((table, index)) or 1


def _check_keys(data: dict, spec: dict, lines: _Lines, path: str, table: str = "", index: int | None = None) -> None:
    where = f"[[{table}]]" if index is not None else (f"[{table}]" if table else "the file")
    for key in data:
        if key not in spec:
            known = ", ".join(spec)
            raise LibraryError(f"unknown key {key!r} in {where} (expected one of: {known})", path,
                               lines.of(key, table, index))
    for key, (required, types, wanted) in spec.items():
        if key not in data:
            if required:
                raise LibraryError(f"missing key {key!r} in {where}", path, lines.of(key, table, index))
            continue
        value = data[key]
        if not isinstance(value, types) or isinstance(value, bool) and types is not bool:
            raise LibraryError(f"{key!r} must be {wanted}", path, lines.of(key, table, index))
        if types is list and key not in ("variables", "references", "formulas"):
            if not all(isinstance(item, str) for item in value):
                raise LibraryError(f"{key!r} must be {wanted}", path, lines.of(key, table, index))


def _netlist_line(text: str) -> int:
    """Line of the file on which the netlist's title line sits."""
    for number, line in enumerate(text.splitlines(), start=1):
        match = re.match(r'^\s*netlist\s*=\s*("""|\'\'\'|"|\')(.*)$', line)
        if match:
            # TOML drops a newline right after an opening triple quote
            rest = match.group(2)
            return number + 1 if match.group(1) in ('"""', "'''") and not rest.strip() else number
    return 1


def _netlist_circuit(netlist: str, path: str | None, first_line: int):
    from .netlist import parse_netlist

    lines = netlist.splitlines()
    if not lines:
        raise LibraryError("the netlist is empty: its first line must be a title", path, first_line)
    # pad with blank lines so that element lines carry the file's line numbers
    padded = "\n".join([lines[0]] + [""] * (first_line - 1) + lines[1:]) + "\n"
    try:
        return parse_netlist(padded, path)
    except SymbiasError as err:
        raise LibraryError(f"netlist: {err.reason}", path, err.line or first_line) from None


def _parse_expression(text: str, path: str, line: int, what: str):
    from .expressions import parse_expression

    try:
        return parse_expression(text)
    except SymbiasError as err:
        raise LibraryError(f"{what}: {err.reason}", path, line) from None


def _options(data: dict, lines: _Lines, path: str, table: str, index: int | None) -> dict[str, Any]:
    options = dict(data)
    for key, value in options.items():
        line = lines.of("options", table, index)
        if key not in _OPTION_KEYS:
            raise LibraryError(f"unknown small-signal option {key!r} (expected one of: {', '.join(_OPTION_KEYS)})",
                               path, line)
        if key == "match" and isinstance(value, list) and all(isinstance(v, str) for v in value):
            options[key] = tuple(value)
        elif not isinstance(value, bool):
            raise LibraryError(f"option {key!r} must be true or false", path, line)
    return options


def _choice(value: str, choices: tuple[str, ...], key: str, path: str, line: int) -> str:
    if value not in choices:
        raise LibraryError(f"{key} {value!r} is not one of: {', '.join(choices)}", path, line)
    return value


def _read_roles(data: dict, circuit, lines: _Lines, path: str, family: str) -> dict[str, Any]:
    _check_keys(data, _ROLE_KEYS, lines, path, "roles")
    roles: dict[str, Any] = {}
    output = data["output"]
    line = lines.of("output", "roles")
    if circuit.has_element(output):
        element = circuit.element(output)
        if element.kind != "V":
            raise LibraryError(f"roles.output {output!r} must be a voltage source (its current is the output)",
                               path, line)
        roles["output"] = element.name
    elif family == "reference" and output.lower() in circuit.nodes:
        roles["output"] = output.lower()
    else:
        what = "element or node" if family == "reference" else "voltage source"
        raise LibraryError(f"roles.output: no {what} named {output!r} in the netlist", path, line)
    for key in ("input", "transfer"):
        if key in data:
            roles[key] = _role_source(data[key], circuit, key, ("I", "V"), path, lines.of(key, "roles"))
    for key in ("outputs", "supply", "bias"):
        if key in data:
            kinds = ("V",) if key == "outputs" else ("V", "I")
            roles[key] = tuple(_role_source(name, circuit, key, kinds, path, lines.of(key, "roles"))
                               for name in data[key])
    return roles


def _role_source(name: str, circuit, role: str, kinds: tuple[str, ...], path: str, line: int) -> str:
    if not circuit.has_element(name):
        raise LibraryError(f"roles.{role}: no element named {name!r} in the netlist", path, line)
    element = circuit.element(name)
    if element.kind not in kinds:
        wanted = " or ".join({"V": "a voltage source", "I": "a current source"}[k] for k in kinds)
        raise LibraryError(f"roles.{role}: {name} must be {wanted}", path, line)
    return element.name


def _read_variables(items: list, lines: _Lines, path: str) -> tuple[Variable, ...]:
    from .expressions import try_parse_number

    out = []
    for index, item in enumerate(items):
        if not isinstance(item, dict):
            raise LibraryError("each [[variables]] entry must be a table", path, lines.of("variables"))
        _check_keys(item, _VARIABLE_KEYS, lines, path, "variables", index)
        name = item["name"]
        if not _NAME.match(name):
            raise LibraryError(f"variable name {name!r} is not a valid symbol name", path,
                               lines.of("name", "variables", index))
        default = str(item["default"])
        number = try_parse_number(default)
        if number is None:
            raise LibraryError(f"variable {name}: default {default!r} is not a number", path,
                               lines.of("default", "variables", index))
        if "expr" in item:
            _parse_expression(item["expr"], path, lines.of("expr", "variables", index), f"variable {name} expr")
        out.append(Variable(name, default, float(number), item.get("unit", ""), item["description"], item["rule"],
                            item.get("expr")))
    names = [v.name for v in out]
    for index, name in enumerate(names):
        if name in names[:index]:
            raise LibraryError(f"variable {name!r} is defined twice", path, lines.of("name", "variables", index))
    return tuple(out)


def _read_references(items: list, lines: _Lines, path: str) -> tuple[Reference, ...]:
    if not items:
        raise LibraryError("at least one [[references]] entry is required", path, lines.of("references"))
    out = []
    for index, item in enumerate(items):
        if not isinstance(item, dict):
            raise LibraryError("each [[references]] entry must be a table", path, lines.of("references"))
        _check_keys(item, _REFERENCE_KEYS, lines, path, "references", index)
        out.append(Reference(item["author"], item["title"], item["venue"], item["year"], item.get("chapter", "")))
    return tuple(out)


def _read_formulas(items: list, circuit, roles: Mapping, lines: _Lines, path: str) -> tuple[ExpectedFormula, ...]:
    out = []
    for index, item in enumerate(items):
        if not isinstance(item, dict):
            raise LibraryError("each [[formulas]] entry must be a table", path, lines.of("formulas"))
        _check_keys(item, _FORMULA_KEYS, lines, path, "formulas", index)
        at = lines.headers.get(("formulas", index), 1)
        quantity = _choice(item["quantity"], FORMULA_QUANTITIES, "quantity", path,
                           lines.of("quantity", "formulas", index))
        form = _choice(item["form"], FORMS, "form", path, lines.of("form", "formulas", index))
        expr = _parse_expression(item["expr"], path, lines.of("expr", "formulas", index), "formula expr")
        if "relative_to" in item:
            _parse_expression(item["relative_to"], path, lines.of("relative_to", "formulas", index), "relative_to")
        large = tuple(item.get("large", ()))
        if form == "exact" and large:
            raise LibraryError("'large' applies to leading-order formulas only", path,
                               lines.of("large", "formulas", index))
        del expr  # parsed only to check the syntax; symbols are checked against the engine in the tests
        options = _options(item.get("options", {}), lines, path, "formulas", index)
        for key in ("output", "input"):
            if key in item and not circuit.has_element(item[key]) and item[key].lower() not in circuit.nodes:
                raise LibraryError(f"formula {key} {item[key]!r} is not an element or node of the netlist", path,
                                   lines.of(key, "formulas", index))
        if quantity != "output_resistance" and quantity != "dc_output":
            if "input" not in item and not any(roles.get(k) for k in ("input", "transfer", "supply", "bias")):
                raise LibraryError(f"a {quantity} formula needs an input: set roles.input or the formula's input",
                                   path, lines.of("quantity", "formulas", index))
        out.append(ExpectedFormula(quantity, form, item["expr"], options, large, item.get("relative_to"),
                                   tuple(item["assumptions"]), item["source"], item.get("output"),
                                   item.get("input"), at))
    return tuple(out)


def parse_topology(text: str, path: str | None = None) -> Topology:
    """Read one library file's text into a validated :class:`Topology`.

    Raises
    ------
    LibraryError
        With the file and line of the first problem found.

    Examples
    --------
    >>> text = open(shipped_dir() / "bjt-simple-mirror.toml", encoding="utf-8").read()
    >>> parse_topology(text, "mirror.toml").title
    'BJT simple current mirror'
    >>> parse_topology(text.replace('family = "current-mirror"', 'family = "mirror"'), "bad.toml")
    Traceback (most recent call last):
    ...
    symbias.errors.LibraryError: bad.toml:4: family 'mirror' is not one of: current-source, current-mirror, reference
    """
    where = path or "<library>"
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        match = re.search(r"\(at line (\d+), column \d+\)", str(err))
        reason = re.sub(r"\s*\(at line \d+, column \d+\)", "", str(err)) or "malformed TOML"
        raise LibraryError(f"TOML syntax: {reason}", where, int(match.group(1)) if match else None) from None
    lines = _Lines(text)
    _check_keys(data, _ROOT_KEYS, lines, where)
    if not _ID.match(data["id"]):
        raise LibraryError(f"id {data['id']!r} must be lower-case letters, digits and '-'", where, lines.of("id"))
    family = _choice(data["family"], FAMILIES, "family", where, lines.of("family"))
    technology = _choice(data["technology"], TECHNOLOGIES, "technology", where, lines.of("technology"))
    netlist_line = _netlist_line(text)
    circuit = _netlist_circuit(data["netlist"], where, netlist_line)
    roles = _read_roles(data["roles"], circuit, lines, where, family)
    headroom = data.get("headroom", {})
    _check_keys(headroom, _HEADROOM_KEYS, lines, where, "headroom")
    for key, value in headroom.items():
        _parse_expression(value, where, lines.of(key, "headroom"), f"headroom.{key}")
    variables = _read_variables(data.get("variables", []), lines, where)
    _check_variables_cover_netlist(circuit, variables, lines, where)
    return Topology(
        id=data["id"],
        title=data["title"],
        family=family,
        technology=technology,
        description=" ".join(data["description"].split()),
        netlist=data["netlist"],
        roles=roles,
        references=_read_references(data["references"], lines, where),
        variables=variables,
        formulas=_read_formulas(data.get("formulas", []), circuit, roles, lines, where),
        headroom=headroom,
        options=_options(data.get("options", {}), lines, where, "", None),
        path=path,
        netlist_line=netlist_line,
    )


def _check_variables_cover_netlist(circuit, variables: tuple[Variable, ...], lines: _Lines, path: str) -> None:
    """Every free symbol of the netlist is a design variable with a default, and vice versa."""
    used: dict[str, int] = {}
    for element in circuit.elements:
        values = [element.value, *element.params.values()]
        for value in values:
            for symbol in getattr(value, "free_symbols", ()):
                used.setdefault(symbol.name, element.line)
    for model in circuit.models.values():
        for value in model.params.values():
            for symbol in getattr(value, "free_symbols", ()):
                used.setdefault(symbol.name, model.line)
    declared = {v.name for v in variables}
    for name, line in used.items():
        if name not in declared:
            raise LibraryError(f"netlist symbol {name!r} has no [[variables]] entry with a default", path, line)
    for index, variable in enumerate(variables):
        if variable.name not in used:
            raise LibraryError(f"variable {variable.name!r} does not appear in the netlist", path,
                               lines.of("name", "variables", index))


def load_topology(path: str | Path) -> Topology:
    """Read one library file.

    Raises
    ------
    LibraryError
        When the file cannot be read or is malformed.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as err:
        raise LibraryError(f"cannot read library file: {getattr(err, 'strerror', None) or err}", str(path)) from None
    return parse_topology(text, str(path))


# -- folders ------------------------------------------------------------------------------
def shipped_dir() -> Path:
    """The folder of the shipped library.

    ``topologies/`` next to the package (source checkout or editable
    install), else the copy installed as package data files
    (``<prefix>/share/symbias/topologies``).

    Examples
    --------
    >>> (shipped_dir() / "bjt-wilson-mirror.toml").is_file()
    True
    """
    import symbias

    candidates = [Path(symbias.__file__).resolve().parent.parent / "topologies"]
    for base in (sysconfig.get_path("data"), sys.prefix, getattr(sys, "base_prefix", sys.prefix)):
        candidates.append(Path(base) / "share" / "symbias" / "topologies")
    try:
        import site

        candidates.append(Path(site.getuserbase()) / "share" / "symbias" / "topologies")
    except AttributeError:  # pragma: no cover - site without user base (embedded interpreters)
        pass
    for candidate in candidates:
        if candidate.is_dir() and any(candidate.glob("*.toml")):
            return candidate
    return candidates[0]


def library_dirs(extra_dirs: Iterable[str | Path] = (), environ: Mapping[str, str] | None = None) -> tuple[Path, ...]:
    """Folders searched for topologies, in order: ``extra_dirs``, ``$SYMBIAS_LIBRARY``, shipped.

    Examples
    --------
    >>> library_dirs(["mine"], environ={"SYMBIAS_LIBRARY": "team"})[:2]
    (PosixPath('mine'), PosixPath('team'))
    """
    environ = os.environ if environ is None else environ
    dirs = [Path(d) for d in extra_dirs]
    dirs += [Path(d) for d in environ.get(ENV_VAR, "").split(os.pathsep) if d.strip()]
    dirs.append(shipped_dir())
    unique: list[Path] = []
    for d in dirs:
        if d not in unique:
            unique.append(d)
    return tuple(unique)


def load_library(dirs: Iterable[str | Path] | None = None, *, extra_dirs: Iterable[str | Path] = (),
                 environ: Mapping[str, str] | None = None) -> Mapping[str, Topology]:
    """Every topology of the given folders (default: :func:`library_dirs`), by identifier.

    Parameters
    ----------
    dirs : iterable of path, optional
        Folders to read, in order; default ``library_dirs(extra_dirs, environ)``.
    extra_dirs : iterable of path
        Folders searched before the environment variable and the shipped library.
    environ : mapping, optional
        Environment to read ``SYMBIAS_LIBRARY`` from (default ``os.environ``).

    Raises
    ------
    LibraryError
        For a missing folder, a malformed file or an identifier defined twice.

    Examples
    --------
    >>> library = load_library([shipped_dir()])
    >>> len(library) >= 28, "mos-regulated-cascode" in library
    (True, True)
    """
    folders = tuple(Path(d) for d in dirs) if dirs is not None else library_dirs(extra_dirs, environ)
    found: dict[str, Topology] = {}
    for folder in folders:
        if not folder.is_dir():
            raise LibraryError("library folder does not exist", str(folder))
        for file in sorted(folder.glob("*.toml")):
            topology = load_topology(file)
            if topology.id in found:
                first = found[topology.id].path
                raise LibraryError(f"identifier {topology.id!r} is already defined in {first}", str(file),
                                   _Lines(file.read_text(encoding="utf-8")).of("id"))
            found[topology.id] = topology
    return MappingProxyType(found)


def find_topology(identifier: str, extra_dirs: Iterable[str | Path] = (),
                  environ: Mapping[str, str] | None = None) -> Topology:
    """The topology with this identifier.

    Raises
    ------
    LibraryError
        If no library folder defines it (the message suggests close names).

    Examples
    --------
    >>> find_topology("widlar-bandgap").roles["output"]
    'vref'
    """
    library = load_library(extra_dirs=extra_dirs, environ=environ)
    if identifier in library:
        return library[identifier]
    raise LibraryError(_unknown(identifier, library), identifier)


def _unknown(name: str, library: Mapping[str, Topology]) -> str:
    close = difflib.get_close_matches(name, list(library), n=3)
    hint = f"; did you mean {', '.join(close)}?" if close else "; 'symbias list' shows the library"
    return f"not a netlist file nor a library topology{hint}"


def resolve(name_or_path: str, extra_dirs: Iterable[str | Path] = (),
            environ: Mapping[str, str] | None = None):
    """A ``(Circuit, Topology or None)`` pair from a library identifier or a file.

    A path to a ``.toml`` file is read as a library file; any other existing
    file as a netlist; anything else is looked up as an identifier.

    Raises
    ------
    LibraryError
        For an unknown identifier or a malformed library file.
    NetlistError
        For a netlist file that cannot be read or parsed.

    Examples
    --------
    >>> circuit, topology = resolve("mos-cascode-mirror")
    >>> topology.id, len(circuit.devices)
    ('mos-cascode-mirror', 4)
    """
    path = Path(name_or_path)
    if path.is_file():
        if path.suffix.lower() == ".toml":
            topology = load_topology(path)
            return topology.circuit(), topology
        from .netlist import read_netlist

        return read_netlist(path), None
    if path.suffix or any(sep in name_or_path for sep in ("/", os.sep)):
        from .netlist import read_netlist

        return read_netlist(path), None  # raises the file's "cannot read" error
    topology = find_topology(name_or_path, extra_dirs, environ)
    return topology.circuit(), topology
