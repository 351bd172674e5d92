"""A Python function a designer can paste into a script: numpy-vectorised, documented arguments.

The generated source imports numpy only and defines one function per form
(exact and, when given, approximate).  Each docstring names every argument
with its meaning and unit.

Generated code holds only identifiers this module makes itself: function
names from the quantity, argument names from symbol names that pass
:func:`argument_names` (others become ``x1``, ``x2``...), the locals
``_top`` and ``_bottom`` (no argument starts with ``_``), ``numpy`` and
``float``.  Long sums are split over lines of :data:`CHUNK_TERMS` terms, so a
large result still compiles.  Text that comes from the netlist or the command line (element
names, labels, meanings, assumptions) appears only inside docstrings, with
every quote, backslash and control character escaped (:func:`docstring`), so
it can never end the string and run as code.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> from symbias.analyses import output_resistance
>>> f = output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "a")
>>> namespace = {}
>>> exec(python_source(f), namespace)
>>> float(namespace["rout_at_a"](2.0, 2.0))
1.0
"""

from __future__ import annotations

import keyword
import re
from typing import Any, Iterable

import sympy

from ..formula import Formula

__all__ = ["python_source", "function_name", "derivation_python", "docstring", "argument_names", "CHUNK_TERMS"]

_PLAIN = re.compile(r"[A-Za-z][A-Za-z0-9_]{0,63}", re.ASCII)
_TAKEN = frozenset({"numpy", "float"})


def docstring(text: str, indent: str = "") -> str:
    r'''A triple-quoted string literal holding ``text``, whatever characters it has.

    Backslashes and double quotes are escaped, and so is every character
    that is not printable (except the line breaks of ``text``), so the
    literal ends only where it is meant to.

    Examples
    --------
    >>> print(docstring('Rout at Vo"""+[]+"""'))
    """Rout at Vo\"\"\"+[]+\"\"\""""
    >>> text = 'a "quote", a \\ and a ' + chr(0)
    >>> import ast; ast.literal_eval(docstring(text)) == text
    True
    '''
    def escape(character: str) -> str:
        if character in '\\"':
            return "\\" + character
        if character == "\n" or character.isprintable():
            return character
        code = ord(character)
        return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}" if code < 0x10000 else f"\\U{code:08x}"

    body = "".join(escape(c) for c in text).replace("\n", "\n" + indent)
    return f'\"\"\"{body}\"\"\"'


def function_name(formula: Formula) -> str:
    """A Python identifier from the formula's label (``Rout at Vout`` -> ``rout_at_vout``).

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> function_name(output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\nR2 a 0 RB\\n"), "R1"))
    'rout_at_r1'
    """
    name = re.sub(r"[^0-9a-zA-Z]+", "_", formula.label, flags=re.ASCII).strip("_").lower()[:60] or formula.quantity
    name = re.sub(r"[^0-9a-z_]+", "_", name, flags=re.ASCII)
    return f"f_{name}" if name[0].isdigit() or keyword.iskeyword(name) or name in _TAKEN else name


def argument_names(symbols: Iterable[str]) -> dict[str, str]:
    """Symbol name -> argument name: the symbol itself when it is a plain identifier, else ``x1``, ``x2``...

    A plain identifier is ASCII, starts with a letter, is no Python keyword and
    does not hide ``numpy`` or ``float``.

    Examples
    --------
    >>> argument_names(["gm_Q1", "lambda", "numpy", "x1"])
    {'gm_Q1': 'gm_Q1', 'lambda': 'x2', 'numpy': 'x3', 'x1': 'x1'}
    """
    symbols = list(symbols)
    out: dict[str, str] = {}
    used = {s for s in symbols if _plain(s)}
    counter = 0
    for symbol in symbols:
        if _plain(symbol):
            out[symbol] = symbol
            continue
        counter += 1
        while f"x{counter}" in used:
            counter += 1
        out[symbol] = f"x{counter}"
        used.add(out[symbol])
    return out


def _plain(name: str) -> bool:
    return bool(_PLAIN.fullmatch(name)) and not keyword.iskeyword(name) and name not in _TAKEN


#: Terms per line of a generated sum: a long sum on one line nests too deep for Python's own compiler.
CHUNK_TERMS = 64


