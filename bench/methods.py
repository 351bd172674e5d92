"""Candidate solve methods of the design notes, each from the same polynomial MNA matrix to both results.

Worker code of ``bench/derive.py`` part (c): the engine's memoised minor
expansion (python-flint and sympy rings), sympy ``DomainMatrix`` ``det`` and
``solve_den`` and, when installed, symengine LU and ``det`` followed by sympy
``cancel``.  Each runs in its own process (``derive.py --worker``).
"""

from __future__ import annotations

from fractions import Fraction

from common import _exact, measure, peak_mb, ring_value, stack_netlist, sympy_value

__all__ = ["matrix_task", "worker_method"]


def matrix_task(n: int) -> dict:
    """The stack's polynomial MNA matrix as symbias builds it, in a JSON-able form."""
    import warnings

    from symbias.errors import CircuitWarning
    from symbias.linear.mna import build_system, unknowns
    from symbias.netlist import parse_netlist
    from symbias.linear.network import expand

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CircuitWarning)
        network = expand(parse_netlist(stack_netlist(n)))
    ring, variables, entries = build_system(network, "sympy")
    labels = unknowns(network)
    return {
        "size": len(labels),
        "names": [f"x{i}" for i in range(len(variables))],
        "meaning": [[v.symbol, v.power] for v in variables],
        "entries": [[r, c, [[list(e), str(q)] for e, q in ring.terms(p)]] for (r, c), p in entries.items()],
        "input": labels.index("v:n1"),
        "output": labels.index(f"v:n{n}"),
    }


def _generator_values(matrix: dict, point: dict[str, float]) -> dict[str, Fraction]:
    out = {}
    for name, (symbol, power) in zip(matrix["names"], matrix["meaning"]):
        value = _exact(point[symbol])
        out[name] = value if power == 1 else 1 / value
    return out


def _sympy_matrix(matrix: dict):
    import sympy

    gens = sympy.symbols(matrix["names"])
    m = sympy.zeros(matrix["size"], matrix["size"])
    for r, c, terms in matrix["entries"]:
        m[r, c] = sympy.Add(*[sympy.Rational(q) * sympy.Mul(*[g**e for g, e in zip(gens, exps)]) for exps, q in terms])
    return gens, m


def worker_method(task: dict) -> dict:
    """One candidate solve method, from the polynomial MNA matrix to Rout and transfer ratios.

    Every method yields (numerator, denominator) of Rout = (A^-1)[out,out] and of
    the transfer (A^-1)[out,in] = C[in,out]/det, as ring polynomials or sympy expressions.
    """
    import sympy

    matrix, method = task["matrix"], task["method"]
    if method in ("minor-flint", "minor-sympy"):
        times, results, ring = _minor_method(matrix, method.split("-")[1], task["budget"])
        terms = [ring.nterms(results[0][0]), ring.nterms(results[0][1])]
        evaluate = ring_value
    else:
        make = _domainmatrix_work if method.startswith("domainmatrix") else _symengine_work
        times, results = make(matrix, method, task["budget"])
        terms = [len(sympy.Add.make_args(sympy.expand(e))) for e in results[0]]
        evaluate = sympy_value
    values: dict[str, list[float]] = {"rout": [], "transfer": []}
    for point in task["points"]:
        exact = _generator_values(matrix, point)
        for key, (num, den) in zip(("rout", "transfer"), results):
            values[key].append(float(evaluate(num, matrix["names"], exact) / evaluate(den, matrix["names"], exact)))
    return {"times": times, "values": values, "terms": [terms], "peak_mb": peak_mb()}


def _minor_method(matrix: dict, backend: str, budget: float):
    from symbias.linear.mna import CofactorSolver
    from symbias.linear.polys import make_ring

    size, i_in, i_out = matrix["size"], matrix["input"], matrix["output"]
    ring = make_ring(tuple(matrix["names"]), backend)
    entries = {(r, c): ring.from_terms([(tuple(e), Fraction(q)) for e, q in terms])
               for r, c, terms in matrix["entries"]}

    def work():
        solver = CofactorSolver(ring, size, entries)
        det = solver.det()
        return (solver.cofactor(i_out, i_out), det), (solver.cofactor(i_in, i_out), det)

    times, results = measure(work, budget)
    return times, results, ring


def _keep(size: int, drop: int) -> list[int]:
    return [i for i in range(size) if i != drop]


def _domainmatrix_work(matrix: dict, method: str, budget: float):
    import sympy
    from sympy.polys.matrices import DomainMatrix

    size, i_in, i_out = matrix["size"], matrix["input"], matrix["output"]
    sign = (-1) ** (i_in + i_out)
    gens, m = _sympy_matrix(matrix)
    domain = sympy.ZZ[tuple(gens)]
    dm = DomainMatrix.from_Matrix(m).convert_to(domain)
    if method == "domainmatrix-det":

        def work():
            det = dm.det()
            c_out = dm.extract(_keep(size, i_out), _keep(size, i_out)).det()
            c_tr = dm.extract(_keep(size, i_in), _keep(size, i_out)).det() * sign
            return (c_out, det), (c_tr, det)

    else:
        units = sympy.Matrix(size, 2, lambda r, c: 1 if r == (i_out, i_in)[c] else 0)
        b = DomainMatrix.from_Matrix(units).convert_to(domain)

        def work():
            xnum, xden = dm.solve_den(b)
            return (xnum[i_out, 0].element, xden), (xnum[i_out, 1].element, xden)

    times, raw = measure(work, budget)
    return times, tuple((domain.to_sympy(a), domain.to_sympy(b)) for a, b in raw)


def _symengine_work(matrix: dict, method: str, budget: float):
    import symengine
    import sympy

    size, i_in, i_out = matrix["size"], matrix["input"], matrix["output"]
    sign = (-1) ** (i_in + i_out)
    _, m = _sympy_matrix(matrix)
    se_m = symengine.Matrix(m.tolist())
    if method == "symengine-lu":
        units = symengine.Matrix([[int(r == i_out), int(r == i_in)] for r in range(size)])

        def work():
            x = se_m.LUsolve(units)
            return tuple(sympy.fraction(sympy.cancel(sympy.together(sympy.sympify(x[i_out, k])))) for k in (0, 1))

    else:

        def minor_det(rows: list[int], cols: list[int]):
            return symengine.Matrix([[se_m[r, c] for c in cols] for r in rows]).det()

        def work():
            det = sympy.sympify(se_m.det())
            c_out = sympy.sympify(minor_det(_keep(size, i_out), _keep(size, i_out)))
            c_tr = sympy.sympify(minor_det(_keep(size, i_in), _keep(size, i_out))) * sign
            return sympy.fraction(sympy.cancel(c_out / det)), sympy.fraction(sympy.cancel(c_tr / det))

    return measure(work, budget)
