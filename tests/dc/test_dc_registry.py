"""The DC stamper runs on the element-kind registry and one device interface.

Checks: every kind's ``dc`` hook resolves (devices to a
:class:`~symbias.devices.nonlinear.DeviceModel`); the solver modules hold no
device-specific code (an AST scan); hand-worked linear cases (controlled
sources, element currents); analytic Jacobians of every device model against
central finite differences; systems and results pickle.
"""

from __future__ import annotations

import ast
import pickle
from pathlib import Path

import numpy as np
import pytest

from symbias.dc.newton import device_controls, residual
from symbias.dc.operating_point import operating_point
from symbias.dc.system import build_system
from symbias.devices.dc_context import DcStamp
from symbias.devices.nonlinear import DeviceModel, device_model, device_models
from symbias.elements import KINDS
from symbias.netlist import parse_netlist, read_netlist

ROOT = Path(__file__).resolve().parents[2]
DECKS = ROOT / "tests" / "decks"
#: Solver modules: they may know devices only through symbias.devices.nonlinear.
SOLVER_MODULES = ("system", "newton", "stepping", "report", "results", "operating_point", "solutions", "sweep",
                  "continuation", "mismatch", "headroom")
DEVICE_WORDS = {"bjt", "mos", "vbe", "vbc", "vgs", "vds", "vbs", "npn", "pnp", "nmos", "pmos", "diode", "vcesat"}


def test_every_kind_has_a_dc_hook_and_devices_share_one_interface():
    for letter, kind in KINDS.items():
        hook = kind.hook("dc")
        assert callable(hook), letter
        if kind.is_device:
            assert isinstance(hook, DeviceModel) and hook.letter == letter
            assert hook is device_model(letter)
        else:
            assert device_model(letter) is None
    assert {m.letter for m in device_models()} == {k.letter for k in KINDS.values() if k.is_device}


def _identifiers(tree: ast.AST):
    docstrings = {id(node.body[0].value) for node in ast.walk(tree)
                  if isinstance(node, (ast.Module, ast.FunctionDef, ast.ClassDef)) and node.body
                  and isinstance(node.body[0], ast.Expr) and isinstance(node.body[0].value, ast.Constant)}
    for node in ast.walk(tree):
        if isinstance(node, ast.Name):
            yield node.id
        elif isinstance(node, ast.Attribute):
            yield node.attr
        elif isinstance(node, ast.alias):
            yield node.name
        elif isinstance(node, ast.Constant) and isinstance(node.value, str) and id(node) not in docstrings:
            yield node.value


@pytest.mark.parametrize("module", SOLVER_MODULES)
def test_solver_modules_hold_no_device_code(module):
    tree = ast.parse((ROOT / "symbias" / "dc" / f"{module}.py").read_text())
    words = {part.lower() for name in _identifiers(tree) for part in name.replace(".", "_").split("_")}
    assert not words & DEVICE_WORDS, sorted(words & DEVICE_WORDS)
    for node in ast.walk(tree):  # no switch on element letters
        if isinstance(node, ast.Compare) and isinstance(node.left, ast.Attribute) and node.left.attr == "kind":
            assert not any(isinstance(c, (ast.Constant, ast.Tuple)) for c in node.comparators), ast.unparse(node)


def test_linear_hooks_return_stamps():
    c = parse_netlist("t\nV1 a 0 1\nR1 a b 1k\nC1 b 0 1p\nL1 b c 1u\nI1 0 c 1m\nR2 c 0 1k\n")
    from symbias.devices.dc_context import StampContext

    context = StampContext.create(c)
    for element in c.elements:
        assert isinstance(KINDS[element.kind].hook("dc")(element, context), DcStamp)


def test_controlled_sources_and_their_currents_hand_worked():
    # V(a) = 1 V; G1 drives 2 mA/V * V(a) from 0 through itself into b: V(b) = 2 mA * 1k = 2 V;
    # E1 copies 3 V(a) onto e; F1 mirrors twice the current of Vs (V(e)/R3 = 3 mA) into f: V(f) = 6 mA * 1k;
    # H1 puts 500 ohm times that current on h
    c = parse_netlist("t\nV1 a 0 1\nR1 a 0 1k\nG1 0 b a 0 2m\nR2 b 0 1k\nE1 e 0 a 0 3\nVs e e2 0\nR3 e2 0 1k\n"
                      "F1 0 f Vs 2\nR4 f 0 1k\nH1 h 0 Vs 500\nR5 h 0 1k\n")
    op = operating_point(c)
    assert op.voltage("b") == pytest.approx(2.0, rel=1e-12)
    assert op.voltage("e") == pytest.approx(3.0, rel=1e-12)
    assert op.voltage("f") == pytest.approx(6.0, rel=1e-12)
    assert op.voltage("h") == pytest.approx(1.5, rel=1e-12)
    assert op.element_currents["G1"] == pytest.approx(2e-3, rel=1e-12)
    assert op.element_currents["F1"] == pytest.approx(6e-3, rel=1e-12)
    assert op.element_currents["R2"] == pytest.approx(2e-3, rel=1e-12)
    assert op.element_currents["I1" if "I1" in op.element_currents else "R1"] == pytest.approx(1e-3, rel=1e-12)


def test_dc_paths_come_from_the_registry():
    from symbias.errors import CircuitError

    with pytest.raises(CircuitError, match="no DC path"):
        build_system(parse_netlist("t\nV1 a 0 1\nR1 a 0 1k\nI1 0 g 1u\nM1 a g 0 0 N\n.model N nmos\n"))


@pytest.mark.parametrize("deck", ["bjt_wilson_mirror", "mos_cascode_mirror", "bandgap_core_startup"])
def test_device_jacobians_match_finite_differences(deck):
    system = build_system(read_netlist(DECKS / f"{deck}.cir"))
    x = operating_point(system.circuit).solution.x[None, :] + 0.003
    for bank, controls in zip(system.banks, device_controls(system, x)):
        _, jacobian = bank.model.evaluate(bank.numbers, controls)
        for c in range(controls.shape[-1]):
            step = np.zeros_like(controls)
            step[..., c] = 1e-7
            up, _ = bank.model.evaluate(bank.numbers, controls + step)
            down, _ = bank.model.evaluate(bank.numbers, controls - step)
            numeric = (up - down) / 2e-7
            np.testing.assert_allclose(jacobian[..., c], numeric, rtol=1e-5, atol=1e-12)


def test_system_and_operating_point_pickle():
    circuit = read_netlist(DECKS / "mos_cascode_mirror.cir")
    system = build_system(circuit)
    op = operating_point(circuit)
    again = pickle.loads(pickle.dumps(system))
    assert again.unknowns == system.unknowns and again.banks[0].model is system.banks[0].model
    np.testing.assert_array_equal(residual(again, op.solution.x), residual(system, op.solution.x))
    assert pickle.loads(pickle.dumps(op)) == op
