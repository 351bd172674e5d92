"""The library's domain objects: :class:`Topology` and its parts, frozen and validated on construction.

Domain layer of the library package (plain values -> frozen objects; a
:class:`Topology` yields its :class:`~symbias.circuit.Circuit`).  Each object
checks its own invariants in ``__post_init__`` and raises a
:class:`~symbias.errors.LibraryError`; the file reader
(:mod:`symbias.library.reading`) runs the same checks field by field first, so
that a problem in a file is reported at its line.  Every object pickles (the
read-only mappings are rebuilt on unpickling), so topologies can be sent to a
process pool.

Examples
--------
>>> from dataclasses import replace
>>> ref = Reference("R. J. Widlar", "Some circuit design techniques for linear ICs", "IEEE TCT", 1965)
>>> top = Topology(id="tiny-sink", title="Resistor sink", family="current-source", technology="bjt",
...                description="A resistor.", netlist="tiny\\nV1 a 0 1\\nR1 a 0 {RL}\\n",
...                roles={"output": "V1"}, references=(ref,),
...                variables=(Variable("RL", "1k", 1000.0, "ohm", "load", "any", sizes="output-current"),))
>>> top.default_quantities()
(('output_resistance', ('V1',)),)
>>> replace(top, id="Tiny sink")
Traceback (most recent call last):
...
symbias.errors.LibraryError: <input>: id 'Tiny sink' must be lower-case letters, digits and '-', starting with a letter or digit
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any, Mapping

from ..errors import LibraryError, SymbiasError
from ..expressions import parse_expression
from ..netlist import parse_netlist
from .fields import (
    FAMILIES,
    FORMS,
    FORMULA_QUANTITIES,
    HEADROOM_KEYS,
    LIST_ROLES,
    ROLE_KEYS,
    SIZES,
    TECHNOLOGIES,
    check_choice,
    check_identifier,
    check_options,
    check_rule_names,
    check_strings,
    check_symbol_name,
    check_text,
    check_year,
)

__all__ = [
    "Reference",
    "Variable",
    "ExpectedFormula",
    "Topology",
    "netlist_circuit",
    "remember_circuit",
    "sizing_problem",
]

# (current out of a V element, driven by an I source) -> quantity of the main transfer
_TRANSFER_KIND = {
    (True, True): "current_gain",
    (True, False): "transconductance",
    (False, True): "transimpedance",
    (False, False): "voltage_gain",
}


def netlist_circuit(netlist: str, path: str | None, first_line: int):
    """The :class:`~symbias.circuit.Circuit` of a library netlist whose first line sits on ``first_line``.

    Element and error line numbers are those of the file: the netlist's
    lines follow one another from ``first_line``.

    Raises
    ------
    LibraryError
        When the netlist does not parse or validate.

    Examples
    --------
    >>> [e.line for e in netlist_circuit("t\\nV1 a 0 1\\nR1 a 0 1k\\n", "f.toml", 10).elements]
    [11, 12]
    """
    lines = netlist.splitlines()
    if not lines or not lines[0].strip():
        raise LibraryError("the netlist's first line must be its title", path, first_line)
    # pad with blank lines so that element lines carry the file's line numbers
    padded = "\n".join([lines[0]] + [""] * (first_line - 1) + lines[1:]) + "\n"
    try:
        return parse_netlist(padded, path)
    except SymbiasError as err:
        raise LibraryError(f"netlist: {err.reason}", path, err.line or first_line) from None


# -- the objects ------------------------------------------------------------------------------
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

    def __post_init__(self) -> None:
        for key in ("author", "title", "venue"):
            check_text(getattr(self, key), key)
        check_year(self.year)
        if not isinstance(self.chapter, str):
            raise LibraryError("'chapter' must be a string")

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
        The default as a number (finite).
    unit, description, rule : str
        Unit, meaning, and the rule that sizes it for a target.
    expr : str, optional
        The sizing rule as an expression over target quantities.
    sizes : str, optional
        What a ranking run solves this variable for on the DC model (one of
        :data:`~symbias.library.fields.SIZES`); its rule gives the start.
    """

    name: str
    default: str
    value: float
    unit: str = ""
    description: str = ""
    rule: str = ""
    expr: str | None = None
    sizes: str | None = None

    def __post_init__(self) -> None:
        check_symbol_name(self.name, "variable name")
        check_text(self.default, "default")
        if not isinstance(self.value, (int, float)) or not math.isfinite(self.value):
            raise LibraryError(f"variable {self.name}: value {self.value!r} is not a finite number")
        for key in ("unit", "description", "rule"):
            if not isinstance(getattr(self, key), str):
                raise LibraryError(f"variable {self.name}: {key!r} must be a string")
        if self.expr is not None:
            check_text(self.expr, "expr")
        if self.sizes is not None:
            check_choice(self.sizes, SIZES, f"variable {self.name}: sizes")


