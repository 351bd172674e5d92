"""Reading one library file: TOML text -> a validated :class:`~symbias.library.topology.Topology`.

Reader layer of the library package (file text -> domain object).  Every
problem is a one-line :class:`~symbias.errors.LibraryError` naming the file
and the line of the offending value: unknown and missing keys, wrong types,
values out of range, netlist errors (at the netlist's own line in the file),
roles that name no suitable element, free netlist symbols without a design
variable.  The grammar is documented in ``docs/library-format.md``.

Reading is a pure function of the text and the path, so its results are kept
(keyed by both, bounded): reading the same library again costs a file read
per topology.

Examples
--------
>>> from symbias.library import shipped_dir
>>> text = open(shipped_dir() / "bjt-simple-mirror.toml", encoding="utf-8").read()
>>> parse_topology(text, "mirror.toml").title
'BJT simple current mirror'
>>> parse_topology(text.replace('default = "100u"', 'default = "1e400"'), "mine.toml")
Traceback (most recent call last):
...
symbias.errors.LibraryError: mine.toml:38: variable IREF: default: number '1e400' is out of range (exponent beyond +-308)
"""

from __future__ import annotations

import math
from contextlib import contextmanager
from functools import lru_cache
from pathlib import Path
from typing import Any, Iterator

from ..errors import LibraryError
from .fields import (
    FAMILIES,
    FORMS,
    FORMULA_QUANTITIES,
    SIZES,
    TECHNOLOGIES,
    check_choice,
    check_default,
    check_expression,
    check_identifier,
    check_options,
    check_symbol_name,
    check_text,
    check_year,
)
from ..tomlfile import KeyLines, read_toml
from .schematic import read_schematic
from .topology import ExpectedFormula, Reference, Topology, Variable, netlist_circuit, remember_circuit, sizing_problem

__all__ = ["parse_topology", "load_topology", "identifier_line", "CACHE_SIZE"]

#: Topologies kept by :func:`parse_topology` (a library is a few dozen files).
CACHE_SIZE = 512

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
    "schematic": (False, dict, "a table [schematic]"),
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
    "sizes": (False, str, "a string"),
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
_ARRAYS_OF_TABLES = ("variables", "references", "formulas")


@contextmanager
def _at(path: str, line: int) -> Iterator[None]:
    """Give a :class:`LibraryError` raised inside the file and line it lacks."""
    try:
        yield
    except LibraryError as err:
        raise err.located(path, line) from None


def parse_topology(text: str, path: str | None = None) -> Topology:
    """Read one library file's text into a validated :class:`Topology`.

    Raises
    ------
    LibraryError
        With the file and line of the first problem found.

    Examples
    --------
    >>> from symbias.library import shipped_dir
    >>> text = open(shipped_dir() / "bjt-simple-mirror.toml", encoding="utf-8").read()
    >>> parse_topology(text.replace('family = "current-mirror"', 'family = "mirror"'), "bad.toml")
    Traceback (most recent call last):
    ...
    symbias.errors.LibraryError: bad.toml:4: family 'mirror' is not one of: current-source, current-mirror, reference
    """
    return _parse_kept(text, path)


def load_topology(path: str | Path) -> Topology:
    """Read one library file.

    Raises
    ------
    LibraryError
        When the file cannot be read or is malformed.

    Examples
    --------
    >>> from symbias.library import shipped_dir
    >>> load_topology(shipped_dir() / "widlar-bandgap.toml").family
    'reference'
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as err:
        raise LibraryError(f"cannot read library file: {getattr(err, 'strerror', None) or err}", str(path)) from None
    return parse_topology(text, str(path))


def identifier_line(text: str) -> int:
    """Line of the ``id`` key in a library file's text (for messages about the identifier)."""
    return KeyLines(text).of("id")


