"""Every growth has a named limit, checked before the work starts, ending in a one-line LimitError.

Findings of the adversarial run (hangs, a RecursionError, aborts inside the
polynomial library at 3-6 GB, a number too long to print): each input below
used to hang or crash and must now end with exit status 2 and one line that
names the limit (``MAX_...``) and says what to do instead.  (How long a case
may take is the adversarial run's business: it kills a case after 20 s.)  The
limits themselves are listed in ``docs/limits.md`` and :mod:`symbias.limits`.
"""

from __future__ import annotations

import itertools
import os
import subprocess
import sys
from pathlib import Path

import pytest

from symbias import limits
from support.cli_checks import one_error_line, run_cli

ROOT = Path(__file__).resolve().parents[2]
BJT = ".model QN npn (BF=100 VAF=50)\n"


def _squaring_chain(start: str) -> str:
    lines = ["t", f".param a0={start}"] + [f".param a{k + 1}={{a{k}*a{k}}}" for k in range(30)]
    return "\n".join(lines + ["I1 0 x 1m", "R1 x 0 {a30}"]) + "\n"


def _cascade(n: int) -> str:
    lines = ["cascade", "Iref 0 b0 1m", "Vout out 0 5"]
    for i in range(n):
        collector, emitter = ("out" if i == n - 1 else f"n{i + 1}"), ("0" if i == 0 else f"n{i}")
        lines += [f"Q{i} {collector} b{i} {emitter} QN", f"Rb{i} b{i} 0 10k"] + ([f"Rc{i} b{i} b{i - 1} 1k"] if i else [])
    return "\n".join(lines) + "\n" + BJT


def _ladder(sections: int, series: str = "1k", shunt: str = "1k") -> str:
    body = "".join(f"R{i} n{i} n{i + 1} {series}\nRg{i} n{i + 1} 0 {shunt}\n" for i in range(sections))
    return "t\nI1 0 n0 1m\n" + body


def _dense(n: int) -> str:
    pairs = "".join(f"R{i}_{j} n{i} n{j} {1 + i + j}\n" for i, j in itertools.combinations(range(n), 2))
    return "t\nI1 0 n0 1m\n" + pairs + "".join(f"Rg{i} n{i} 0 1k\n" for i in range(n))


def _bomb(levels: int) -> str:
    subckts = "".join(f".subckt c{k} a b\nX1 a m c{k + 1}\nX2 m b c{k + 1}\n.ends\n" for k in range(levels))
    return "t\nI1 0 x 1m\nX0 x 0 c0\n" + subckts + f".subckt c{levels} a b\nR1 a b 1k\n.ends\n"