#: The variable each family must mark with ``sizes`` (references: a zero-TC bandgap variable).
_SIZED_BY_FAMILY = {"current-source": "output-current", "current-mirror": "output-current", "reference": "zero-tc"}


def sizing_problem(variables: tuple[Variable, ...], family: str) -> tuple[int, str, str] | None:
    """The first problem with the sizing keys of a topology's variables, or None.

    Returns ``(index of the variable, key at fault, message)``.  The family's
    variable must be marked once (sources and mirrors ``output-current``,
    references ``zero-tc``) and be positive; each other ``sizes`` value at most
    once; every ``expr`` names only variables and known quantities
    (:data:`~symbias.library.fields.RULE_QUANTITIES`), without a cycle among
    the rules.

    Examples
    --------
    >>> v = Variable("IREF", "100u", 1e-4, "A", "reference", "IREF = IOUT", "IOUT", "output-current")
    >>> sizing_problem((v,), "current-mirror") is None, sizing_problem((v,), "reference")[2]
    (True, "variable IREF: sizes = 'output-current' does not apply to a reference")
    """
    names = {v.name for v in variables}
    depends: dict[str, frozenset[str]] = {}
    for index, variable in enumerate(variables):
        if variable.expr is not None:
            try:
                depends[variable.name] = check_rule_names(variable.expr, names, f"variable {variable.name} expr")
            except LibraryError as err:
                return index, "expr", err.reason
    wanted = _SIZED_BY_FAMILY[family]
    for kind in SIZES:
        marked = [i for i, v in enumerate(variables) if v.sizes == kind]
        if len(marked) > 1:
            return marked[1], "sizes", f"variable {variables[marked[1]].name}: sizes = {kind!r} is already on " \
                                       f"{variables[marked[0]].name}"
        if marked and kind in _SIZED_BY_FAMILY.values() and kind != wanted:
            return marked[0], "sizes", f"variable {variables[marked[0]].name}: sizes = {kind!r} does not apply " \
                                       f"to a {family}"
        if marked and variables[marked[0]].value <= 0:
            return marked[0], "default", f"variable {variables[marked[0]].name}: a sized variable needs a " \
                                         f"positive default"
    if not any(v.sizes == wanted for v in variables):
        what = "source or mirror" if family != "reference" else "reference"
        return max(len(variables) - 1, 0), "sizes", f"a {what} marks one variable sizes = {wanted!r} (it has none)"
    cycle = _rule_cycle(depends)
    if cycle:
        index = next(i for i, v in enumerate(variables) if v.name == cycle[0])
        return index, "expr", f"sizing rules depend on each other: {' -> '.join(cycle)}"
    return None