@lru_cache(maxsize=CACHE_SIZE)
def _parse_kept(text: str, path: str | None) -> Topology:
    where = path or "<library>"
    data, lines = read_toml(text, where)
    _check_keys(data, _ROOT_KEYS, lines, where)
    with _at(where, lines.of("id")):
        check_identifier(data["id"])
    for key in ("title", "description"):
        with _at(where, lines.of(key)):
            check_text(data[key], key)
    family = _choice(data["family"], FAMILIES, "family", where, lines.of("family"))
    technology = _choice(data["technology"], TECHNOLOGIES, "technology", where, lines.of("technology"))
    netlist_line = _netlist_line(data["netlist"], lines, where)
    with _at(where, netlist_line):
        circuit = netlist_circuit(data["netlist"], path, netlist_line)
    roles = _read_roles(data["roles"], circuit, lines, where, family)
    headroom = _read_headroom(data.get("headroom", {}), lines, where)
    variables = _read_variables(data.get("variables", []), lines, where)
    _check_variables_cover_netlist(circuit, variables, lines, where)
    _check_sizing(variables, family, lines, where)
    with _at(where, lines.of("options")):
        options = check_options(data.get("options", {}))
    schematic = None
    if "schematic" in data:
        with _at(where, lines.headers.get(("schematic", None)) or lines.of("schematic")):
            schematic = read_schematic(data["schematic"], circuit, lines)
    with _at(where, 1):
        topology = Topology(
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
            options=options,
            path=path,
            netlist_line=netlist_line,
            schematic=schematic,
        )
    return remember_circuit(topology, circuit)


def _check_keys(data: dict, spec: dict, lines: KeyLines, path: str, table: str = "",
                index: int | None = None) -> None:
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
        wrong = not isinstance(value, types) or isinstance(value, bool)
        if not wrong and types is list and key not in _ARRAYS_OF_TABLES:
            wrong = not all(isinstance(item, str) for item in value)
        if wrong:
            raise LibraryError(f"{key!r} must be {wanted}", path, lines.of(key, table, index))


def _choice(value: str, choices: tuple[str, ...], key: str, path: str, line: int) -> str:
    with _at(path, line):
        return check_choice(value, choices, key)


def _netlist_line(netlist: str, lines: KeyLines, path: str) -> int:
    """File line of the netlist's title; its lines must follow one another in the file."""
    start = lines.string_start("netlist")
    if start is None or not lines.holds_verbatim("netlist", netlist):
        raise LibraryError('the netlist must be a multi-line string ("""...""") written out line by line, '
                           "without escapes, so that its lines are lines of the file", path, lines.of("netlist"))
    return start


def _read_roles(data: dict, circuit, lines: KeyLines, path: str, family: str) -> dict[str, Any]:
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
        raise LibraryError(f"roles.{role}: {element.name} must be {wanted}", path, line)
    return element.name


def _read_headroom(data: dict, lines: KeyLines, path: str) -> dict[str, str]:
    _check_keys(data, _HEADROOM_KEYS, lines, path, "headroom")
    for key, value in data.items():
        with _at(path, lines.of(key, "headroom")):
            check_expression(value, f"headroom.{key}")
    return dict(data)


def _tables(items: list, key: str, lines: KeyLines, path: str) -> list[dict]:
    for item in items:
        if not isinstance(item, dict):
            raise LibraryError(f"each [[{key}]] entry must be a table", path, lines.of(key))
    return items


def _read_variables(items: list, lines: KeyLines, path: str) -> tuple[Variable, ...]:
    out: list[Variable] = []
    for index, item in enumerate(_tables(items, "variables", lines, path)):
        _check_keys(item, _VARIABLE_KEYS, lines, path, "variables", index)
        name = item["name"]
        with _at(path, lines.of("name", "variables", index)):
            check_symbol_name(name, "variable name")
            if name in {v.name for v in out}:
                raise LibraryError(f"variable {name!r} is defined twice")
        default = str(item["default"])
        with _at(path, lines.of("default", "variables", index)):
            if isinstance(item["default"], float) and not math.isfinite(item["default"]):
                raise LibraryError(f"variable {name}: default {default} is not a finite number")
            value = check_default(default, name)
        if "expr" in item:
            with _at(path, lines.of("expr", "variables", index)):
                check_expression(item["expr"], f"variable {name} expr")
        if "sizes" in item:
            _choice(item["sizes"], SIZES, f"variable {name}: sizes", path, lines.of("sizes", "variables", index))
        with _at(path, lines.headers.get(("variables", index), 1)):
            out.append(Variable(name, default, value, item.get("unit", ""), item["description"], item["rule"],
                                item.get("expr"), item.get("sizes")))
    return tuple(out)


