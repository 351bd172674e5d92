"""Benchmark: DC operating points, sweeps and Monte Carlo - symbias against ngspice, same decks, same run.

Run from the repository root::

    python3 bench/dc.py --quick           # seconds: small sizes, prints the tables
    python3 bench/dc.py --write           # full sizes, writes bench/results-dc.md
    python3 bench/dc.py --output PATH     # full sizes, writes PATH

Every per-point figure is the difference between a long and a short run
divided by the difference in points, so start-up (process start, parsing,
set-up) cancels on both sides:

* ngspice: the wall time of whole ``ngspice -b`` processes (best of three)
  on the deck ``symbias.simulator.deck.reference_deck`` writes, with the long
  run long enough to resolve (hundreds of milliseconds);
* symbias: the wall time of the Python call (best of several) on a parsed
  netlist: "solve" includes compiling the circuit (with the samples),
  the nominal solve that seeds a batch, Newton and the report (every node
  voltage, current, region and small-signal value as arrays).

Measurements:

* operating point: one ``op`` per point (ngspice: a ``.control`` loop of
  ``op``); symbias ``operating_point`` (one point per call: no difference
  to take, the best of repeated calls);
* (a) output sweeps of 2,001 points (ngspice ``.dc``; symbias
  ``sweep_source``/``sweep_temperature``, all points in a few batches);
* (b) Monte Carlo: 10,000 mismatch samples of the Wilson mirror, the nmos
  cascode mirror and the bandgap core (symbias ``operating_points`` with
  ``mismatch_samples`` from the invented demo process); ngspice's way is a
  ``.control`` loop of ``altermod`` (each device its own model copy, the same
  Gaussian sigmas) and ``op``, storing the output current;
* peak resident memory of 100,000 samples of a library cell, in a fresh process;
* whole process: ``python -m symbias bias/sweep --json`` against ``ngspice -b``.

Each timed result is checked: sweeps against ngspice's own sweep (1 mV or
0.5 %), a Monte Carlo sample against ngspice given the same parameters; a
disagreement exits with status 1.  Ratios are symbias / ngspice from this run
on this machine.
"""

from __future__ import annotations

import argparse
import os
import resource
import subprocess
import sys
import tempfile
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from symbias.circuit import Model  # noqa: E402
from symbias.dc.mismatch import mismatch_samples, mismatch_sigmas  # noqa: E402
from symbias.dc.operating_point import operating_point, operating_points  # noqa: E402
from symbias.simulator.deck import reference_deck  # noqa: E402
from symbias.simulator.ngspice import read_wrdata, simulator  # noqa: E402
from symbias.dc.sweep import sweep_source, sweep_temperature  # noqa: E402
from symbias.netlist import read_netlist  # noqa: E402
from symbias.process import demo_process_path, load_process  # noqa: E402

DECKS = ROOT / "tests" / "decks"
#: deck -> (swept variable, start, stop)
SWEEPS = {
    "bjt_simple_mirror": ("Vout", 0.0, 5.0),
    "bjt_cascode_mirror": ("Vout", 0.0, 5.0),
    "bjt_wilson_mirror": ("Vout", 0.0, 5.0),
    "mos_cascode_mirror": ("Vout", 0.0, 5.0),
    "widlar_source": ("Vout", 0.0, 5.0),
    "bandgap_core_startup": ("temp", -40.0, 125.0),
}
#: deck -> the output current probed in Monte Carlo
MONTE_CARLO = {"bjt_wilson_mirror": "Vout", "mos_cascode_mirror": "Vout", "bandgap_core_startup": "Vdd"}
MEMORY_CELL = "mos-wide-swing-cascode-mirror"
SIZES = {
    "full": dict(op=(500, 5000), sweep=(201, 2001), ng_sweep=(2001, 200001), mc=(1000, 10000), ng_mc=(200, 2000),
                 memory=100_000, repeats=3, whole=3),
    "quick": dict(op=(50, 500), sweep=(51, 201), ng_sweep=(2001, 20001), mc=(100, 1000), ng_mc=(20, 200),
                  memory=5_000, repeats=1, whole=1),
}


