"""An independent numeric nodal solver, written for the tests only.

It re-derives, from the documented conventions alone, what the engine
computes: it expands a parsed :class:`~symbias.circuit.Circuit` into its own
hybrid-pi branch list, builds a numeric modified-nodal matrix with numpy and
solves it.  It deliberately imports nothing from ``symbias.linear.network``,
``symbias.linear.mna`` or ``symbias.linear.numeric``, so an agreement between the two is
evidence and not a tautology.

Conventions followed (as documented in ``symbias/network.py``,
``symbias/devices/small_signal.py`` and ``symbias/analyses.py``):

* BJT (c b e [s]): ``rpi`` b'-e', a VCCS ``gm*v(b',e')`` from c to e', ``ro``
  c-e'; with ``extras`` ``rb`` b-b', ``re`` e-e', ``rmu`` b'-c; with
  ``capacitances`` ``cpi`` b'-e', ``cmu`` b'-c, ``ccs`` c-substrate (ground when
  there is no 4th node).
* MOS (d g s b): ``gm*v(g,s)`` and ``gmb*v(b,s)`` from d to s (gmb only when
  b != s), ``ro`` d-s; with ``capacitances`` cgs, cgd, cdb, csb.
* Symbols ``<parameter>_<device>``; matched devices share ``<parameter>``
  (one group) or ``<parameter>_<group>`` (several groups); a matched device's
  multiplier ``m*area`` scales conductances and capacitances up and
  resistances down; the ``beta`` option writes rpi as ``beta/(m*gm)``.
* Independent sources are zeroed (V shorted, I open) unless driven.
* SPICE directions: ``I n+ n-`` delivers its current into ``n-``; a VCCS or
  CCCS current flows from ``n+`` through the element to ``n-``; a voltage
  source's branch current flows from ``n+`` through the source to ``n-``.
* Output currents (``docs/conventions.md``) count the way the transistor
  whose collector or drain is at one node of the output source drives them:
  into that node for npn/nmos (a sink), out of it for pnp/pmos (a source).
  Without such a transistor at exactly one of the two nodes, the output
  current is minus the branch current (out of the ``+`` terminal).

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist("divider\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n")
>>> float(reference_value(c, "output_resistance", ("a",), {"RA": 2.0, "RB": 2.0}).real)
1.0
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Any, Mapping

import mpmath
import numpy as np
import sympy

__all__ = [
    "Branch",
    "ReferenceSingular",
    "reference_branches",
    "reference_value",
    "output_sign",
    "nodal_entries",
    "reference_symbols",
    "random_values",
    "GROUND",
]

GROUND = "0"


class ReferenceSingular(ArithmeticError):
    """The reference network has no unique solution (or the quantity is undefined)."""


@dataclass(frozen=True)
class Branch:
    """One linear branch of the reference expansion.

    ``kind`` is a SPICE-like letter with a physical value: ``R`` (resistance,
    ohm), ``C`` (capacitance), ``L`` (inductance), ``G`` (VCCS, A/V), ``E``
    (VCVS), ``F`` (CCCS, ``control`` names the V branch), ``H`` (CCVS), ``V``
    and ``I`` (independent sources, zeroed unless driven).
    """

    kind: str
    name: str
    nodes: tuple[str, ...]
    value: sympy.Expr
    control: str | None = None


def _sympy_value(value: Any) -> sympy.Expr:
    """A netlist value as sympy reads its text (every identifier a plain symbol)."""
    from sympy.parsing.sympy_parser import parse_expr

    return parse_expr(str(value), local_dict={n: sympy.Symbol(n) for n in value.names})


def _option(options: Any, name: str, default: Any) -> Any:
    """Read an option from any object with attributes (or None for defaults)."""
    return default if options is None else getattr(options, name, default)


def _groups(circuit, options) -> dict[str, str]:
    """Device key -> group label, per the documented matching rule."""
    match = _option(options, "match", False)
    if not match:
        return {}
    wanted = None if match is True else {str(m).lower() for m in match}
    groups: dict[str, str] = {}
    for label, members in circuit.groups.items():
        if wanted is None or label.lower() in wanted:
            for member in members:
                groups[member.lower()] = label
    for element in circuit.elements:
        if element.kind not in ("Q", "M") or element.name.lower() in groups:
            continue
        model_key = (element.model or "").lower()
        if wanted is None or model_key in wanted:
            groups[element.name.lower()] = circuit.models[model_key].name
    return groups


def _device_parameters(element, group: str | None, single: bool, beta: bool):
    """Functions giving the sympy value of each device parameter."""

    def name(parameter: str) -> sympy.Symbol:
        if group is None:
            return sympy.Symbol(f"{parameter}_{element.name}")
        return sympy.Symbol(parameter if single else f"{parameter}_{group}")

    m = sympy.Integer(1)
    if group is not None:
        for key in ("m", "area"):
            if key in element.params:
                m = m * _sympy_value(element.params[key])

    def conductance(parameter: str) -> sympy.Expr:
        return name(parameter) * m

    def resistance(parameter: str) -> sympy.Expr:
        return name(parameter) / m

    def rpi() -> sympy.Expr:
        return name("beta") / (name("gm") * m) if beta else resistance("rpi")

    return conductance, resistance, rpi


def _bjt(element, params, options) -> list[Branch]:
    conductance, resistance, rpi = params
    c, b, e = element.nodes[:3]
    sub = element.nodes[3] if len(element.nodes) == 4 else GROUND
    tag = element.name
    bi, ei = b, e
    out: list[Branch] = []
    if _option(options, "extras", False) or _option(options, "parasitics", ()):
        bi, ei = f"{tag}:b'", f"{tag}:e'"
        out += [
            Branch("R", f"{tag}.rb", (b, bi), resistance("rb")),
            Branch("R", f"{tag}.re", (e, ei), resistance("re")),
            Branch("R", f"{tag}.rmu", (bi, c), resistance("rmu")),
        ]
    out.append(Branch("R", f"{tag}.rpi", (bi, ei), rpi()))
    out.append(Branch("G", f"{tag}.gm", (c, ei, bi, ei), conductance("gm")))
    if _option(options, "ro", True):
        out.append(Branch("R", f"{tag}.ro", (c, ei), resistance("ro")))
    if _option(options, "capacitances", False):
        out.append(Branch("C", f"{tag}.cpi", (bi, ei), conductance("cpi")))
        out.append(Branch("C", f"{tag}.cmu", (bi, c), conductance("cmu")))
        out.append(Branch("C", f"{tag}.ccs", (c, sub), conductance("ccs")))
    return out


def _mos(element, params, options) -> list[Branch]:
    conductance, resistance, _ = params
    d, g, s, b = element.nodes
    tag = element.name
    out = [Branch("G", f"{tag}.gm", (d, s, g, s), conductance("gm"))]
    if _option(options, "gmb", True) and b != s:
        out.append(Branch("G", f"{tag}.gmb", (d, s, b, s), conductance("gmb")))
    if _option(options, "ro", True):
        out.append(Branch("R", f"{tag}.ro", (d, s), resistance("ro")))
    if _option(options, "capacitances", False):
        for part, pair in (("cgs", (g, s)), ("cgd", (g, d)), ("cdb", (d, b)), ("csb", (s, b))):
            out.append(Branch("C", f"{tag}.{part}", pair, conductance(part)))
    return out


def reference_branches(circuit, options: Any = None) -> tuple[Branch, ...]:
    """Expand a circuit into reference branches (devices replaced by their models).

    Branches whose two ends are one node are dropped: they carry no current
    (a shorted resistor, capacitor or a VCCS sensing a zero voltage).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nV1 c 0 1\\nI1 0 b 1m\\nQ1 c b 0 QN\\n.model QN npn\\n")
    >>> [(b.kind, str(b.value)) for b in reference_branches(c) if b.name.startswith("Q1")]
    [('R', 'rpi_Q1'), ('G', 'gm_Q1'), ('R', 'ro_Q1')]
    """
    groups = _groups(circuit, options)
    single = len(set(groups.values())) == 1
    beta = bool(_option(options, "beta", False))
    symbolic = bool(_option(options, "symbolic_passives", False))
    out: list[Branch] = []
    for element in circuit.elements:
        kind = element.kind
        if kind in ("R", "C", "L"):
            value = _sympy_value(element.value)
            if symbolic and value.is_Number:
                value = sympy.Symbol(element.name)
            if kind == "C" and value == 0:
                continue
            out.append(Branch(kind, element.name, element.nodes, value))
        elif kind in ("V", "I"):
            out.append(Branch(kind, element.name, element.nodes, sympy.Integer(0)))
        elif kind in ("G", "E"):
            out.append(Branch(kind, element.name, element.nodes, _sympy_value(element.value)))
        elif kind in ("F", "H"):
            control = next((e.name for e in circuit.elements if e.name.lower() == element.control.lower()), None)
            if control is None:  # e.g. the controlling source was removed to open a port
                raise ReferenceSingular(f"{element.name}: controlling source {element.control} is absent")
            out.append(Branch(kind, element.name, element.nodes, _sympy_value(element.value), control))
        elif kind in ("Q", "M"):
            params = _device_parameters(element, groups.get(element.name.lower()), single, beta)
            out += _bjt(element, params, options) if kind == "Q" else _mos(element, params, options)
        else:  # pragma: no cover - the reader knows no other kinds
            raise ValueError(f"reference solver: unsupported element {element.name}")
    return tuple(b for b in out if b.kind in ("V", "I", "E", "H", "L") or not _inert(b))


def _inert(branch: Branch) -> bool:
    if branch.nodes[0] == branch.nodes[1]:
        return True
    return branch.kind == "G" and branch.nodes[2] == branch.nodes[3]


def reference_symbols(circuit, options: Any = None) -> tuple[str, ...]:
    """Names of every symbol the reference expansion uses (``s`` included when reactive).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> reference_symbols(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 {RE/2}\\nC1 a 0 1p\\n"))
    ('RE', 's')
    """
    names: set[str] = set()
    for branch in reference_branches(circuit, options):
        names |= {s.name for s in branch.value.free_symbols}
        if branch.kind in ("C", "L"):
            names.add("s")
    return tuple(sorted(names))


def _uniform(rng: np.random.Generator, low: float, high: float, size: int) -> np.ndarray:
    return 10 ** rng.uniform(np.log10(low), np.log10(high), size)


#: Device parameters drawn from a shared bias point: gm = I/VT (BJT) or 2I/Vov (MOS),
#: ro = VA/I, rpi = beta/gm, gmb = chi*gm.  Keeping gm*ro physical (VA/VT is a few
#: thousand at most) keeps the random points realistic (common practice).
_DEVICE_PARAMETERS = ("gm", "gmb", "rpi", "ro", "rmu", "rb", "re", "beta", "cpi", "cmu", "ccs", "cgs", "cgd", "cdb", "csb")

#: Ranges (low, high) of the non-device symbols, by lower-case name prefix.
_RANGES = (("r", (1e2, 1e5)), ("c", (1e-13, 1e-10)), ("l", (1e-6, 1e-3)))


def _device_values(parameters, rng: np.random.Generator, size: int) -> dict[str, np.ndarray]:
    current = _uniform(rng, 1e-6, 1e-3, size)
    gm = current / _uniform(rng, 0.0258, 0.25, size)  # VT for a BJT up to Vov/2 for a MOS
    beta = _uniform(rng, 50.0, 300.0, size)
    table = {
        "gm": gm,
        "gmb": gm * _uniform(rng, 0.1, 0.3, size),
        "ro": _uniform(rng, 5.0, 100.0, size) / current,
        "rpi": beta / gm,
        "beta": beta,
        "rmu": beta * _uniform(rng, 5.0, 100.0, size) / current * 10,
        "rb": _uniform(rng, 20.0, 500.0, size),
        "re": _uniform(rng, 1.0, 20.0, size),
    }
    return {p: table.get(p, _uniform(rng, 1e-15, 1e-12, size)) for p in parameters}


def random_values(names, rng: np.random.Generator, size: int = 4) -> dict[str, np.ndarray]:
    """Random positive values for symbols, ``size`` points each; ``s`` is ``2j*pi*f``.

    Device symbols (``gm_Q1``, ``ro_Q1``, or matched ``gm``, ``ro``) of one
    device or group share a random bias point, so their ratios are physical;
    passives go by prefix (``R``, ``C``, ``L``); anything else (controlled-source
    gains) lies in [0.2, 5].

    Examples
    --------
    >>> v = random_values(["gm_Q1", "ro_Q1", "s"], np.random.default_rng(0), 3)
    >>> v["gm_Q1"].shape, v["s"].dtype.kind, bool(np.all(v["gm_Q1"] * v["ro_Q1"] < 4000))
    ((3,), 'c', True)
    """
    out: dict[str, np.ndarray] = {}
    devices: dict[str, list[tuple[str, str]]] = {}
    for name in names:
        parameter, _, owner = name.partition("_")
        if parameter in _DEVICE_PARAMETERS:
            devices.setdefault(owner, []).append((parameter, name))
        elif name == "s":
            out[name] = 2j * np.pi * _uniform(rng, 1e3, 1e9, size)
        else:
            low, high = next((r for prefix, r in _RANGES if name.lower().startswith(prefix)), (0.2, 5.0))
            out[name] = _uniform(rng, low, high, size)
    for owner, members in sorted(devices.items()):
        drawn = _device_values([p for p, _ in members], rng, size)
        out.update({name: drawn[p] for p, name in members})
    return out


# -- numbers -------------------------------------------------------------------------
#
# The reference assembles and solves in 40-digit arithmetic (mpmath).  A
# high-gain cascode is ill-conditioned as a matrix (entries such as gm + 1/ro
# nearly cancel) while its result, a sum of positive terms, is not: a float64
# solve loses up to ~1e-7 there, which would blur a 1e-9 comparison.

#: Decimal digits of the reference arithmetic.
DIGITS = 40


@lru_cache(maxsize=4096)
def _compiled(expr: sympy.Expr):
    names = tuple(sorted(s.name for s in expr.free_symbols))
    return names, sympy.lambdify([sympy.Symbol(n) for n in names], expr, modules="mpmath")


def _numeric(expr: sympy.Expr, point: Mapping[str, Any]) -> Any:
    """Evaluate a (small) sympy expression at one point of mpmath numbers."""
    names, function = _compiled(expr)
    missing = [n for n in names if n not in point]
    if missing:
        raise KeyError(f"reference solver: no value for {', '.join(missing)}")
    return function(*[point[n] for n in names])


def _unknowns(branches, extra_nodes=()) -> tuple[list[str], list[str]]:
    nodes: dict[str, None] = {}
    for branch in branches:
        for node in branch.nodes:
            if node != GROUND:
                nodes.setdefault(node, None)
    for node in extra_nodes:
        if node != GROUND:
            nodes.setdefault(node, None)
    currents = [b.name for b in branches if b.kind in ("V", "E", "H", "L")]
    return list(nodes), currents


def nodal_entries(branches, point: Mapping[str, Any], extra_nodes=()):
    """Non-zero MNA entries at one numeric point (any number type that does + - * /).

    Rows of node unknowns are KCL (sum of the currents leaving the node
    through branches); rows of branch unknowns are the branch's voltage law.

    Returns
    -------
    entries : dict of (row, column) to number
    labels : list of str
        ``v:<node>`` then ``i:<branch>``.

    Examples
    --------
    >>> b = (Branch("R", "R1", ("a", "0"), sympy.Symbol("RA")), Branch("V", "V1", ("a", "0"), sympy.Integer(0)))
    >>> nodal_entries(b, {"RA": 4.0})
    ({(0, 0): 0.25, (0, 1): 1, (1, 0): 1}, ['v:a', 'i:V1'])
    """
    nodes, currents = _unknowns(branches, extra_nodes)
    labels = [f"v:{n}" for n in nodes] + [f"i:{c}" for c in currents]
    index = {label: i for i, label in enumerate(labels)}
    s = point.get("s", 0)
    entries: dict[tuple[int, int], Any] = {}

    def row(node: str) -> int | None:
        return None if node == GROUND else index[f"v:{node}"]

    def add(r: int | None, c: int | None, value) -> None:
        if r is not None and c is not None:
            entries[(r, c)] = entries.get((r, c), 0) + value

    def admittance(a: str, b: str, y) -> None:
        ra, rb = row(a), row(b)
        add(ra, ra, y)
        add(rb, rb, y)
        add(ra, rb, -y)
        add(rb, ra, -y)

    def branch_current(branch: Branch) -> int:
        k = index[f"i:{branch.name}"]
        a, b = row(branch.nodes[0]), row(branch.nodes[1])
        add(a, k, 1)  # the branch current leaves n+ ...
        add(b, k, -1)  # ... and enters n-
        add(k, a, 1)  # voltage law: v(n+) - v(n-) ...
        add(k, b, -1)
        return k

    for branch in branches:
        if branch.kind in ("V", "I"):
            if branch.kind == "V":
                branch_current(branch)
            continue  # an I branch is open unless driven: it only enters the right-hand side
        value = _numeric(branch.value, point)
        if branch.kind == "R":
            admittance(*branch.nodes, 1 / value)
        elif branch.kind == "C":
            admittance(*branch.nodes, s * value)
        elif branch.kind == "L":
            k = branch_current(branch)
            add(k, k, -s * value)  # v(n+) - v(n-) - s L i = 0
        elif branch.kind == "G":
            a, b, cp, cm = (row(n) for n in branch.nodes)
            for r, sign in ((a, 1), (b, -1)):
                add(r, cp, sign * value)
                add(r, cm, -sign * value)
        elif branch.kind == "E":
            k = branch_current(branch)
            add(k, row(branch.nodes[2]), -value)
            add(k, row(branch.nodes[3]), value)
        elif branch.kind == "F":
            k = index[f"i:{branch.control}"]
            add(row(branch.nodes[0]), k, value)
            add(row(branch.nodes[1]), k, -value)
        elif branch.kind == "H":
            k = branch_current(branch)
            add(k, index[f"i:{branch.control}"], -value)
    return entries, labels


def _points(values: Mapping[str, Any]) -> tuple[tuple[int, ...], list[dict[str, Any]]]:
    """Split broadcast arrays of values into per-point dicts of mpmath numbers."""
    arrays = {k: np.asarray(v) for k, v in values.items()}
    shape = np.broadcast_shapes(*(a.shape for a in arrays.values())) if arrays else ()
    flat = {k: np.broadcast_to(a, shape).ravel() for k, a in arrays.items()}
    count = int(np.prod(shape)) if shape else 1
    points = []
    for i in range(count):
        point = {}
        for k, a in flat.items():
            x = complex(a[i]) if np.iscomplexobj(a) else float(a[i])
            point[k] = mpmath.mpc(x) if isinstance(x, complex) else mpmath.mpf(x)
        points.append(point)
    return shape, points


# -- quantities ------------------------------------------------------------------------


def _node(circuit, text: str) -> str:
    name = text.strip().lower()
    name = GROUND if name in ("0", "gnd") else name
    if name not in circuit.nodes:
        raise KeyError(f"reference solver: no node {text!r}")
    return name


def _find(circuit, name: str):
    for element in circuit.elements:
        if element.name.lower() == name.strip().lower():
            return element
    return None


def output_sign(circuit, source) -> int:
    """Output current = sign * branch current of ``source``, by the rule of docs/conventions.md."""
    sides = []
    for node in source.nodes[:2]:
        if node == GROUND:
            continue
        drivers = [e for e in circuit.elements if e.kind in ("Q", "M") and e.nodes[0] == node]
        if drivers:
            sides.append((node, drivers[0]))
    if len(sides) != 1:
        return -1
    node, device = sides[0]
    sources = circuit.model_of(device).type in ("pnp", "pmos")
    into_load = 1 if node == source.nodes[0] else -1  # the branch current enters at the + node
    return into_load if sources else -into_load


def _pair(circuit, text: str) -> tuple[str, str]:
    """An output voltage: an element's terminals, a node, or ``"a,b"``."""
    if "," in text:
        a, b = text.split(",", 1)
        return _node(circuit, a), _node(circuit, b)
    element = _find(circuit, text)
    if element is not None:
        return element.nodes[0], element.nodes[1]
    return _node(circuit, text), GROUND


def _solve_point(branches, point, extra, drive, observe, what: str, precision: str) -> complex:
    entries, labels = nodal_entries(branches, point, extra)
    index = {label: i for i, label in enumerate(labels)}
    size = len(labels)
    rough = np.zeros((size, size), dtype=complex)
    for (r, c), value in entries.items():
        rough[r, c] = complex(value)
    # a structural singularity shows at any random point: the rank of a float copy is enough
    if size == 0 or np.linalg.matrix_rank(rough) < size:
        raise ReferenceSingular(f"reference matrix for {what} is singular")
    wanted = [(index[label], c) for label, c in drive.items() if label != f"v:{GROUND}"]
    seen = [(index[label], c) for label, c in observe.items() if label != f"v:{GROUND}"]
    if precision == "float64":
        rhs = np.zeros(size, dtype=complex)
        for i, c in wanted:
            rhs[i] += c
        x = np.linalg.solve(rough, rhs)
        return complex(sum(c * x[i] for i, c in seen))
    matrix = mpmath.matrix(size, size)
    for (r, c), value in entries.items():
        matrix[r, c] = value
    rhs = mpmath.matrix(size, 1)
    for i, c in wanted:
        rhs[i, 0] += c
    x = mpmath.lu_solve(matrix, rhs)
    total = sum((c * x[i, 0] for i, c in seen), mpmath.mpc(0))
    # an exact zero (e.g. a node the drive cannot reach) comes out as rounding noise
    scale = max((abs(x[i, 0]) for i in range(size)), default=0)
    if abs(total) <= scale * mpmath.mpf(10) ** (10 - DIGITS):
        return 0j
    return complex(total)


def reference_value(
    circuit,
    quantity: str,
    args: tuple[str, ...],
    values: Mapping[str, Any],
    options: Any = None,
    *,
    precision: str = "high",
):
    """One small-signal quantity of ``circuit`` at numeric values, by the reference solve.

    Parameters
    ----------
    circuit : Circuit
    quantity : str
        ``output_resistance`` (args: port), ``current_gain``,
        ``transconductance`` (args: output V source, input source),
        ``voltage_gain``, ``transimpedance`` (args: output node/pair, input source).
    args : tuple of str
    values : mapping of symbol name to number or array (``s`` for the Laplace variable)
    options : object with SmallSignalOptions-like attributes, optional
    precision : {"high", "float64"}
        ``high`` assembles and solves in :data:`DIGITS`-digit arithmetic (the
        reference); ``float64`` assembles and solves the same matrix in plain
        double precision, to measure what a double-precision solve can attain.

    Returns
    -------
    ndarray
        Complex, with the broadcast shape of the values.

    Raises
    ------
    ReferenceSingular
        When the reference matrix is singular (rank-deficient).
    """
    drive: dict[str, float] = {}  # label -> right-hand side entry
    observe: dict[str, float] = {}
    removed = None
    if quantity == "output_resistance":
        (port,) = args
        element = _find(circuit, port) if "," not in port else None
        if element is not None:
            removed = element.name
            a, b = element.nodes[0], element.nodes[1]
        else:
            a, b = _pair(circuit, port)
            # documented convention: a node port held by one independent voltage source is seen with it removed
            held = [e for e in circuit.elements if e.kind == "V" and {e.nodes[0], e.nodes[1]} == {a, b}]
            if len(held) == 1:
                removed = held[0].name
        drive = {f"v:{a}": 1.0, f"v:{b}": -1.0}  # a unit test current into a, out of b
        observe = {f"v:{a}": 1.0, f"v:{b}": -1.0}
    else:
        out, source = args
        src = _find(circuit, source)
        if quantity in ("current_gain", "transimpedance"):
            plus, minus = src.nodes
            drive = {f"v:{minus}": 1.0, f"v:{plus}": -1.0}  # delivered into n-
        else:
            drive = {f"i:{src.name}": 1.0}  # unit source voltage
        if quantity in ("current_gain", "transconductance"):
            element = _find(circuit, out)
            observe = {f"i:{element.name}": output_sign(circuit, element)}
        else:
            a, b = _pair(circuit, out)
            observe = {f"v:{a}": 1.0, f"v:{b}": -1.0}
    reduced = circuit.without(removed) if removed else circuit
    branches = reference_branches(reduced, options)
    extra = [label[2:] for label in list(drive) + list(observe) if label.startswith("v:")]
    shape, points = _points(values)
    out = np.zeros(len(points), dtype=complex)
    with mpmath.workdps(DIGITS):
        for n, point in enumerate(points):
            if precision == "float64":
                point = {k: complex(v) if isinstance(v, mpmath.mpc) else float(v) for k, v in point.items()}
            out[n] = _solve_point(branches, point, extra, drive, observe, f"{quantity}{args}", precision)
    return out.reshape(shape)