def _sum_lines(variable: str, expr: sympy.Expr, renaming: dict, printer) -> list[str]:
    """``variable = ...`` over as many lines as the terms of ``expr`` need, :data:`CHUNK_TERMS` a line."""
    import sympy

    terms = sympy.Add.make_args(expr.xreplace(renaming))
    lines = []
    for start in range(0, len(terms), CHUNK_TERMS):
        part = printer.doprint(sympy.Add(*terms[start:start + CHUNK_TERMS]))
        lines.append(f"    {variable} = {part}" if not start else f"    {variable} = {variable} + ({part})")
    return lines


def _function(name: str, parts: tuple, symbols: list[str], meanings: dict[str, Any], summary: str,
              unit: str) -> list[str]:
    """A numpy function computing ``parts[0] / parts[1]`` (numerator, denominator) from the symbols."""
    import sympy
    from sympy.printing.numpy import NumPyPrinter

    names = argument_names(symbols)
    arguments = [names[s] for s in symbols]
    renaming = {sympy.Symbol(s): sympy.Symbol(a) for s, a in names.items()}
    printer = NumPyPrinter({"fully_qualified_modules": True})
    doc = [f"{summary} [{unit}].", "", "Parameters", "----------"]
    for symbol, argument in zip(symbols, arguments):
        meaning = meanings.get(symbol)
        unit_of = meaning.unit if meaning is not None else "see netlist"
        text = meaning.description if meaning is not None else f"the netlist symbol {symbol}"
        shown = "" if argument == symbol else f" (symbol {symbol})"
        doc += [f"{argument} : float or numpy array", f"    {text}{shown} [{unit_of}]"]
    lines = [f"def {name}({', '.join(arguments)}):", "    " + docstring("\n".join(doc) + "\n", "    ")]
    if arguments:
        lines.append(f"    {', '.join(arguments)} = " + ", ".join(f"numpy.asarray({a}, dtype=float)" for a in arguments))
    numerator, denominator = parts
    lines += _sum_lines("_top", numerator, renaming, printer)
    if denominator == 1:
        return lines + ["    return _top", ""]
    return lines + _sum_lines("_bottom", denominator, renaming, printer) + ["    return _top / _bottom", ""]


def _formula_functions(formula: Formula, approximation: Any, name: str) -> list[str]:
    """The function of the exact form and, when given, of its approximation."""
    symbols = [s.name for s in formula.symbols]
    meanings = dict(formula.meanings)
    exact = (formula.numerator_expr, formula.denominator_expr)
    lines = _function(name, exact, symbols, meanings, f"Exact {formula.label}", formula.unit)
    if approximation is not None:
        used = sorted(s.name for s in approximation.expr.free_symbols)
        note = (f"Approximate {formula.label}, worst relative error {100 * approximation.error:.3g} % under "
                + "; ".join(str(a) for a in approximation.assumptions if a.origin in ("user", "default")))
        lines += [""] + _function(f"{name}_approx", approximation.expr.as_numer_denom(), used, meanings,
                                  note.rstrip("; "), formula.unit)
    return lines


def _module(labels: list[str], functions: list[str]) -> str:
    doc = f"{'; '.join(labels)}: generated by symbias (a design aid; sign-off needs simulation)."
    return "\n".join([docstring(doc), "", "import numpy", "", *functions]).rstrip() + "\n"


def python_source(formula: Formula, approximation: Any = None, name: str | None = None) -> str:
    """Source text of a module with numpy functions for the exact (and approximate) result.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> from symbias.analyses import output_resistance
    >>> print(python_source(output_resistance(parse_netlist("t\\nI1 0 a 1\\nR1 a 0 RA\\n"), "a")).splitlines()[4])
    def rout_at_a(RA):
    """
    return _module([formula.label], _formula_functions(formula, approximation, name or function_name(formula)))


def derivation_python(derivation) -> str:
    """One module: a docstring, ``import numpy``, a function per derived quantity (and its approximation).

    Two quantities with the same name get ``_2``, ``_3``... so that none hides another; an infinite
    result (an open port) has no function.
    """
    functions: list[str] = []
    taken: set[str] = set()
    results = [r for r in derivation.results if r.formula is not None]
    for result in results:
        base = name = function_name(result.formula)
        count = 1
        while name in taken or f"{name}_approx" in taken:
            count += 1
            name = f"{base}_{count}"
        taken |= {name, f"{name}_approx"}
        functions += _formula_functions(result.formula, result.approximation, name) + [""]
    return _module([r.formula.label for r in results], functions)