def _best(fn, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return min(times)


def _ngspice(deck: str, control: str, repeats: int, tmp: Path) -> float:
    """Best wall time of ``ngspice -b`` on ``deck`` with ``control`` as its control block."""
    path = tmp / "deck.cir"
    path.write_text(deck.replace("{control}", control + "\nquit"))

    def run():
        done = subprocess.run(["ngspice", "-b", str(path)], capture_output=True, text=True)
        said = (done.stdout + done.stderr).lower().splitlines()
        if done.returncode != 0 or any(line.lstrip().startswith("error") for line in said):
            raise RuntimeError(f"ngspice failed: {(done.stdout + done.stderr)[-400:]}")

    return _best(run, repeats)


def _per_point(short: float, long: float, points: tuple[int, int]) -> float:
    return (long - short) / (points[1] - points[0])


def _dc_line(variable: str, start: float, stop: float, points: int) -> str:
    return f"dc {'temp' if variable == 'temp' else variable} {start} {stop} {(stop - start) / (points - 1)!r}"


# -- operating point and sweeps ---------------------------------------------------------------------


def operating_points_row(name: str, size: dict, tmp: Path) -> dict:
    circuit = read_netlist(DECKS / f"{name}.cir")
    deck = reference_deck(circuit, control="{control}")
    ours = _best(lambda: operating_point(circuit), 20)
    loops = [_ngspice(deck, f"repeat {n}\nop\ndestroy all\nend", size["repeats"], tmp) for n in size["op"]]
    return {"deck": name, "ours": ours, "ngspice": _per_point(*loops, size["op"])}


def sweep_row(name: str, size: dict, tmp: Path) -> dict:
    circuit = read_netlist(DECKS / f"{name}.cir")
    variable, start, stop = SWEEPS[name]
    deck = reference_deck(circuit, control="{control}")

    def ours(points: int):
        if variable == "temp":
            return sweep_temperature(circuit, start, stop, points)
        return sweep_source(circuit, variable, start, stop, points)

    short, long = size["sweep"]
    times = [_best(lambda n=n: ours(n), size["repeats"] + 2) for n in (short, long)]
    ng = [_ngspice(deck, _dc_line(variable, start, stop, n), size["repeats"], tmp) for n in size["ng_sweep"]]
    # correctness: the long sweep against ngspice's own
    probe = "v(vo)" if variable == "temp" else f"i({variable.lower()})"
    out = tmp / "sweep.txt"
    _ngspice(deck, f"{_dc_line(variable, start, stop, long)}\nwrdata {out} {probe}", 1, tmp)
    theirs = read_wrdata(out, 1)[:, 1]
    mine = ours(long).probe(probe)
    scale = np.max(np.abs(theirs))
    # MOS level 1 has a sharp triode edge the model smooths (docs/dc.md): 1 % of full scale there
    limit = 1e-3 if variable == "temp" else (1e-2 if name.startswith("mos") else 5e-3) * scale
    error = float(np.max(np.abs(mine - theirs)))
    return {"deck": name, "points": long, "ours": _per_point(*times, size["sweep"]), "ours_call": times[1] / long,
            "ngspice": _per_point(*ng, size["ng_sweep"]), "error": error, "ok": error <= limit}


# -- Monte Carlo ---------------------------------------------------------------------------------------


def _own_models(circuit):
    """The circuit with every device on its own copy of its model (so one device's parameters can change)."""
    models = dict(circuit.models)
    elements = []
    for element in circuit.elements:
        if element.model is None:
            elements.append(element)
            continue
        model = circuit.model_of(element)
        copy = f"{model.name}_{element.name}"
        models[copy.lower()] = Model(copy, model.type, dict(model.params), model.line)
        elements.append(replace(element, model=copy))
    return replace(circuit, elements=tuple(elements), models=models)


def _altermod_lines(circuit, sigmas: dict, draw) -> list[str]:
    lines = []
    for key, (nominal, sigma) in sigmas.items():
        device, parameter = key.split(".")
        model = f"{circuit.model_of(circuit.element(device)).name}_{device}"
        lines.append(f"altermod {model} {parameter.lower()} = {draw(nominal, sigma)}")
    return lines


def monte_carlo_row(name: str, size: dict, process, tmp: Path) -> dict:
    circuit = read_netlist(DECKS / f"{name}.cir")
    probe = MONTE_CARLO[name]
    sigmas = mismatch_sigmas(circuit, process)

    def ours(count: int):
        return operating_points(circuit, process, mismatch_samples(circuit, process, count, seed=1))

    short, long = size["mc"]
    times = [_best(lambda n=n: ours(n), size["repeats"] + 2) for n in (short, long)]
    result = ours(long)
    own = _own_models(circuit)
    deck = reference_deck(own, process, control="{control}")
    gauss = _altermod_lines(circuit, sigmas, lambda nominal, sigma: f"{nominal!r} + {sigma!r}*sgauss(0)")

    def loop(count: int) -> str:
        body = "\n".join(["let out = vector(%d)" % count, "let run = 0", f"while run < {count}", *gauss, "op",
                          f"let const.out[run] = i({probe.lower()})", "destroy all", "let run = run + 1", "end"])
        return body

    ng = [_ngspice(deck, loop(n), size["repeats"], tmp) for n in size["ng_mc"]]
    # correctness: sample 0 of ours, given to ngspice
    fixed = _altermod_lines(circuit, sigmas, lambda nominal, sigma: "")
    first = mismatch_samples(circuit, process, long, seed=1)
    values = [f"{line}{float(first[key][0])!r}" for line, key in zip(fixed, sigmas)]
    out = tmp / "mc.txt"
    _ngspice(deck, "\n".join([*values, "op", f"wrdata {out} i({probe.lower()})"]), 1, tmp)
    theirs = float(read_wrdata(out, 1)[0, 1])
    mine = float(result.branch_currents[probe][0])
    return {"deck": name, "samples": long, "ours": _per_point(*times, size["mc"]), "ours_call": times[1] / long,
            "ngspice_loop": _per_point(*ng, size["ng_mc"]), "failures": len(result.failures),
            "error": abs(mine - theirs) / abs(theirs), "ok": abs(mine - theirs) <= 5e-3 * abs(theirs)}


def memory_row(count: int) -> dict:
    code = (
        "import resource, sys\n"
        f"sys.path.insert(0, {str(ROOT)!r})\n"
        "from symbias.library import find_topology\n"
        "from symbias.process import load_process, demo_process_path\n"
        "from symbias.dc.mismatch import mismatch_samples\n"
        "from symbias.dc.operating_point import operating_points\n"
        f"top = find_topology({MEMORY_CELL!r}); c = top.circuit(); p = load_process(demo_process_path())\n"
        f"v = top.defaults(); ops = operating_points(c, p, mismatch_samples(c, p, {count}, seed=1, values=v), values=v)\n"
        "print(len(ops.failures), resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)\n"
    )
    start = time.perf_counter()
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    failures, kib = done.stdout.split()
    return {"cell": MEMORY_CELL, "samples": count, "peak_gib": int(kib) / 2**20, "seconds": time.perf_counter() - start,
            "failures": int(failures)}


def whole_process_row(name: str, size: dict, tmp: Path) -> dict:
    path = DECKS / f"{name}.cir"
    deck = reference_deck(read_netlist(path), control="{control}")
    ours = _best(lambda: subprocess.run([sys.executable, "-m", "symbias", "bias", str(path), "--json"],
                                        capture_output=True, check=True, cwd=ROOT), size["whole"])
    return {"deck": name, "ours": ours, "ngspice": _ngspice(deck, "op", size["whole"], tmp)}


# -- report ------------------------------------------------------------------------------------------


def _us(seconds: float) -> str:
    return f"{seconds * 1e6:.2f} us"


def _ratio(a: float, b: float) -> str:
    return f"{a / b:.2f}x" if b > 0 else "n/a"


def report(rows: dict, mode: str, load: tuple[float, float]) -> str:
    lines = [
        "# DC benchmark: symbias against ngspice on the same decks",
        "",
        f"This run: Python {sys.version.split()[0]}, {mode} sizes, {os.cpu_count()} cores, load average "
        f"{load[0]:.1f} at the start and {load[1]:.1f} at the end (other work on the machine slows both sides); "
        "ratio = symbias / ngspice unless said otherwise.",
        "Per-point figures are (long run - short run) / (points in long - points in short) on both sides.",
        "",
        "## (a) Output sweeps, per point",
        "",
        "| deck | points | symbias | (whole call / points) | ngspice `.dc` | ratio | max difference |",
        "|---|---|---|---|---|---|---|",
    ]
    for r in rows["sweep"]:
        lines.append(f"| {r['deck']} | {r['points']} | {_us(r['ours'])} | {_us(r['ours_call'])} | "
                     f"{_us(r['ngspice'])} | {_ratio(r['ours'], r['ngspice'])} | {r['error']:.2e} |")
    dc_point = {r["deck"]: r["ngspice"] for r in rows["sweep"]}
    lines += [
        "",
        "## (b) Monte Carlo (mismatch from the invented demo process), per point",
        "",
        "| deck | samples | symbias | (whole call / samples) | ngspice loop | loop / symbias | symbias / ngspice `.dc` "
        "point | failures | sample 0 vs ngspice |",
        "|---|---|---|---|---|---|---|---|---|",
    ]
    for r in rows["mc"]:
        lines.append(f"| {r['deck']} | {r['samples']} | {_us(r['ours'])} | {_us(r['ours_call'])} | "
                     f"{_us(r['ngspice_loop'])} | {r['ngspice_loop'] / r['ours']:.0f}x | "
                     f"{_ratio(r['ours'], dc_point[r['deck']])} | {r['failures']} | {r['error']:.1e} |")
    m = rows["memory"]
    lines += [
        "",
        "## Memory",
        "",
        f"{m['samples']:,} Monte Carlo samples of `{m['cell']}` (library cell, demo-process mismatch): peak resident "
        f"memory {m['peak_gib']:.2f} GiB, {m['seconds']:.1f} s in a fresh process, {m['failures']} failed samples.",
        "",
        "## Operating point (one per call)",
        "",
        "| deck | symbias (best call) | ngspice `op` (per point in a loop) | ratio |",
        "|---|---|---|---|",
    ]
    for r in rows["op"]:
        lines.append(f"| {r['deck']} | {_us(r['ours'])} | {_us(r['ngspice'])} | {_ratio(r['ours'], r['ngspice'])} |")
    lines += ["", "## Whole process (`symbias bias --json` / `ngspice -b` with `op`)", "",
              "| deck | symbias | ngspice | ratio |", "|---|---|---|---|"]
    for r in rows["whole"]:
        lines.append(f"| {r['deck']} | {r['ours']:.2f} s | {r['ngspice']:.3f} s | {_ratio(r['ours'], r['ngspice'])} |")
    return "\n".join(lines) + "\n"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0],
                                     formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--quick", action="store_true", help="small sizes (seconds), for a smoke run")
    parser.add_argument("--write", action="store_true", help="write bench/results-dc.md")
    parser.add_argument("--output", help="write the results to this file")
    args = parser.parse_args(argv)
    if simulator() is None:
        print("ngspice is not installed: nothing to compare against")
        return 1
    mode = "quick" if args.quick else "full"
    size = SIZES[mode]
    process = load_process(demo_process_path())
    load_start = os.getloadavg()[0]
    with tempfile.TemporaryDirectory(prefix="symbias-bench-") as tmp:
        tmp = Path(tmp)
        rows = {
            "sweep": [sweep_row(name, size, tmp) for name in SWEEPS],
            "mc": [monte_carlo_row(name, size, process, tmp) for name in MONTE_CARLO],
            "memory": memory_row(size["memory"]),
            "op": [operating_points_row(name, size, tmp) for name in SWEEPS],
            "whole": [whole_process_row(name, size, tmp) for name in ("bjt_wilson_mirror", "bandgap_core_startup")],
        }
    text = report(rows, mode, (load_start, os.getloadavg()[0]))
    print(text)
    target = ROOT / "bench" / "results-dc.md" if args.write else (Path(args.output) if args.output else None)
    if target is not None:
        target.write_text(text)
    problems = [r["deck"] for r in rows["sweep"] + rows["mc"] if not r["ok"]]
    if problems:
        print(f"DISAGREEMENT with ngspice: {', '.join(problems)}")
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
