"""Modified nodal analysis in a polynomial ring, solved by cofactors.

Fourth step of the symbolic side (:class:`~symbias.linear.network.LinearNetwork` ->
polynomial system -> numerator and denominator polynomials).

Every quantity symbias derives is a ratio ``c^T A^-1 b`` of the MNA system
``A x = b``: ``b`` drives one source (or a test current), ``c`` observes node
voltages or branch currents.  With ``A^-1 = adj(A)/det(A)`` the result is::

    sum_ij c_i b_j C_ji  /  det(A)

where ``C_ji`` is the cofactor of entry ``(j, i)``.  Determinant and
cofactors come from one memoised sparse Laplace (minor) expansion: at each
step it expands along the row or column with the fewest non-zeros among those
still open, and remembers each minor by the bit masks of its open rows and
columns, so minors shared between the determinant and the cofactors are
computed once.  All arithmetic is exact and fraction-free in a polynomial
ring (:mod:`symbias.linear.polys`); no rational function is ever simplified.

Values that are not polynomials in the user's symbols are encoded with extra
ring generators: ``1/x`` for a symbol ``x`` in a denominator (``1/ro_Q1``) and
one generator per other non-polynomial sub-expression (``1/(R1+R2)``).
:class:`RingVariable` records what each generator means.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.linear.network import expand
>>> net = expand(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"))
>>> problem = LinearProblem(net, rhs=(("v:a", 1),), observe=(("v:a", 1),))
>>> result = solve(problem, backend="sympy")
>>> result.ring.terms(result.numerator), result.ring.names
([((0, 0), Fraction(1, 1))], ('1/RA', '1/RB'))
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import Any, Iterable, Mapping, Sequence

from ..circuit import GROUND
from ..elements import BRANCH_PRIMITIVES, Primitive
from ..errors import AnalysisError
from ..expressions import ONE, Expr, Symbol
from .limits import check_size, check_terms
from .network import LinearNetwork
from .polys import Ring, make_ring

__all__ = [
    "RingVariable",
    "LinearProblem",
    "Solution",
    "CofactorSolver",
    "unknowns",
    "encode",
    "stamp",
    "expanded_system",
    "transfer_numerator",
    "solve",
]

#: Primitive kinds that add a branch-current unknown.
BRANCH_KINDS = BRANCH_PRIMITIVES


@dataclass(frozen=True)
class RingVariable:
    """Meaning of one ring generator.

    Parameters
    ----------
    name : str
        Generator name: ``x`` for a symbol, ``1/x`` for its reciprocal,
        ``@k`` for another sub-expression.
    meaning : Expr
        What the generator stands for, in user symbols.
    symbol : str or None
        The user symbol for ``x`` and ``1/x`` generators.
    power : int
        +1 for ``x``, -1 for ``1/x``, 0 for a sub-expression generator.
    """

    name: str
    meaning: Expr
    symbol: str | None
    power: int


@dataclass(frozen=True)
class LinearProblem:
    """A linear quantity ``c^T A^-1 b`` of a network.

    Parameters
    ----------
    network : LinearNetwork
        The network, with every independent source present (zero-valued).
    rhs : tuple of (unknown, coefficient)
        Non-zero entries of ``b``; unknowns are labelled ``v:<node>`` (a KCL
        row: current injected into the node) or ``i:<source>`` (the source's
        constraint row: its value).
    observe : tuple of (unknown, coefficient)
        Non-zero entries of ``c``: ``v:<node>`` for a node voltage,
        ``i:<source>`` for a branch current (SPICE direction: from n+ through
        the source to n-).
    """

    network: LinearNetwork
    rhs: tuple[tuple[str, int], ...]
    observe: tuple[tuple[str, int], ...]


def unknowns(network: LinearNetwork) -> tuple[str, ...]:
    """The MNA unknowns in order: node voltages, then branch currents.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.linear.network import expand
    >>> unknowns(expand(parse_netlist("t\\nV1 a 0 1\\nR1 a 0 1k\\n")))
    ('v:a', 'i:V1')
    """
    labels = [f"v:{n}" for n in network.nodes if n != GROUND]
    labels += [f"i:{p.name}" for p in network.primitives if p.kind in BRANCH_KINDS]
    return tuple(labels)


# -- encoding values as ring polynomials ---------------------------------------------


def encode(values: Iterable[Expr]) -> tuple[RingVariable, ...]:
    """Ring generators needed to write every value as a polynomial.

    Examples
    --------
    >>> from symbias.expressions import Symbol
    >>> [v.name for v in encode([1 / Symbol("ro"), Symbol("gm")])]
    ['gm', '1/ro']
    """
    found: dict[str, RingVariable] = {}
    atoms: dict[Expr, str] = {}
    for value in dict.fromkeys(values):  # each distinct value once, in first-seen order
        for monomial in value.terms():
            for base, exponent in monomial:
                if isinstance(base, Symbol):  # named without building ``1/x`` again (Expr division is not free)
                    name = base.name if exponent > 0 else f"1/{base.name}"
                    if name not in found:
                        found[name] = _variable_for(base, exponent, atoms)
                    continue
                variable = _variable_for(base, exponent, atoms)
                found.setdefault(variable.name, variable)
    symbol_vars = sorted((v for v in found.values() if v.power), key=lambda v: (v.symbol, v.power))
    atom_vars = sorted((v for v in found.values() if not v.power), key=lambda v: int(v.name[1:]))
    return tuple(symbol_vars + atom_vars)


def _atom(base: Expr, exponent: int) -> Expr:
    """The sub-expression a generator stands for: ``base`` or, for a negative power, ``1/base``."""
    return base if exponent > 0 else ONE / base


def _variable_for(base: Expr, exponent: int, atoms: dict[Expr, str]) -> RingVariable:
    if isinstance(base, Symbol):
        if exponent > 0:
            return RingVariable(base.name, base, base.name, 1)
        return RingVariable(f"1/{base.name}", ONE / base, base.name, -1)
    atom = _atom(base, exponent)
    if atom not in atoms:
        atoms[atom] = f"@{len(atoms)}"
    return RingVariable(atoms[atom], atom, None, 0)


def _to_poly(value: Expr, ring: Ring, variables: tuple[RingVariable, ...]):
    index = {v.name: i for i, v in enumerate(variables)}
    atoms = {v.meaning: v.name for v in variables if not v.power}
    size = len(variables)
    terms = []
    for monomial, coeff in value.terms().items():
        exps = [0] * size
        for base, exponent in monomial:
            if isinstance(base, Symbol):
                name = base.name if exponent > 0 else f"1/{base.name}"
            else:
                name = atoms[_atom(base, exponent)]
            exps[index[name]] += abs(exponent)
        terms.append((tuple(exps), coeff))
    merged: dict[tuple[int, ...], Fraction] = {}
    for exps, coeff in terms:
        merged[exps] = merged.get(exps, Fraction(0)) + coeff
    return ring.from_terms([(e, c) for e, c in merged.items() if c != 0])


# -- stamping ------------------------------------------------------------------------


def stamp(network: LinearNetwork) -> dict[tuple[int, int], list[tuple[Expr, int]]]:
    """MNA entries as lists of (value, sign) contributions, keyed by (row, column).

    The stamp of each primitive kind is one function in :data:`STAMPS`.
    """
    labels = unknowns(network)
    index = {label: i for i, label in enumerate(labels)}
    entries: dict[tuple[int, int], list[tuple[Expr, int]]] = {}

    def node(name: str) -> int | None:
        return None if name == GROUND else index[f"v:{name}"]

    def add(row: int | None, col: int | None, value: Expr, sign: int) -> None:
        if row is not None and col is not None:
            entries.setdefault((row, col), []).append((value, sign))

    for primitive in network.primitives:
        STAMPS[primitive.kind](primitive, node, index, add)
    return entries


def _stamp_admittance(p: Primitive, node, index, add) -> None:
    a, b = node(p.nodes[0]), node(p.nodes[1])
    add(a, a, p.value, 1)
    add(b, b, p.value, 1)
    add(a, b, p.value, -1)
    add(b, a, p.value, -1)


def _stamp_vccs(p: Primitive, node, index, add) -> None:
    a, b, c, d = (node(n) for n in p.nodes)
    add(a, c, p.value, 1)
    add(a, d, p.value, -1)
    add(b, c, p.value, -1)
    add(b, d, p.value, 1)


def _branch_incidence(p: Primitive, node, index, add) -> int:
    k = index[f"i:{p.name}"]
    a, b = node(p.nodes[0]), node(p.nodes[1])
    one = ONE
    add(a, k, one, 1)
    add(b, k, one, -1)
    add(k, a, one, 1)
    add(k, b, one, -1)
    return k


def _stamp_voltage_source(p: Primitive, node, index, add) -> None:
    _branch_incidence(p, node, index, add)


def _stamp_impedance(p: Primitive, node, index, add) -> None:
    k = _branch_incidence(p, node, index, add)
    add(k, k, p.value, -1)


def _stamp_vcvs(p: Primitive, node, index, add) -> None:
    k = _branch_incidence(p, node, index, add)
    add(k, node(p.nodes[2]), p.value, -1)
    add(k, node(p.nodes[3]), p.value, 1)


def _stamp_cccs(p: Primitive, node, index, add) -> None:
    k = index[f"i:{p.control}"]
    add(node(p.nodes[0]), k, p.value, 1)
    add(node(p.nodes[1]), k, p.value, -1)


def _stamp_ccvs(p: Primitive, node, index, add) -> None:
    k = _branch_incidence(p, node, index, add)
    add(k, index[f"i:{p.control}"], p.value, -1)


def _stamp_open(p: Primitive, node, index, add) -> None:
    """An independent current source is open unless driven (it only enters b)."""


#: MNA stamp of each primitive kind.
STAMPS = {
    "Y": _stamp_admittance,
    "G": _stamp_vccs,
    "V": _stamp_voltage_source,
    "Z": _stamp_impedance,
    "E": _stamp_vcvs,
    "F": _stamp_cccs,
    "H": _stamp_ccvs,
    "I": _stamp_open,
}


# -- the memoised minor expansion --------------------------------------------------------


class CofactorSolver:
    """Determinant and cofactors of a sparse polynomial matrix by memoised minors.

    Parameters
    ----------
    ring : Ring
    size : int
    entries : mapping of (row, column) to polynomial
        Non-zero entries only.

    Examples
    --------
    >>> from symbias.linear.polys import make_ring
    >>> ring = make_ring(("a", "b"), "sympy")
    >>> a, b = ring.gens
    >>> solver = CofactorSolver(ring, 2, {(0, 0): a, (0, 1): b, (1, 0): b, (1, 1): a})
    >>> solver.det() == a**2 - b**2, solver.cofactor(0, 1) == -b
    (True, True)
    """

    def __init__(self, ring: Ring, size: int, entries: Mapping[tuple[int, int], Any]):
        self.ring = ring
        self.size = size
        self.full = (1 << size) - 1
        self.row_entries: list[dict[int, Any]] = [{} for _ in range(size)]
        self.col_entries: list[dict[int, Any]] = [{} for _ in range(size)]
        for (r, c), value in entries.items():
            if not ring.is_zero(value):
                self.row_entries[r][c] = value
                self.col_entries[c][r] = value
        self.row_masks = [sum(1 << c for c in row) for row in self.row_entries]
        self.col_masks = [sum(1 << r for r in col) for col in self.col_entries]
        self.memo: dict[tuple[int, int], Any] = {}
        self._one = ring.one

    def det(self):
        """Determinant of the whole matrix (``None`` when it is zero)."""
        return self.minor(self.full, self.full)

    def cofactor(self, row: int, col: int):
        """Signed cofactor ``(-1)**(row+col) * minor`` (``None`` when zero)."""
        value = self.minor(self.full & ~(1 << row), self.full & ~(1 << col))
        if value is None:
            return None
        return -value if (row + col) % 2 else value

    def minor(self, rows: int, cols: int):
        """Determinant of the sub-matrix on the open ``rows`` and ``cols`` bit masks."""
        if rows == 0:
            return self._one
        key = (rows, cols)
        memo = self.memo
        if key in memo:
            return memo[key]
        best_count, best_index, along_row = self.size + 1, -1, True
        for r in _bits(rows):
            count = (self.row_masks[r] & cols).bit_count()
            if count < best_count:
                best_count, best_index, along_row = count, r, True
                if count <= 1:
                    break
        if best_count > 1:
            for c in _bits(cols):
                count = (self.col_masks[c] & rows).bit_count()
                if count < best_count:
                    best_count, best_index, along_row = count, c, False
                    if count <= 1:
                        break
        total = None
        if best_count:
            if along_row:
                r = best_index
                rank_r = (rows & ((1 << r) - 1)).bit_count()
                rest_rows = rows & ~(1 << r)
                for c, value in self.row_entries[r].items():
                    if not (cols >> c) & 1:
                        continue
                    sub = self.minor(rest_rows, cols & ~(1 << c))
                    if sub is None:
                        continue
                    term = value * sub
                    if (rank_r + (cols & ((1 << c) - 1)).bit_count()) % 2:
                        term = -term
                    total = term if total is None else total + term
            else:
                c = best_index
                rank_c = (cols & ((1 << c) - 1)).bit_count()
                rest_cols = cols & ~(1 << c)
                for r, value in self.col_entries[c].items():
                    if not (rows >> r) & 1:
                        continue
                    sub = self.minor(rows & ~(1 << r), rest_cols)
                    if sub is None:
                        continue
                    term = value * sub
                    if (rank_c + (rows & ((1 << r) - 1)).bit_count()) % 2:
                        term = -term
                    total = term if total is None else total + term
            if total is not None and self.ring.is_zero(total):
                total = None
        memo[key] = total
        return total


def _bits(mask: int):
    while mask:
        low = mask & -mask
        yield low.bit_length() - 1
        mask ^= low


@dataclass(frozen=True)
class Solution:
    """Numerator and denominator of a solved :class:`LinearProblem`.

    ``value = numerator / denominator`` with both polynomials in ``ring``,
    whose generators are described by ``variables``.
    """

    ring: Ring
    variables: tuple[RingVariable, ...]
    numerator: Any
    denominator: Any
    states: int

    def __reduce__(self):
        # python-flint polynomials do not pickle: send their terms, rebuild them in the unpickled ring
        packed = (self.ring.pack(self.numerator), self.ring.pack(self.denominator))
        return (_rebuild_solution, (self.ring, self.variables, packed, self.states))


def _rebuild_solution(ring: Ring, variables, packed, states: int) -> Solution:
    """Unpickle a :class:`Solution` (see :meth:`Solution.__reduce__`)."""
    return Solution(ring, variables, ring.unpack(packed[0]), ring.unpack(packed[1]), states)


def build_system(network: LinearNetwork, backend: str | None = None):
    """Ring, generator meanings and polynomial MNA entries of a network."""
    raw = stamp(network)
    values = [value for contributions in raw.values() for value, _ in contributions]
    variables = encode(values)
    ring = make_ring(tuple(v.name for v in variables), backend)
    cache: dict[Expr, Any] = {}
    entries = {}
    for key, contributions in raw.items():
        total = ring.zero
        for value, sign in contributions:
            if value not in cache:
                cache[value] = _to_poly(value, ring, variables)
            total = total + cache[value] if sign > 0 else total - cache[value]
        if not ring.is_zero(total):
            entries[key] = total
    return ring, variables, entries


def expanded_system(network: LinearNetwork, backend: str | None = None):
    """Unknown index, ring, generator meanings, cofactor solver and determinant of a network's MNA system.

    The size limits are checked before anything is expanded, so every exact
    solve (a single transfer, or all noise transfers at once) stops at the same
    bounds.

    Raises
    ------
    LimitError
        When the system or its determinant is over a documented limit.
    AnalysisError
        When ``det(A)`` is zero, naming the likely cause.
    """
    labels = unknowns(network)
    check_size(network, len(labels))
    ring, variables, entries = build_system(network, backend)
    check_terms(CofactorSolver, ring, entries, len(labels), network.path)
    solver = CofactorSolver(ring, len(labels), entries)
    det = solver.det()
    if det is None:
        reason, line = _singular_reason(network, entries, labels)
        raise AnalysisError(reason, path=network.path, line=line)
    return {label: i for i, label in enumerate(labels)}, ring, variables, solver, det


def transfer_numerator(ring: Ring, solver: "CofactorSolver", index: Mapping[str, int],
                       rhs: Sequence[tuple[str, Any]], observe: Sequence[tuple[str, Any]]):
    """The numerator of ``c^T A^-1 b``: the cofactors of the driven and observed unknowns, weighted."""
    numerator = ring.zero
    for out_label, c in observe:
        for in_label, b in rhs:
            cofactor = solver.cofactor(index[in_label], index[out_label])
            if cofactor is not None:
                numerator = numerator + cofactor * (c * b)
    return numerator


def solve(problem: LinearProblem, backend: str | None = None) -> Solution:
    """Solve ``c^T A^-1 b`` exactly as numerator and denominator polynomials.

    Raises
    ------
    AnalysisError
        When ``det(A)`` is zero, naming the likely cause.
    """
    network = problem.network
    labels = set(unknowns(network))
    for label, _ in problem.rhs + problem.observe:
        if label not in labels:
            raise AnalysisError(f"{label.split(':', 1)[1]!r} is not a node or source of the network (ground?)",
                                path=network.path)
    index, ring, variables, solver, det = expanded_system(network, backend)
    numerator = transfer_numerator(ring, solver, index, problem.rhs, problem.observe)
    return Solution(ring, variables, numerator, det, len(solver.memo))


def _singular_reason(network: LinearNetwork, entries, labels) -> tuple[str, int | None]:
    """Explain a zero determinant and point at the first element touching the culprit."""
    import networkx as nx

    def line_of(nodes: set[str]) -> int | None:
        for p in network.primitives:
            if p.line and any(n in nodes for n in p.nodes):
                return p.line
        return None

    size = len(labels)
    used_rows = {r for r, _ in entries}
    used_cols = {c for _, c in entries}
    for i, label in enumerate(labels):
        if i not in used_rows or i not in used_cols:
            name = label[2:]
            if label.startswith("v:"):
                return (f"the network is singular: node {name!r} has no small-signal connection (floating)",
                        line_of({name}))
            source = next((p for p in network.primitives if p.name == name), None)
            return (f"the network is singular: source {name!r} has no small-signal connection (floating)",
                    source.line if source else None)
    graph = nx.Graph()
    graph.add_nodes_from(range(size))
    graph.add_node(-1)  # ground
    node_index = {label[2:]: i for i, label in enumerate(labels) if label.startswith("v:")}
    for p in network.primitives:
        if p.kind == "I":
            continue
        ends = [node_index.get(n, -1) for n in p.nodes[:2]]
        graph.add_edge(*ends)
    floating = {labels[i][2:] for comp in nx.connected_components(graph) if -1 not in comp for i in comp
                if i >= 0 and labels[i].startswith("v:")}
    if floating:
        return ("the network is singular: node(s) " + ", ".join(sorted(floating))
                + " float (no small-signal path to ground once sources are zeroed)", line_of(floating))
    return ("the network is singular (det = 0): look for a loop of voltage sources, a node fed only by current "
            "sources, or a device whose small-signal model leaves a node undetermined", None)
