"""The library's domain objects: validation on construction, pickling, default quantities, import cost.

File-format checks live in ``test_library_format.py``; the circuit theory of each
topology in the family modules.  Here the outside references are the library files
themselves, read again with ``tomllib`` (the roles as written), and a separate
interpreter (process pool, fresh import).
"""

from __future__ import annotations

import copy
import multiprocessing
import pickle
import subprocess
import sys
import tomllib
from concurrent.futures import ProcessPoolExecutor
from dataclasses import replace
from operator import methodcaller
from pathlib import Path

import pytest

from support.library_checks import library
from symbias.errors import LibraryError
from symbias.library import (
    OPTION_KEYS,
    ExpectedFormula,
    Reference,
    Topology,
    Variable,
    find_topology,
    parse_topology,
)

ROOT = Path(__file__).resolve().parents[2]
GOOD = (ROOT / "topologies" / "bjt-simple-mirror.toml").read_text(encoding="utf-8")


# -- pickling ---------------------------------------------------------------------------------
@pytest.mark.parametrize("identifier", sorted(library()))
def test_every_topology_and_its_parts_pickle(identifier):
    topology = library()[identifier]
    back = pickle.loads(pickle.dumps(topology))
    assert back == topology and back is not topology
    assert back.circuit() == topology.circuit()
    assert back.default_quantities() == topology.default_quantities()
    for part in (*topology.references, *topology.variables, *topology.formulas):
        assert pickle.loads(pickle.dumps(part)) == part


def test_topologies_cross_a_process_pool():
    """Sent to fresh interpreters (spawn) and back: the same objects, the same circuits rebuilt there."""
    chosen = [library()[name] for name in ("bjt-simple-mirror", "mos-regulated-cascode", "brokaw-bandgap")]
    context = multiprocessing.get_context("spawn")
    with ProcessPoolExecutor(max_workers=1, mp_context=context) as pool:
        copies = list(pool.map(copy.copy, chosen))
        circuits = list(pool.map(methodcaller("circuit"), chosen))
        quantities = list(pool.map(methodcaller("default_quantities"), chosen))
    for original, back, circuit, wanted in zip(chosen, copies, circuits, quantities):
        assert back == original
        assert circuit == original.circuit() == back.circuit()
        assert [e.line for e in circuit.elements] == [e.line for e in original.circuit().elements]
        assert wanted == original.default_quantities()


# -- default quantities follow the roles ----------------------------------------------------
def _roles_as_written(topology) -> dict:
    return tomllib.loads(Path(topology.path).read_text(encoding="utf-8"))["roles"]


@pytest.mark.parametrize("identifier", sorted(library()))
def test_default_quantities_follow_the_roles(identifier):
    """Rout at the output role; the transfer from the source the roles name, of the kind its elements give.

    The order (``transfer``, else ``input``, else the first supply, else the first bias
    source) is the one documented in docs/library-format.md, read here from the file itself.
    """
    topology = library()[identifier]
    written = _roles_as_written(topology)
    circuit = topology.circuit()
    quantities = topology.default_quantities()
    output = written["output"]
    assert quantities[0][0] == "output_resistance" and quantities[0][1][0].lower() == output.lower()
    source = (written.get("transfer") or written.get("input") or (written.get("supply") or [None])[0]
              or (written.get("bias") or [None])[0])
    if source is None:
        assert len(quantities) == 1
        return
    quantity, (out, into) = quantities[1]
    assert into == circuit.element(source).name, "the transfer's input is the element the roles name"
    assert out.lower() == output.lower()
    current_out = circuit.has_element(output) and circuit.element(output).kind == "V"
    current_in = circuit.element(source).kind == "I"
    expected = {(True, True): "current_gain", (True, False): "transconductance",
                (False, True): "transimpedance", (False, False): "voltage_gain"}[(current_out, current_in)]
    assert quantity == expected


@pytest.mark.parametrize("identifier,expected", [
    # regression: derive took the single current source (Ib) although the file names Vb1 as the transfer input
    ("mos-regulated-cascode", ("transconductance", ("Vout", "Vb1"))),
    ("bjt-simple-mirror", ("current_gain", ("Vout", "Iref"))),
    ("bjt-cascode-source", ("transconductance", ("Vout", "Vb1"))),
    ("brokaw-bandgap", ("voltage_gain", ("vref", "Vcc"))),
])
def test_default_transfer_of_named_topologies(identifier, expected):
    assert library()[identifier].default_quantities()[1] == expected


def test_default_transfer_matches_the_published_formula_kind():
    """Where a file publishes a transfer formula, the default transfer is of that kind."""
    for topology in library().values():
        published = {f.quantity for f in topology.formulas if f.small_signal and f.quantity != "output_resistance"}
        if published and len(topology.default_quantities()) > 1:
            assert topology.default_quantities()[1][0] in published, topology.id


# -- construction checks -------------------------------------------------------------------
def _good() -> Topology:
    return find_topology("bjt-simple-mirror")


