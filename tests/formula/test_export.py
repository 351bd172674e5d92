"""Exports of formulas and approximations: LaTeX, Markdown, JSON, Python, text; the derive CLI flags.

The LaTeX is read back by a small grammar of our own (below): sympy's own LaTeX
parser needs an antlr4 runtime of one exact version, which this environment
does not pin.  The Python export is executed and compared with the exact formula.
"""

from __future__ import annotations

import json
import re
import sys
from pathlib import Path

import numpy as np
import pytest
import sympy

from support.reference_solver import reference_value  # noqa: E402

from symbias.analyses import output_resistance  # noqa: E402
from symbias.approx import approximate  # noqa: E402
from symbias.cli import main  # noqa: E402
from symbias.devices.options import SmallSignalOptions  # noqa: E402
from symbias.netlist import read_netlist  # noqa: E402
from symbias.readable import expand_parallel, readable_latex, readable_text  # noqa: E402
from symbias.render.latex import approximation_latex, assumption_latex  # noqa: E402
from symbias.render.markdown import CAUTION, formula_markdown  # noqa: E402
from symbias.render.python import python_source  # noqa: E402
from symbias.render.text import approximation_rows, formula_panel, render_to_string  # noqa: E402
from symbias.sensitivity import sensitivities  # noqa: E402
from symbias.symbols import latex_name  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]
WILSON = ROOT / "examples" / "wilson_mirror.cir"
CASCODE = ROOT / "tests" / "decks" / "approx" / "bjt_cascode.cir"
MATCH = SmallSignalOptions(match=True, beta=True)


# -- a small LaTeX grammar for the subset symbias writes ------------------------------------
_TOKEN = re.compile(r"\\left\(|\\right\)|\\[A-Za-z]+|[A-Za-z][A-Za-z0-9]*|\d+(?:\.\d+)?|[-+^_{}(),]|\s+")


def _tokens(text):
    pos, out = 0, []
    while pos < len(text):
        m = _TOKEN.match(text, pos)
        if not m:
            raise SyntaxError(f"unexpected {text[pos:pos + 10]!r}")
        if not m.group().isspace():
            out.append(m.group())
        pos = m.end()
    return out


class LatexReader:
    """expr := term (('+'|'-') term)*; term := ['-'] factor+; factor := atom ['^' group];
    atom := number | name [subscript] | \\frac group group | \\left( expr [\\parallel expr] \\right) | { expr }"""

    def __init__(self, text):
        self.t = _tokens(text)
        self.i = 0

    def peek(self):
        return self.t[self.i] if self.i < len(self.t) else None

    def take(self, expected=None):
        tok = self.peek()
        if tok is None or (expected is not None and tok != expected):
            raise SyntaxError(f"expected {expected!r}, got {tok!r}")
        self.i += 1
        return tok

    def read(self):
        value = self.expr()
        if self.peek() is not None:
            raise SyntaxError(f"trailing {self.t[self.i:]}")
        return value

    def expr(self):
        value = self.term()
        while self.peek() in ("+", "-"):
            op = self.take()
            value = value + self.term() if op == "+" else value - self.term()
        return value

    def term(self):
        sign = -1 if self.peek() == "-" and self.take() else 1
        value = self.factor()
        while self.peek() not in (None, "+", "-", "}", r"\right)", r"\parallel"):
            if self.peek() == r"\cdot":
                self.take()
            value = value * self.factor()
        return sign * value

    def factor(self):
        base = self.atom()
        if self.peek() == "^":
            self.take()
            exponent = self.group() if self.peek() == "{" else sympy.Integer(self.take())
            return base**exponent
        return base

    def group(self):
        self.take("{")
        value = self.expr()
        self.take("}")
        return value

    def subscript(self):
        self.take("_")
        self.take("{")
        raw = []
        while self.peek() != "}":
            raw.append(self.take())
        self.take("}")
        return "_{" + "".join(raw) + "}"

    def atom(self):
        tok = self.peek()
        if tok is None:
            raise SyntaxError("unexpected end")
        if re.fullmatch(r"\d+(?:\.\d+)?", tok):
            self.take()
            return sympy.nsimplify(tok)
        if tok == r"\frac":
            self.take()
            return self.group() / self.group()
        if tok == r"\left(":
            self.take()
            left = self.expr()
            if self.peek() == r"\parallel":
                self.take()
                right = self.expr()
                self.take(r"\right)")
                return left * right / (left + right)
            self.take(r"\right)")
            return left
        if tok == "{":
            return self.group()
        if tok in (r"\beta",) or re.fullmatch(r"[A-Za-z][A-Za-z0-9]*", tok):
            self.take()
            name = tok + (self.subscript() if self.peek() == "_" else "")
            return sympy.Symbol(name)
        raise SyntaxError(f"unexpected {tok!r}")