def _check_sizing(variables: tuple[Variable, ...], family: str, lines: KeyLines, path: str) -> None:
    """The sizing keys of the variables, reported at the line of the key at fault."""
    problem = sizing_problem(variables, family)
    if problem is not None:
        index, key, message = problem
        line = lines.of(key, "variables", index) if variables else lines.of("family")
        raise LibraryError(message, path, line)


def _check_variables_cover_netlist(circuit, variables: tuple[Variable, ...], lines: KeyLines, path: str) -> None:
    """Every free symbol of the netlist is a design variable with a default, and vice versa."""
    used: dict[str, int] = {}
    for element in circuit.elements:
        for value in (element.value, *element.params.values()):
            for name in sorted(getattr(value, "names", ())):
                used.setdefault(name, element.line)
    for model in circuit.models.values():
        for value in model.params.values():
            for name in sorted(value.names):
                used.setdefault(name, model.line)
    declared = {v.name for v in variables}
    for name, line in used.items():
        if name not in declared:
            raise LibraryError(f"netlist symbol {name!r} has no [[variables]] entry with a default", path, line)
    for index, variable in enumerate(variables):
        if variable.name not in used:
            raise LibraryError(f"variable {variable.name!r} does not appear in the netlist", path,
                               lines.of("name", "variables", index))


def _read_references(items: list, lines: KeyLines, path: str) -> tuple[Reference, ...]:
    if not items:
        raise LibraryError("at least one [[references]] entry is required", path, lines.of("references"))
    out = []
    for index, item in enumerate(_tables(items, "references", lines, path)):
        _check_keys(item, _REFERENCE_KEYS, lines, path, "references", index)
        for key in ("author", "title", "venue"):
            with _at(path, lines.of(key, "references", index)):
                check_text(item[key], key)
        with _at(path, lines.of("year", "references", index)):
            check_year(item["year"])
        out.append(Reference(item["author"], item["title"], item["venue"], item["year"], item.get("chapter", "")))
    return tuple(out)


def _read_formulas(items: list, circuit, roles: dict, lines: KeyLines, path: str) -> tuple[ExpectedFormula, ...]:
    out = []
    for index, item in enumerate(_tables(items, "formulas", lines, path)):
        _check_keys(item, _FORMULA_KEYS, lines, path, "formulas", index)

        def at(key: str) -> int:
            return lines.of(key, "formulas", index)

        quantity = _choice(item["quantity"], FORMULA_QUANTITIES, "quantity", path, at("quantity"))
        form = _choice(item["form"], FORMS, "form", path, at("form"))
        for key, what in (("expr", "formula expr"), ("relative_to", "relative_to")):
            if key in item:
                with _at(path, at(key)):
                    check_expression(item[key], what)
        with _at(path, at("large")):
            for name in item.get("large", ()):
                check_symbol_name(name, "large: symbol")
            if form == "exact" and item.get("large"):
                raise LibraryError("'large' applies to leading-order formulas only")
        with _at(path, at("options")):
            options = check_options(item.get("options", {}))
        for key in ("output", "input"):
            if key in item and not circuit.has_element(item[key]) and item[key].lower() not in circuit.nodes:
                raise LibraryError(f"formula {key} {item[key]!r} is not an element or node of the netlist", path,
                                   at(key))
        if quantity not in ("output_resistance", "dc_output"):
            if "input" not in item and not any(roles.get(k) for k in ("input", "transfer", "supply", "bias")):
                raise LibraryError(f"a {quantity} formula needs an input: set roles.input or the formula's input",
                                   path, at("quantity"))
        line = lines.headers.get(("formulas", index), 1)
        with _at(path, line):
            out.append(ExpectedFormula(quantity, form, item["expr"], options, tuple(item.get("large", ())),
                                       item.get("relative_to"), tuple(item["assumptions"]), item["source"],
                                       item.get("output"), item.get("input"), line))
    return tuple(out)