def _rule_cycle(depends: Mapping[str, frozenset[str]]) -> list[str]:
    """A cycle among the rules (names, the first repeated at the end), or an empty list."""
    state: dict[str, int] = {}

    def visit(name: str, trail: list[str]) -> list[str]:
        state[name] = 1  # on the current trail
        for other in sorted(depends.get(name, ())):
            if other in depends and state.get(other) == 1:
                return trail[trail.index(other):] + [other]
            if other in depends and state.get(other) is None and (found := visit(other, trail + [other])):
                return found
        state[name] = 2
        return []

    for start in sorted(depends):
        if state.get(start) is None and (found := visit(start, [start])):
            return found
    return []


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
        The formula, in the expression syntax over the engine's symbol names.
    options : mapping
        Small-signal options it assumes (see :func:`check_options`).
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
        check_choice(self.quantity, FORMULA_QUANTITIES, "quantity")
        check_choice(self.form, FORMS, "form")
        check_text(self.expr, "expr")
        object.__setattr__(self, "options", MappingProxyType(check_options(self.options)))
        object.__setattr__(self, "large", check_strings(self.large, "large"))
        object.__setattr__(self, "assumptions", check_strings(self.assumptions, "assumptions"))
        if self.form == "exact" and self.large:
            raise LibraryError("'large' applies to leading-order formulas only")

    def __reduce__(self):
        values = {k: getattr(self, k) for k in self.__dataclass_fields__}
        values["options"] = dict(values["options"])
        return (_rebuild, (ExpectedFormula, values))

    @property
    def sympy_expr(self):
        """The formula as a sympy expression (read by the netlist expression parser).

        Examples
        --------
        >>> ExpectedFormula("current_gain", "exact", "1/(1 + 2/beta)").sympy_expr
        beta/(beta + 2)
        """
        import sympy

        return sympy.together(parse_expression(self.expr).to_sympy())

    @property
    def small_signal(self) -> bool:
        """True when the quantity is a small-signal analysis."""
        return self.quantity != "dc_output"

    def small_signal_options(self):
        """The :class:`~symbias.devices.options.SmallSignalOptions` this formula assumes.

        Examples
        --------
        >>> ExpectedFormula("output_resistance", "exact", "ro", {"parasitics": ["rb"]}).small_signal_options().parasitics
        ('rb',)
        """
        from ..devices.options import SmallSignalOptions

        return SmallSignalOptions(**dict(self.options))


def _rebuild(cls, values: dict):
    return cls(**values)


