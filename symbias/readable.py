"""Readable forms of small expressions: parallel combinations, common factors, term order, bias quantities.

Works on small sympy expressions (an approximation, a short exact result),
never on large ring polynomials.  ``a*b/(a + b)`` is recognised as a parallel
combination and printed ``a || b`` in text and ``a \\parallel b`` in LaTeX;
common factors are pulled out; the terms of a sum can be ordered by their
magnitude at a point.  Small-signal symbols can be written in bias quantities
(common practice, e.g. any analog design textbook's device chapter):

* BJT: ``gm = IC/VT``, ``rpi = beta/gm``, ``ro = VA/IC``;
* MOS (square law): ``gm = 2*ID/Vov``, ``ro = 1/(lambda*ID)``.

Examples
--------
>>> a, b, c = sympy.symbols("ro rpi gm")
>>> readable_text(a*b/(a + b) * (1 + c*a))
'(gm*ro + 1)*(ro || rpi)'
>>> readable_latex(a*b/(a + b))
'\\\\left(r_{o} \\\\parallel r_{\\\\pi}\\\\right)'
>>> in_bias_terms(sympy.Symbol("beta") * a / 2)
VA*beta/(2*IC)
"""

from __future__ import annotations

import math
from typing import Mapping

import sympy  # at import: Parallel below is a sympy function class

from .symbols import device_symbol, latex_name, owners

__all__ = [
    "Parallel",
    "parallel_form",
    "expand_parallel",
    "readable_text",
    "readable_latex",
    "bias_substitutions",
    "in_bias_terms",
]


class Parallel(sympy.Function):
    """``a || b = a*b/(a + b)``, kept unevaluated for display.

    Examples
    --------
    >>> x, y = sympy.symbols("x y")
    >>> Parallel(x, y).doit()
    x*y/(x + y)
    """

    nargs = 2

    def doit(self, **hints):
        a, b = (arg.doit(**hints) if hints.get("deep", True) else arg for arg in self.args)
        return a * b / (a + b)

    def _eval_rewrite_as_Mul(self, a, b, **kwargs):
        return a * b / (a + b)

    def _sympystr(self, printer) -> str:
        a, b = (printer._print(arg) for arg in self.args)
        return f"({a} || {b})"

    def _latex(self, printer) -> str:
        a, b = (printer._print(arg) for arg in self.args)
        return rf"\left({a} \parallel {b}\right)"


def _two_terms(factor: sympy.Expr) -> tuple[sympy.Expr, sympy.Expr] | None:
    if factor.is_Add and len(factor.args) == 2:
        a, b = factor.args
        if not a.is_number and not b.is_number and a.could_extract_minus_sign() is False \
                and b.could_extract_minus_sign() is False:
            return a, b
    return None


def parallel_form(expr: sympy.Expr) -> sympy.Expr:
    """Rewrite every ``a*b/(a + b)`` (and ``1/(1/a + 1/b)``) as :class:`Parallel`.

    Examples
    --------
    >>> x, y, z = sympy.symbols("x y z")
    >>> parallel_form(z + x*y/(x + y))
    z + (x || y)
    >>> parallel_form(1/(1/x + 1/y)).func.__name__
    'Parallel'
    """
    expr = sympy.sympify(expr)
    if expr.is_Atom:
        return expr
    if expr.is_Add:
        return sympy.Add(*(parallel_form(arg) for arg in expr.args))
    num, den = sympy.fraction(sympy.together(expr))
    if den != 1:
        coeff, factors = sympy.factor_list(den)
        rest = sympy.Integer(coeff)
        found = []
        for factor, power in factors:
            pair = _two_terms(factor) if power == 1 else None
            if pair is not None:
                quotient = sympy.cancel(num / (pair[0] * pair[1]))
                if sympy.fraction(quotient)[1] == 1:
                    num = quotient
                    found.append(Parallel(*pair))
                    continue
            rest *= factor**power
        if found:
            return sympy.Mul(*found) * parallel_form(sympy.factor(num)) / rest
    if expr.is_Mul or expr.is_Pow:
        return expr.func(*(parallel_form(arg) for arg in expr.args))
    return expr


def expand_parallel(expr: sympy.Expr) -> sympy.Expr:
    """Replace :class:`Parallel` by ``a*b/(a + b)``."""
    return expr.replace(lambda e: isinstance(e, Parallel), lambda e: e.doit())