def wilson_error_at(point):
    """|beta*ro/2 / Rout - 1| at a point, Rout from the tests' own nodal solver (the Wilson's form is
    beta*ro/2: Gray, Hurst, Lewis and Meyer, 5th ed., ch. 4)."""
    exact = reference_value(read_netlist(WILSON), "output_resistance", ("Vout",), dict(point), MATCH).real
    return float(abs(point["beta"] * point["ro"] / 2 / exact - 1))


def read_back(text, symbols):
    back = {sympy.Symbol(latex_name(s.name)): s for s in symbols}
    return LatexReader(text).read().xreplace(back)


# -- LaTeX ------------------------------------------------------------------------------------
@pytest.mark.parametrize("path", [WILSON, CASCODE])
def test_latex_of_exact_and_approximate_forms_reads_back(path):
    exact = output_resistance(read_netlist(path), "Vout", MATCH)
    a = approximate(exact)
    for expr in (exact.expr, a.expr, sympy.factor(exact.expr)):
        back = read_back(readable_latex(expr), expr.free_symbols)
        assert sympy.simplify(back - expr) == 0


def test_parallel_combination_in_latex_and_text():
    ro, rpi, gm = sympy.symbols("ro rpi gm")
    expr = ro + ro * rpi / (ro + rpi) * (1 + gm * ro)
    latex = readable_latex(expr)
    assert r"\parallel" in latex
    assert sympy.simplify(read_back(latex, expr.free_symbols) - expr) == 0
    text = readable_text(expr)
    assert "ro || rpi" in text
    assert sympy.simplify(expand_parallel(sympy.sympify(text.replace("^", "**").replace("(ro || rpi)", "Parallel(ro, rpi)"),
                                                        locals={"Parallel": __import__("symbias.readable").readable.Parallel}))
                          - expr) == 0


def test_equation_with_side_condition():
    exact = output_resistance(read_netlist(WILSON), "Vout", MATCH)
    a = approximate(exact)
    text = approximation_latex(a)
    assert text.count("{") == text.count("}")
    lhs, rest = text.split(r" \approx ", 1)
    assert lhs == r"R_{\mathrm{out}}"
    form, condition = rest.split(r" \qquad ", 1)
    assert sympy.simplify(read_back(form, a.expr.free_symbols) - sympy.Symbol("beta") * sympy.Symbol("ro") / 2) == 0
    assert condition.startswith(r"\left(") and condition.endswith(r"\right)")
    assert r"g_{m} r_{o} \gg 1" in condition
    assert condition.endswith(rf"\text{{worst error }} {100 * wilson_error_at(a.worst_point):.2g}\,\%\right)")
    commands = set(re.findall(r"\\[A-Za-z]+", condition))
    assert commands <= {r"\left", r"\right", r"\gg", r"\ll", r"\sim", r"\le", r"\text", r"\beta", r"\pi", r"\frac"}
    for statement in a.assumptions:
        piece = assumption_latex(statement)
        parts = re.split(r" \\gg | \\ll | \\sim | \\le | = ", piece)
        assert len(parts) >= 2
        for side in parts:
            LatexReader(side).read()


# -- Markdown, text ---------------------------------------------------------------------------
def test_markdown_section():
    exact = output_resistance(read_netlist(WILSON), "Vout", MATCH)
    a = approximate(exact)
    rows = sensitivities(exact, a.model.centre())
    text = formula_markdown(exact, a, rows)
    assert text.count("$$") == 4
    # the reported error is the error at the reported point, recomputed outside the engine
    error = wilson_error_at(a.worst_point)
    assert error == pytest.approx(a.error, rel=1e-9) and 0.01 < error <= 0.1
    assert f"worst relative error {100 * error:.3g} % (tolerance 10 %)" in text
    assert "gm*ro >> 1" in text and CAUTION in text
    assert "| ro |" in text