@pytest.mark.parametrize("change,fragment", [
    (dict(id="x\n"), "id 'x\\n'"),
    (dict(id="Mirror"), "id 'Mirror'"),
    (dict(family="mirror"), "family 'mirror'"),
    (dict(title=""), "'title' must not be empty"),
    (dict(references=()), "at least one reference"),
    (dict(references=("Gray",)), "Reference objects"),
    (dict(roles={"input": "Iref"}), "roles.output is required"),
    (dict(roles={"output": "Vout", "sink": "Vout"}), "role 'sink'"),
    (dict(roles={"output": "Vout", "supply": "Vcc"}), "'roles.supply' must be a list"),
    (dict(headroom={"body": "VBE"}), "headroom 'body'"),
    (dict(options={"parasitics": ["rx"]}), "unknown parasitic 'rx'"),
    (dict(netlist_line=0), "netlist_line"),
    (dict(family="reference"), "sizes = 'output-current' does not apply to a reference"),
    (dict(variables=()), "marks one variable sizes = 'output-current'"),
])
def test_topology_checks_itself(change, fragment):
    with pytest.raises(LibraryError) as info:
        replace(_good(), **change)
    assert fragment in str(info.value) and "\n" not in str(info.value)
    assert info.value.path == _good().path


def test_parts_check_themselves():
    with pytest.raises(LibraryError, match="out of range"):
        Reference("A. Author", "A title", "A venue", 19)
    with pytest.raises(LibraryError, match="must be an integer"):
        Reference("A. Author", "A title", "A venue", True)
    with pytest.raises(LibraryError, match="not a finite number"):
        Variable("RE", "1k", float("inf"))
    with pytest.raises(LibraryError, match="not a valid symbol name"):
        Variable("R E", "1k", 1e3)
    with pytest.raises(LibraryError, match="sizes 'output'"):
        Variable("RE", "1k", 1e3, sizes="output")
    with pytest.raises(LibraryError, match="leading-order formulas only"):
        ExpectedFormula("output_resistance", "exact", "ro", large=("ro",))
    with pytest.raises(LibraryError, match="quantity 'rout'"):
        ExpectedFormula("rout", "exact", "ro")
    with pytest.raises(LibraryError, match="unknown small-signal option"):
        ExpectedFormula("output_resistance", "exact", "ro", {"colour": True})


def test_option_keys_are_small_signal_option_fields():
    from dataclasses import fields

    from symbias.devices.options import SmallSignalOptions

    assert set(OPTION_KEYS) <= {f.name for f in fields(SmallSignalOptions)}


# -- parasitics in library files -------------------------------------------------------------
def test_parasitics_option_in_a_library_file():
    text = GOOD.replace("options = { ro = true, match = true, beta = true }",
                        'options = { ro = true, match = true, beta = true, parasitics = ["rb", "rmu"] }')
    text = text.replace("options = { ro = false, match = true, beta = true }",
                        "options = { ro = false, match = true, beta = true, extras = true }")
    topology = parse_topology(text, "mine.toml")
    assert topology.small_signal_options().parasitics == ("rb", "rmu")
    assert topology.formulas[0].small_signal_options().parasitics == ("rb", "re", "rmu")
    assert topology.to_dict()["formulas"][0]["options"]["extras"] is True

    from symbias.analyses import output_resistance

    # the option reaches the expansion: the matched devices' base and base-collector resistances appear
    names = {s.name for s in output_resistance(topology.circuit(), "Vout", topology.small_signal_options()).symbols}
    assert {"rb", "rmu"} <= names and "re" not in names


# -- cost of importing and of reading --------------------------------------------------------
def test_import_loads_neither_sympy_nor_networkx():
    code = ("import sys, symbias.library as L; L.load_library(); L.find_topology('bjt-simple-mirror').circuit(); "
            "print(sorted(m for m in ('sympy', 'networkx', 'numpy') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True, cwd=ROOT)
    assert out.stdout.strip() == "[]", out.stdout + out.stderr


def test_reading_again_reuses_the_parsed_topologies():
    first = find_topology("widlar-bandgap")
    assert find_topology("widlar-bandgap") is first
    assert first.circuit() is first.circuit(), "the circuit is parsed once"


def test_docs_module_runs_as_a_script(tmp_path):
    target = tmp_path / "topologies.md"
    run = [sys.executable, "-W", "error::RuntimeWarning", "-m", "symbias.library.docs", str(target)]
    assert subprocess.run(run + ["--check"], capture_output=True, cwd=ROOT).returncode == 1
    done = subprocess.run(run, capture_output=True, text=True, cwd=ROOT)
    assert done.returncode == 0, done.stderr
    assert target.read_text(encoding="utf-8") == (ROOT / "docs" / "topologies.md").read_text(encoding="utf-8")


def test_library_benchmark_runs():
    """``bench/library.py`` runs end to end (its timing targets are its own business, not asserted here)."""
    done = subprocess.run([sys.executable, str(ROOT / "bench" / "library.py")], capture_output=True, text=True,
                          cwd=ROOT)
    assert done.returncode in (0, 1), done.stderr
    rows = [line for line in done.stdout.splitlines() if "target <=" in line]
    assert len(rows) == 3 and all(line.split()[-1] in ("met", "MISSED") for line in rows)
