"""The polynomial evaluation route: exact polynomials evaluated by straight-line numpy programs.

Part of :mod:`symbias.formula` (the evaluation routes).  A polynomial is
evaluated by a straight-line program over numpy arrays, built once per
formula by greedy multivariate Horner factoring: the generator that occurs in
most terms is pulled out, ``p = x*q + r``, and q and r are factored in turn.
Circuit results are nearly multilinear, so this removes most multiplications
(a 164-term result needs about 390 array operations instead of about 1,500).
The program runs on blocks of points small enough to stay in the processor
cache, which matters as much as the operation count.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..linear.polys import TermColumns

__all__ = ["Program", "horner_program", "run_program", "evaluate_ratio"]

#: Points evaluated per block by the polynomial route.
_BLOCK = 16_384

# Instruction codes of a program (a stack machine; the tree has no sharing, so
# the stack never grows beyond the factoring depth).
_PUSH, _MUL_GEN, _SCALE, _ADD_CONST, _ADD = range(5)


@dataclass(frozen=True)
class Program:
    """Straight-line evaluation of one polynomial.

    ``code`` is a tuple of ``(instruction, argument)``; ``constant`` is the
    value of a polynomial without generators (``code`` is then empty).
    """

    code: tuple[tuple[int, Any], ...]
    constant: float


def horner_program(columns: TermColumns) -> Program:
    """Factor a polynomial's terms into a :class:`Program`.

    Examples
    --------
    >>> from symbias.linear.polys import make_ring
    >>> ring = make_ring(("x", "y"), "flint")
    >>> x, y = ring.gens
    >>> program = horner_program(ring.columns(2 * x * y + x + 3))
    >>> run_program(program, [np.array([2.0, 1.0]), np.array([5.0, 1.0])])
    array([25.,  6.])
    """
    if not len(columns):
        return Program((), 0.0)
    exponents = columns.exponents.astype(np.int64)
    if columns.denominators.dtype != object and np.all(columns.denominators == 1) \
            and columns.numerators.dtype != object:
        coefficients = columns.numerators.astype(np.float64)
    else:  # int / int is correctly rounded in Python
        coefficients = np.array([int(n) / int(d) for n, d in zip(columns.numerators, columns.denominators)])
    code: list[tuple[int, Any]] = []
    constant = _emit_horner(exponents, coefficients, code)
    return Program(tuple(code), 0.0 if constant is None else constant)


def _emit_horner(exponents: np.ndarray, coefficients: np.ndarray, code: list) -> float | None:
    """Append code that leaves the polynomial on the stack; return its value if constant.

    Recursion depth is bounded by the number of generators plus the total
    degree: each level removes one generator from the rest, or one power from
    the factored part.
    """
    if len(coefficients) == 1:  # a monomial: the most common leaf, emitted without numpy reductions
        factors = [i for i, e in enumerate(exponents[0].tolist()) for _ in range(e)]
        coefficient = float(coefficients[0])
        if not factors:
            return coefficient
        code.append((_PUSH, factors[0]))
        code.extend((_MUL_GEN, i) for i in factors[1:])
        if coefficient != 1.0:
            code.append((_SCALE, coefficient))
        return None
    present = exponents > 0
    counts = present.sum(axis=0)
    if not counts.any():
        return float(coefficients.sum())
    pivot = int(counts.argmax())
    with_pivot = present[:, pivot]
    reduced = exponents[with_pivot]
    reduced[:, pivot] -= 1
    quotient = _emit_horner(reduced, coefficients[with_pivot], code)
    if quotient is None:
        code.append((_MUL_GEN, pivot))
    else:
        code.append((_PUSH, pivot))
        if quotient != 1.0:
            code.append((_SCALE, quotient))
    rest = ~with_pivot
    if rest.any():
        remainder = _emit_horner(exponents[rest], coefficients[rest], code)
        if remainder is None:
            code.append((_ADD, None))
        elif remainder != 0.0:
            code.append((_ADD_CONST, remainder))
    return None


def run_program(program: Program, generators: list[Any]) -> Any:
    """Value of a program on one block of generator values (1-d arrays or scalars).

    Intermediate arrays the program owns are updated in place; generator
    arrays are never written.
    """
    if not program.code:
        return program.constant
    stack: list[Any] = []
    owned: list[bool] = []
    multiply, add = np.multiply, np.add
    for instruction, argument in program.code:
        if instruction == _PUSH:
            stack.append(generators[argument])
            owned.append(False)
            continue
        if instruction == _ADD:
            right, right_owned = stack.pop(), owned.pop()
            if owned[-1]:
                add(stack[-1], right, out=stack[-1])
            elif right_owned:
                stack[-1] = add(right, stack[-1], out=right)
                owned[-1] = True
            else:
                stack[-1] = stack[-1] + right
                owned[-1] = True
            continue
        operand = generators[argument] if instruction == _MUL_GEN else argument
        ufunc = add if instruction == _ADD_CONST else multiply
        if owned[-1]:
            ufunc(stack[-1], operand, out=stack[-1])
        else:
            stack[-1] = ufunc(stack[-1], operand)
            owned[-1] = True
    return stack[-1]


def evaluate_ratio(programs: tuple[Program, Program], generators: list[Any], used: tuple[int, ...]) -> np.ndarray:
    """``numerator / denominator`` over the broadcast shape of the used generators, block by block."""
    arrays = [np.asarray(generators[i]) for i in used]
    shape = np.broadcast_shapes(*(a.shape for a in arrays)) if arrays else ()
    # one dtype for all, so in-place updates never need a cast (int or complex input)
    dtype = np.result_type(np.float64, *arrays)
    count = int(np.prod(shape, dtype=np.int64))
    width = max(1, min(count, _BLOCK))
    flat: list[Any] = [None] * len(generators)
    tiled: set[int] = set()
    for i, array in zip(used, arrays):
        if array.ndim == 0:  # a scalar becomes one block of copies, sliced like the others
            flat[i] = np.full(width, array, dtype=dtype)
            tiled.add(i)
        else:
            flat[i] = np.broadcast_to(array, shape).astype(dtype).ravel()
    out = np.empty(count, dtype=dtype)
    with np.errstate(divide="ignore", invalid="ignore"):
        for start in range(0, count, _BLOCK):
            stop = min(start + _BLOCK, count)
            block = [
                None if v is None else v[: stop - start] if i in tiled else v[start:stop]
                for i, v in enumerate(flat)
            ]
            out[start:stop] = np.asarray(run_program(programs[0], block)) / run_program(programs[1], block)
    return out.reshape(shape)