def _ordered(expr: sympy.Expr, values: Mapping[str, float] | None) -> sympy.Expr:
    """Sums with their terms sorted by decreasing magnitude at ``values`` (unevaluated Add)."""
    if values is None or expr.is_Atom:
        return expr
    args = [_ordered(arg, values) for arg in expr.args]
    if expr.is_Add:
        subs = {sympy.Symbol(k): v for k, v in values.items()}

        def size(term):
            plain = expand_parallel(term)
            if not plain.free_symbols <= subs.keys():
                return 0.0  # a term with a symbol outside ``values`` cannot be sized; it goes after the known ones
            magnitude = abs(complex(plain.evalf(subs=subs)))
            return -magnitude if math.isfinite(magnitude) else -math.inf

        return sympy.Add(*sorted(args, key=size), evaluate=False)
    return expr.func(*args, evaluate=False) if expr.is_Mul or expr.is_Pow else expr.func(*args)


def _prepare(expr: sympy.Expr, parallel: bool, collect: bool) -> sympy.Expr:
    expr = sympy.sympify(expr)
    if parallel:
        expr = parallel_form(expr)
    if collect:
        expr = sympy.factor_terms(expr)
    return expr


def readable_text(expr: sympy.Expr, values: Mapping[str, float] | None = None, *, parallel: bool = True,
                  collect: bool = True) -> str:
    """One-line text: parallel combinations as ``a || b``, common factors out, ``^`` for powers.

    With ``values``, the terms of each sum are written largest first.

    Examples
    --------
    >>> x, y = sympy.symbols("gm ro")
    >>> readable_text(1 + x*y, {"gm": 1e-3, "ro": 1e5})
    'gm*ro + 1'
    >>> readable_text(2*x*y + 2*y)
    '2*ro*(gm + 1)'
    """
    expr = _ordered(_prepare(expr, parallel, collect), values)
    return sympy.sstr(expr, order="none" if values is not None else None).replace("**", "^")


def readable_latex(expr: sympy.Expr, values: Mapping[str, float] | None = None, *, parallel: bool = True,
                   collect: bool = True) -> str:
    """LaTeX with ``a \\parallel b``, common factors out and device symbols typeset (``g_{m} r_{o}``).

    Examples
    --------
    >>> x, y = sympy.symbols("gm ro")
    >>> readable_latex(x*y**2)
    'g_{m} r_{o}^{2}'
    """
    expr = _ordered(_prepare(expr, parallel, collect), values)
    names = {s: latex_name(s.name) for s in expr.free_symbols}
    return sympy.latex(expr, symbol_names=names, order="none" if values is not None else None)


def bias_substitutions(names, kind: str | None = None) -> dict[sympy.Symbol, sympy.Expr]:
    """Substitutions of small-signal symbols by bias quantities.

    ``kind`` is ``"bjt"``, ``"mos"`` or None (a device with ``rpi`` or
    ``beta`` symbols is bipolar, otherwise MOS).  Device suffixes carry over
    (``gm_Q1 -> IC_Q1/VT``); ``VT`` is shared.

    Examples
    --------
    >>> bias_substitutions(["gm", "ro", "beta"])
    {gm: IC/VT, ro: VA/IC}
    >>> bias_substitutions(["gm_M1", "ro_M1"])
    {gm_M1: 2*ID_M1/Vov_M1, ro_M1: 1/(ID_M1*lambda_M1)}
    """
    groups = {owner: set(params) for owner, params in owners(getattr(n, "name", None) or str(n) for n in names).items()}
    out: dict[sympy.Symbol, sympy.Expr] = {}
    for device, parameters in sorted(groups.items()):
        def sym(base: str) -> sympy.Symbol:
            return sympy.Symbol(device_symbol(base, device or None))

        bipolar = kind == "bjt" or (kind is None and parameters & {"rpi", "beta"})
        if bipolar:
            vt = sympy.Symbol("VT")
            if "gm" in parameters:
                out[sym("gm")] = sym("IC") / vt
            if "rpi" in parameters:
                out[sym("rpi")] = sym("beta") * vt / sym("IC")
            if "ro" in parameters:
                out[sym("ro")] = sym("VA") / sym("IC")
        else:
            if "gm" in parameters:
                out[sym("gm")] = 2 * sym("ID") / sym("Vov")
            if "gmb" in parameters:
                out[sym("gmb")] = sym("chi") * 2 * sym("ID") / sym("Vov")
            if "ro" in parameters:
                out[sym("ro")] = 1 / (sym("lambda") * sym("ID"))
    return out


def in_bias_terms(expr: sympy.Expr, kind: str | None = None) -> sympy.Expr:
    """``expr`` with small-signal symbols written in bias quantities, simplified.

    Examples
    --------
    >>> gm, ro = sympy.symbols("gm ro")
    >>> in_bias_terms(gm * ro**2, "mos")
    2/(ID*Vov*lambda**2)
    """
    expr = sympy.sympify(expr)
    subs = bias_substitutions(expr.free_symbols, kind)
    return sympy.factor(sympy.cancel(expr.xreplace(subs)))