def test_text_panel_has_exact_approximate_assumptions_and_error():
    exact = output_resistance(read_netlist(WILSON), "Vout", MATCH)
    a = approximate(exact)
    out = render_to_string(formula_panel(exact, approximation_rows(a)), width=160)
    assert "approx: beta*ro/2" in out
    assert f"worst error: {100 * wilson_error_at(a.worst_point):.3g} % (tolerance 10 %)" in out
    assert "gm*ro >> 1" in out and "Rout at Vout" in out


# -- Python ------------------------------------------------------------------------------------
def test_python_export_evaluates_like_the_exact_formula(tmp_path):
    exact = output_resistance(read_netlist(WILSON), "Vout", MATCH)
    a = approximate(exact)
    source = python_source(exact, a)
    module = tmp_path / "wilson_rout.py"
    module.write_text(source)
    namespace = {}
    exec(compile(source, str(module), "exec"), namespace)
    rng = np.random.default_rng(5)
    b = rng.uniform(30, 300, 100)
    g = rng.uniform(1e-4, 1e-2, 100)
    r = 3000 / g
    values = {"beta": b, "gm": g, "ro": r}
    np.testing.assert_allclose(namespace["rout_at_vout"](b, g, r), exact.evaluate(values), rtol=1e-12)
    np.testing.assert_allclose(namespace["rout_at_vout_approx"](b, r), b * r / 2, rtol=1e-12)
    doc = namespace["rout_at_vout"].__doc__
    assert "beta : float or numpy array" in doc and "[A/V]" in doc and "[ohm]" in doc
    assert "ro >> beta/gm" in namespace["rout_at_vout_approx"].__doc__


# -- the command line --------------------------------------------------------------------------
def test_cli_json_has_approx_error_assumptions_and_sensitivities(capsys):
    status = main(["derive", str(WILSON), "--match", "--beta", "--rout", "Vout", "--approx", "--sensitivity",
                   "--json", "--tolerance", "0.05"])
    assert status == 0
    data = json.loads(capsys.readouterr().out)
    plain = {name: sympy.Symbol(name) for name in data["symbols"]}  # beta is also a sympy function name

    def parse(text):
        return sympy.parse_expr(text, local_dict=plain)

    assert sympy.simplify(parse(data["approx"]) - parse("beta*ro/2")) == 0
    assert isinstance(data["approx_error"], float) and 0 < data["approx_error"] <= 0.05
    assert data["approx_error"] == pytest.approx(wilson_error_at(data["approx_worst_point"]), rel=1e-9)
    assert any(s.startswith("gm*ro >> 1") for s in data["assumptions"])
    assert "linear small-signal analysis about a fixed operating point" in data["assumptions"]
    assert set(data["sensitivities"]) == {"beta", "gm", "ro"}
    assert parse(data["sensitivities"]["ro"]).free_symbols <= set(plain.values())
    assert parse(data["exact"]) != 0


@pytest.mark.parametrize("fmt", ["text", "latex", "markdown", "python"])
def test_cli_formats(capsys, fmt):
    assert main(["derive", str(WILSON), "--match", "--beta", "--rout", "Vout", "--approx", "--format", fmt]) == 0
    out = capsys.readouterr().out
    expected = {"text": "beta*ro/2", "latex": r"\approx", "markdown": "$$", "python": "def rout_at_vout_approx"}
    assert expected[fmt] in out


@pytest.mark.parametrize("argv, where", [
    (["--approx", "--assume", "gm*ro is large"], "--assume"),
    (["--approx", "--assume", "gm*ro in [30, 100]"], "--assume"),
    (["--approx", "--tolerance", "2"], "--tolerance"),
    (["--json", "--format", "latex"], "--format"),
])
def test_cli_bad_input_is_one_line_exit_2_and_prints_nothing(capsys, argv, where):
    status = main(["derive", str(WILSON), "--match", "--beta", "--rout", "Vout", *argv])
    captured = capsys.readouterr()
    assert status == 2
    assert captured.out == ""
    assert captured.err.count("\n") == 1 and captured.err.startswith(where + ":")
    assert "Traceback" not in captured.err