@dataclass(frozen=True)
class Topology:
    """One library circuit, as read from its file.

    ``roles`` maps ``input``, ``transfer`` and ``output`` to names (``output``
    is an element for sources and mirrors, the output node for references) and
    ``outputs``, ``supply``, ``bias`` to tuples of element names.  ``headroom``
    maps ``output`` (compliance), ``input`` and ``supply`` to expression
    strings.  ``netlist_line`` is the file line of the netlist's title; its
    other lines follow on consecutive lines, so the circuit's element lines are
    file lines.  ``schematic`` is the placement of its elements for a drawing
    (:class:`~symbias.library.schematic.Schematic`), or None.

    The circuit is parsed once, on first use (a pure function of the frozen
    fields, so the kept result never goes stale).
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
    schematic: Any = None

    def __post_init__(self) -> None:
        try:
            self._check()
            roles, headroom, options = _roles(self.roles), _headroom(self.headroom), check_options(self.options)
        except LibraryError as err:
            raise err.located(self.path) from None
        object.__setattr__(self, "roles", MappingProxyType(roles))
        object.__setattr__(self, "headroom", MappingProxyType(headroom))
        object.__setattr__(self, "options", MappingProxyType(options))
        for key in ("references", "variables", "formulas"):
            object.__setattr__(self, key, tuple(getattr(self, key)))
        object.__setattr__(self, "_circuit", None)

    def _check(self) -> None:
        check_identifier(self.id)
        for key in ("title", "description", "netlist"):
            check_text(getattr(self, key), key)
        check_choice(self.family, FAMILIES, "family")
        check_choice(self.technology, TECHNOLOGIES, "technology")
        for key, kind in (("references", Reference), ("variables", Variable), ("formulas", ExpectedFormula)):
            items = getattr(self, key)
            if not isinstance(items, (tuple, list)) or not all(isinstance(item, kind) for item in items):
                raise LibraryError(f"{key!r} must hold {kind.__name__} objects")
        if not self.references:
            raise LibraryError("at least one reference is required")
        names = [v.name for v in self.variables]
        twice = sorted({n for n in names if names.count(n) > 1})
        if twice:
            raise LibraryError(f"variable {twice[0]!r} is defined twice")
        problem = sizing_problem(self.variables, self.family)
        if problem is not None:
            raise LibraryError(problem[2])
        if not isinstance(self.netlist_line, int) or self.netlist_line < 1:
            raise LibraryError(f"netlist_line must be a positive integer, got {self.netlist_line!r}")

    def __reduce__(self):
        values = {k: getattr(self, k) for k in self.__dataclass_fields__}
        for key in ("roles", "headroom", "options"):
            values[key] = dict(values[key])
        return (_rebuild, (Topology, values))

    def circuit(self):
        """The parsed and validated :class:`~symbias.circuit.Circuit`.

        Element line numbers are those of the library file.

        Raises
        ------
        LibraryError
            When the netlist does not parse or validate.
        """
        if self._circuit is None:
            object.__setattr__(self, "_circuit", netlist_circuit(self.netlist, self.path, self.netlist_line))
        return self._circuit

    def small_signal_options(self):
        """The topology's default :class:`~symbias.devices.options.SmallSignalOptions`."""
        from ..devices.options import SmallSignalOptions

        return SmallSignalOptions(**dict(self.options))

    def defaults(self) -> dict[str, float]:
        """Default value of every design variable, by name."""
        return {v.name: v.value for v in self.variables}

    @property
    def transfer_input(self) -> str | None:
        """The source the main transfer is taken from.

        The ``transfer`` role, else ``input``, else the first ``supply``, else
        the first ``bias`` source; None when the roles name none of them.
        """
        roles = self.roles
        return (roles.get("transfer") or roles.get("input") or next(iter(roles.get("supply", ())), None)
                or next(iter(roles.get("bias", ())), None))

    def transfer(self, circuit=None) -> tuple[str, str, str] | None:
        """The main transfer as ``(quantity, output, input)``, or None.

        The input is :attr:`transfer_input`; the quantity follows from the kinds
        of output and input: current out of a V element or voltage at a node,
        driven by an I or a V source (current gain, transconductance,
        transimpedance, voltage gain).
        """
        source = self.transfer_input
        if source is None:
            return None
        circuit = circuit if circuit is not None else self.circuit()
        output = self.roles["output"]
        quantity = _TRANSFER_KIND[(circuit.has_element(output), circuit.element(source).kind == "I")]
        return quantity, output, source

    def default_quantities(self, circuit=None) -> tuple[tuple[str, tuple[str, ...]], ...]:
        """What to derive when nothing is named, from the roles: ``(quantity, arguments)`` pairs.

        The output resistance at the ``output`` role, then the main transfer
        (:meth:`transfer`) from :attr:`transfer_input` to the output.  The
        arguments are those of the functions in :mod:`symbias.analyses`.

        Examples
        --------
        >>> from symbias.library import find_topology
        >>> find_topology("mos-regulated-cascode").default_quantities()
        (('output_resistance', ('Vout',)), ('transconductance', ('Vout', 'Vb1')))
        """
        wanted = [("output_resistance", (self.roles["output"],))]
        transfer = self.transfer(circuit)
        if transfer is not None:
            quantity, output, source = transfer
            wanted.append((quantity, (output, source)))
        return tuple(wanted)

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
                 "rule": v.rule, "expr": v.expr, "sizes": v.sizes}
                for v in self.variables
            ],
            "formulas": [
                {"quantity": f.quantity, "form": f.form, "expr": f.expr,
                 "options": {k: list(v) if isinstance(v, tuple) else v for k, v in f.options.items()},
                 "large": list(f.large), "relative_to": f.relative_to, "assumptions": list(f.assumptions),
                 "source": f.source}
                for f in self.formulas
            ],
            "path": self.path,
        }


def _roles(data: Mapping[str, Any]) -> dict[str, Any]:
    """Roles with list roles as tuples; the names are checked against the circuit by the reader."""
    if not isinstance(data, Mapping):
        raise LibraryError("'roles' must be a table")
    roles = dict(data)
    for key, value in roles.items():
        check_choice(key, ROLE_KEYS, "role")
        if key in LIST_ROLES:
            roles[key] = check_strings(value, f"roles.{key}")
        elif not isinstance(value, str) or not value:
            raise LibraryError(f"roles.{key} must be a name")
    if "output" not in roles:
        raise LibraryError("roles.output is required")
    return roles


def _headroom(data: Mapping[str, Any]) -> dict[str, str]:
    if not isinstance(data, Mapping):
        raise LibraryError("'headroom' must be a table")
    headroom = dict(data)
    for key, value in headroom.items():
        check_choice(key, HEADROOM_KEYS, "headroom")
        check_text(value, f"headroom.{key}")
    return headroom


def remember_circuit(topology: Topology, circuit) -> Topology:
    """Hand ``topology`` the circuit already parsed from its own netlist (the reader's), so it is not parsed again."""
    object.__setattr__(topology, "_circuit", circuit)
    return topology
