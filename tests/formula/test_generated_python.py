"""Generated Python holds only identifiers the tool made; netlist text appears only in escaped docstrings.

Finding of the adversarial run: an element named ``Vo\"\"\"+[]+\"\"\"`` was written
unescaped into the docstring of the module ``derive --format python``
prints, which then ran ``+[]+`` on import.  Every generated module is parsed
here with :mod:`ast` and its nodes are checked against the few kinds a
numpy formula needs (no list, subscript, lambda, comprehension, import other
than numpy, string other than a docstring); every name it uses is an
argument, ``numpy``, ``float`` or the locals ``_top`` and ``_bottom``; the text
of each docstring reads back exactly as the hostile name was written; and a
module for a result of thousands of terms still compiles (one long sum used to
nest too deep for Python's compiler).
"""

from __future__ import annotations

import ast
from pathlib import Path

import numpy as np
import pytest

from symbias.analyses import output_resistance
from symbias.netlist import parse_netlist
from symbias.render.python import argument_names, python_source
from support.cli_checks import run_cli
from support.harness import python_problem

ALLOWED = {
    ast.Module, ast.Expr, ast.Constant, ast.Import, ast.alias, ast.FunctionDef, ast.arguments, ast.arg, ast.Assign,
    ast.Tuple, ast.Name, ast.Load, ast.Store, ast.Call, ast.Attribute, ast.keyword, ast.BinOp, ast.UnaryOp,
    ast.Return, ast.Add, ast.Sub, ast.Mult, ast.Div, ast.Pow, ast.USub, ast.UAdd,
}

HOSTILE_NAMES = ['Vo"""+[]+"""', "Vo'''+[]+'''", 'Vo\\', 'Vo"', "Vo\u202e}", "Vo\x00x", "Vo#", "Vo{__import__}"]


def check_module(source: str) -> tuple[ast.Module, list[str]]:
    """Parse ``source``, check every node and name; return the tree and its docstrings."""
    tree = ast.parse(source)
    docstrings = []
    bodies = [tree.body] + [node.body for node in ast.walk(tree) if isinstance(node, ast.FunctionDef)]
    docs = {id(body[0].value) for body in bodies if isinstance(body[0], ast.Expr)}
    arguments = {a.arg for node in ast.walk(tree) if isinstance(node, ast.FunctionDef) for a in node.args.args}
    for node in ast.walk(tree):
        assert type(node) in ALLOWED, ast.dump(node)[:200]
        if isinstance(node, ast.Constant) and isinstance(node.value, str):
            assert id(node) in docs, "a string that is not a docstring"
            docstrings.append(node.value)
        if isinstance(node, ast.Import):
            assert [a.name for a in node.names] == ["numpy"]
        if isinstance(node, ast.Name):
            assert node.id in arguments | {"numpy", "float", "_top", "_bottom"}, node.id
        if isinstance(node, ast.Attribute):
            assert isinstance(node.value, ast.Name) and node.value.id == "numpy"
    return tree, docstrings


@pytest.mark.parametrize("name", HOSTILE_NAMES)
def test_a_hostile_element_name_stays_inside_its_docstring(tmp_path, monkeypatch, capsys, name):
    text = f"t\nIref 0 a 1m\nQ1 a a 0 QN\nQ2 out a 0 QN\n{name} out 0 1\n.model QN npn (BF=100 VAF=50)\n"
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys,
                                  ["derive", "deck.cir", "--rout", name, "--format", "python"], {"deck.cir": text})
    assert status == 0, err
    _, docstrings = check_module(out)
    assert any(f"Rout at {name}" in doc for doc in docstrings)


def test_hostile_symbols_and_assumptions_become_safe_arguments():
    circuit = parse_netlist("t\nI1 0 a 1\nR1 a 0 numpy\nR2 a 0 lambda\nR3 a 0 __import__\nR4 a 0 x1\n")
    formula = output_resistance(circuit, "a")
    source = python_source(formula)
    tree, docstrings = check_module(source)
    function = next(n for n in tree.body if isinstance(n, ast.FunctionDef))
    names = argument_names([s.name for s in formula.symbols])
    assert [a.arg for a in function.args.args] == [names[s.name] for s in formula.symbols]
    assert names == {"__import__": "x2", "lambda": "x3", "numpy": "x4", "x1": "x1"}
    namespace: dict = {}
    exec(compile(tree, "<generated>", "exec"), namespace)  # noqa: S102 - checked above: numpy calls only
    values = {s.name: float(k + 2) for k, s in enumerate(formula.symbols)}
    result = namespace["rout_at_a"](*[values[s.name] for s in formula.symbols])
    np.testing.assert_allclose(result, formula.evaluate(values), rtol=1e-12)
    assert any("symbol numpy" in doc for doc in docstrings)


def test_the_approximation_and_its_assumptions_stay_in_docstrings(tmp_path, monkeypatch, capsys):
    text = "t\nIref 0 a 1m\nQ1 a a 0 QN\nQ2 out a 0 QN\nR1 out 0 RL\nVout out 0 1\n.model QN npn (BF=100 VAF=50)\n"
    argv = ["derive", "deck.cir", "--match", "--rout", "Vout", "--approx", "--assume", "RL >> ro", "--format",
            "python"]
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, argv, {"deck.cir": text})
    assert status == 0, err
    tree, docstrings = check_module(out)
    assert [n.name for n in tree.body if isinstance(n, ast.FunctionDef)] == ["rout_at_vout", "rout_at_vout_approx"]
    assert any("RL >> ro" in doc for doc in docstrings)


def test_several_quantities_make_one_module_with_distinct_functions(tmp_path, monkeypatch, capsys):
    """Adversarial-run finding: each quantity used to bring its own module docstring and import."""
    text = "t\nIref 0 a 1m\nQ1 a a 0 QN\nQ2 out a 0 QN\nVout out 0 1\n.model QN npn (BF=100 VAF=50)\n"
    argv = ["derive", "deck.cir", "--rout", "Vout", "--rout", "Vout", "--gain", "Vout/Iref", "--format", "python"]
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, argv, {"deck.cir": text})
    assert status == 0, err
    assert python_problem(out) is None
    tree, _ = check_module(out)
    names = [n.name for n in tree.body if isinstance(n, ast.FunctionDef)]
    assert names == ["rout_at_vout", "rout_at_vout_2", "iout_vout_i_iref"]
    assert sum(isinstance(n, ast.Import) for n in tree.body) == 1


def test_a_result_of_thousands_of_terms_still_compiles_and_evaluates():
    from symbias.netlist import read_netlist
    from symbias.devices.options import SmallSignalOptions

    formula = output_resistance(read_netlist(Path(__file__).resolve().parents[2] / "examples/wilson_mirror.cir"), "Vout",
                                SmallSignalOptions(parasitics=("rb", "re", "rmu")))
    assert sum(formula.nterms) > 1000
    source = python_source(formula)
    assert python_problem(source) is None
    namespace: dict = {}
    exec(compile(source, "<generated>", "exec"), namespace)  # noqa: S102 - checked above: numpy formulas only
    values = {s.name: 1e-3 * (k + 1) if s.name.startswith("gm") else 1e3 * (k + 1) for k, s in enumerate(formula.symbols)}
    result = namespace["rout_at_vout"](*[values[s.name] for s in formula.symbols])
    np.testing.assert_allclose(result, formula.evaluate(values), rtol=1e-9)