# (id, netlist, command arguments after the file, the limit named)
CASES = [
    ("param-chain-of-numbers", _squaring_chain("2"), ["derive", "--rout", "x"], "MAX_BITS|out of range"),
    ("param-chain-of-symbols", _squaring_chain("y"), ["derive", "--rout", "x"], "MAX_EXPONENT|MAX_NODES"),
    ("20000-term-sum", "t\nI1 0 x 1m\nR1 x 0 {" + "+".join(f"x{i}" for i in range(20000)) + "}\n",
     ["derive", "--rout", "x"], "MAX_LENGTH"),
    ("2500-term-sum", "t\nI1 0 x 1m\nR1 x 0 {" + "+".join(f"x{i}" for i in range(2500)) + "}\n",
     ["derive", "--rout", "x"], "MAX_NODES"),
    ("600-wrapping-param-steps", "t\n.param a0=x\n" + "".join(f".param a{k + 1}={{(a{k}+1)*y}}\n" for k in range(600))
     + "I1 0 n 1m\nR1 n 0 {a600}\n", ["derive", "--rout", "n"], "MAX_DEPTH"),
    ("200-nested-parentheses", "t\nI1 0 x 1m\nR1 x 0 {" + "(" * 200 + "1" + ")" * 200 + "}\n",
     ["derive", "--rout", "x"], "MAX_NESTING"),
    ("sweep-200000-points", "", ["sweep", "--vary", "Vout", "--from", "0", "--to", "5", "--points", "200000"],
     "MAX_SWEEP_POINTS"),
    ("sweep-1e9-points", "", ["sweep", "--vary", "Vout", "--from", "0", "--to", "5", "--points", "1000000000"],
     "MAX_SWEEP_POINTS"),
    ("sweep-1e20-points", "", ["sweep", "--vary", "Vout", "--from", "0", "--to", "5", "--points",
                               "99999999999999999999"], "MAX_SWEEP_POINTS"),
    ("symbolic-8-transistor-cascade", _cascade(8), ["derive", "--rout", "Vout", "--level", "full", "--symbolic"],
     "MAX_TERM_ESTIMATE"),
    ("printing-400000-terms", _cascade(6), ["derive", "--rout", "Vout", "--symbolic", "--json"], "MAX_PRINTED_TERMS"),
    ("typesetting-14000-terms", "t\nVdd n1 0 3.3\nR2 n2 0 10k\nR3 n3 n1 100k\nQ0 n2 0 n1 QP m=3\n"
     "M1 0 n3 n3 0 NM W=10u L=1u\nC3 0 n3 1p\nQ4 0 n2 n3 QP 2\nRx5 n2 n1 1meg\n.model QP pnp (BF=50 VAF=30)\n"
     ".model NM nmos (VTO=0.5 KP=200u LAMBDA=0.05)\n", ["derive", "--rout", "n2", "--level", "full", "--latex"],
     "MAX_TYPESET_TERMS"),
    ("approximating-400000-terms", _cascade(6), ["derive", "--rout", "Vout", "--symbolic", "--approx"],
     "MAX_DERIVED_TERMS"),
    ("sensitivities-of-400000-terms", _cascade(6), ["derive", "--rout", "Vout", "--symbolic", "--sensitivity"],
     "MAX_DERIVED_TERMS"),
    ("2000-parallel-bjts", "t\nI1 0 a 1m\n" + "".join(f"Q{i} a a 0 QN\n" for i in range(2000)) + "Vout a 0 1\n" + BJT,
     ["derive", "--rout", "Vout"], "MAX_SYMBOLS"),
    ("10000-resistor-ladder", _ladder(5000), ["derive", "--rout", "n0"], "MAX_ELEMENTS"),
    ("10000-resistor-ladder-bias", _ladder(5000), ["bias"], "MAX_ELEMENTS"),
    ("500-section-ladder", _ladder(500), ["derive", "--rout", "n0"], "MAX_UNKNOWNS"),
    ("dense-18-node-network", _dense(18), ["derive", "--rout", "n0"], "MAX_MINOR_STATES"),
    ("numbers-too-long-to-print", _ladder(20, "1e300", "3e-300"), ["derive", "--rout", "n0"], "MAX_RESULT_BITS"),
    ("subcircuit-bomb", _bomb(20), ["derive", "--rout", "x"], "MAX_ELEMENTS"),
    ("subcircuit-in-itself", "t\nI1 0 x 1m\nX1 x 0 c\n.subckt c a b\nX1 a b c\n.ends\n", ["derive", "--rout", "x"],
     "MAX_SUBCIRCUIT_DEPTH"),
]


@pytest.mark.parametrize(("text", "command", "limit"), [pytest.param(*c[1:], id=c[0]) for c in CASES])
def test_growth_ends_at_once_in_one_line_naming_its_limit(tmp_path, monkeypatch, capsys, text, command, limit):
    netlist = text or (ROOT / "examples/simple_mirror.cir").read_text()
    if limit == "MAX_PRINTED_TERMS":
        # the real limit (1.5 million terms) takes a 13-node symbolic chain to pass; the check is the same
        monkeypatch.setattr(limits, "MAX_PRINTED_TERMS", 200_000)
    status, out, err, changed = run_cli(tmp_path, monkeypatch, capsys, [command[0], "deck.cir", *command[1:]],
                                        {"deck.cir": netlist})
    assert status == 2 and out == "" and not changed, err
    cause = one_error_line(err)["cause"]
    assert any(name in err for name in limit.split("|")), err
    if "MAX_" in cause:
        assert ";" in cause, "the message says what to do instead"


def test_the_numeric_route_still_solves_what_the_exact_solve_refuses(tmp_path, monkeypatch, capsys):
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, ["bias", "deck.cir", "--json"],
                                  {"deck.cir": _ladder(500)})
    assert status == 0, err


