"""LaTeX of large results is written from the terms; it must say the same as sympy's form.

Reference: sympy's own expression of the same result (``Formula.numerator_expr`` and
``denominator_expr``), read back from the term-written LaTeX by plain text rules.
"""

import re

import sympy

from symbias.analyses import SmallSignalOptions, current_gain, output_resistance
from symbias.netlist import read_netlist


def _split_frac(text: str) -> tuple[str, str]:
    assert text.startswith(r"\frac{")
    depth, i = 0, len(r"\frac")
    for j in range(i, len(text)):
        depth += {"{": 1, "}": -1}.get(text[j], 0)
        if depth == 0:
            return text[i + 1:j], text[j + 2:-1]
    raise AssertionError("unbalanced braces")


def _read_back(latex: str) -> sympy.Expr:
    text = re.sub(r"\\frac\{(\d+)\}\{(\d+)\}", r"(\1/\2)", latex)
    text = re.sub(r"\\([A-Za-z]+)", r"\1", text)  # \beta -> beta
    text = re.sub(r"\^\{(\d+)\}", r"**\1", text)
    text = re.sub(r"([A-Za-z]+)_\{([A-Za-z0-9]+)\}", r"\1_\2", text)
    text = re.sub(r"(?<=[\w)])\s+(?=[\w(])", "*", text.strip())
    names = set(re.findall(r"[A-Za-z_][A-Za-z0-9_]*", text))
    return sympy.parse_expr(text, local_dict={n: sympy.Symbol(n) for n in names})


def test_term_written_latex_matches_the_sympy_form():
    circuits = [
        output_resistance(read_netlist("examples/degenerated_mirror.cir"), "Vout"),
        current_gain(read_netlist("examples/wilson_mirror.cir"), "Vout", "Iref"),
        output_resistance(read_netlist("examples/wilson_mirror.cir"), "Vout", SmallSignalOptions(match=True, beta=True)),
    ]
    for formula in circuits:
        numerator, denominator = formula.numerator_expr, formula.denominator_expr
        num_text, den_text = _split_frac(formula.latex_from_terms())
        assert sympy.expand(_read_back(num_text) - numerator) == 0
        assert sympy.expand(_read_back(den_text) - denominator) == 0