def test_a_large_input_file_is_refused_before_it_is_read(tmp_path, monkeypatch, capsys):
    with open(tmp_path / "deck.cir", "wb") as stream:
        stream.write(b"t\n")
        stream.truncate(limits.MAX_FILE_BYTES + 1)
    status, out, err, _ = run_cli(tmp_path, monkeypatch, capsys, ["derive", "deck.cir"])
    assert status == 2 and "MAX_FILE_BYTES" in one_error_line(err)["cause"]


@pytest.mark.parametrize("path", sorted((ROOT / "examples").glob("*.cir")) + sorted((ROOT / "topologies").glob("*.toml")),
                         ids=lambda p: p.stem)
def test_real_work_stays_within_the_limits(path):
    """Every shipped circuit derives its default quantities with every passive made a symbol (no limit refuses it)."""
    from symbias.devices.options import SmallSignalOptions
    from symbias.errors import LimitError, SymbiasError
    from symbias.pipeline import DeriveRequest, derive, load_target

    target = load_target(path)
    try:
        derivation = derive(target, DeriveRequest(options=SmallSignalOptions(symbolic_passives=True,
                                                                             match=target.topology is not None)))
    except LimitError as err:  # pragma: no cover - the failure this test is for
        pytest.fail(f"a limit refused real work: {err}")
    except SymbiasError as err:  # a netlist without a default output: not this test's business
        pytest.skip(str(err))
    assert all(sum(r.formula.nterms) > 0 for r in derivation.results)


@pytest.mark.parametrize("name", ["simple_mirror", "wilson_mirror", "widlar_source", "degenerated_mirror"])
def test_the_full_model_level_stays_within_the_limits(name):
    from symbias.devices.options import SmallSignalOptions
    from symbias.pipeline import DeriveRequest, derive, load_target

    derivation = derive(load_target(ROOT / "examples" / f"{name}.cir"),
                        DeriveRequest(options=SmallSignalOptions.level("full")))
    assert derivation.results


#: Runs the console script and writes the process's own peak resident memory (VmHWM, which starts
#: afresh at exec, unlike the rusage of a child forked from a large test process) to a file.
_PEAK_WRAPPER = """
import atexit, sys
def report(path=sys.argv[1]):
    with open(path, "w") as out:
        out.write(next(line for line in open("/proc/self/status") if line.startswith("VmHWM")))
atexit.register(report)
sys.argv = ["symbias"] + sys.argv[2:]
from symbias.cli import run
run()
"""


@pytest.mark.skipif(not Path("/proc/self/status").exists(), reason="the guard reads /proc")
def test_the_memory_guard_turns_exhaustion_into_one_line(tmp_path):
    """The console script under a 30 MiB guard: a derivation that must load sympy ends in one line, near the limit.

    Run as a fresh process (as a user runs it), which reports its own peak resident memory.  (Memory
    taken inside the polynomial library cannot be reported this way: FLINT aborts on a failed allocation,
    which is why the size limits are checked before the work; see docs/limits.md.)
    """
    env = {**os.environ, limits.MEMORY_VARIABLE: "30M", "COLUMNS": "100"}
    peak_file = tmp_path / "peak"
    done = subprocess.run([sys.executable, "-c", _PEAK_WRAPPER, str(peak_file), "derive",
                           str(ROOT / "examples/simple_mirror.cir"), "--latex"], capture_output=True, text=True,
                          env=env, cwd=tmp_path, timeout=120)
    assert done.returncode == 2 and done.stdout == "", done.stderr
    error = one_error_line(done.stderr)
    assert "memory limit 0.0293 GiB" in error["cause"] and "SYMBIAS_MEMORY_LIMIT" in error["cause"]
    peak_kib = int(peak_file.read_text().split()[1])
    assert peak_kib < 120 * 1024, f"peak {peak_kib} KiB under a 30 MiB guard"


@pytest.mark.parametrize(("text", "size"), [("4G", 4 * 2**30), ("900M", 900 * 2**20), ("1.5GiB", None),
                                            ("off", None), ("", limits.MEMORY_LIMIT)])
def test_the_memory_limit_is_read_from_the_environment(text, size):
    if text == "1.5GiB":
        size = int(1.5 * 2**30)
    assert limits.memory_limit({limits.MEMORY_VARIABLE: text}) == size
