"""Benchmark: DC operating point and a 200-point sweep, symbias against ngspice, same decks, same run.

Run from the repository root::

    python3 bench/dc.py            # prints a table, writes bench/results-dc.md

Two kinds of time, reported separately:

* in-process - symbias: the solve alone (netlist already parsed), median of
  several runs; ngspice: its own "Total analysis time" over a ``repeat`` loop
  of the same analysis in one session, divided by the repeats;
* whole-process - a fresh ``python -m symbias bias/sweep ... --json`` against
  a fresh ``ngspice -b`` on the same deck (start-up, parsing, output).

Ratios are symbias time / ngspice time measured in this run on this machine;
nothing is compared with numbers from elsewhere.
"""

from __future__ import annotations

import re
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from symbias.dc.operating_point import operating_point  # noqa: E402
from symbias.dc.reference import reference_deck  # noqa: E402
from symbias.dc.sweep import sweep_source, sweep_temperature  # noqa: E402
from symbias.netlist import read_netlist  # noqa: E402

DECKS = ROOT / "tests" / "decks"
#: deck -> (swept variable, start, stop): 200 points each
CASES = {
    "bjt_simple_mirror": ("Vout", 0.0, 5.0),
    "bjt_cascode_mirror": ("Vout", 0.0, 5.0),
    "bjt_wilson_mirror": ("Vout", 0.0, 5.0),
    "mos_cascode_mirror": ("Vout", 0.0, 5.0),
    "widlar_source": ("Vout", 0.0, 5.0),
    "bandgap_core_startup": ("temp", -40.0, 125.0),
}
POINTS = 200


def _median_time(fn, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def _analysis_line(variable: str, start: float, stop: float) -> str:
    step = (stop - start) / (POINTS - 1)
    name = "temp" if variable == "temp" else variable
    return f"dc {name} {start} {stop} {step!r}"


def _ngspice_in_process(deck: str, analysis: str, repeats: int) -> float:
    control = f"repeat {repeats}\n{analysis}\ndestroy all\nend\nrusage all\nquit"
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "deck.cir"
        path.write_text(deck.replace("{control}", control))
        out = subprocess.run(["ngspice", "-b", str(path)], capture_output=True, text=True).stdout
    found = re.findall(r"Total analysis time \(seconds\) = ([0-9.eE+-]+)", out)
    if not found:
        raise RuntimeError("ngspice printed no analysis time")
    return float(found[-1]) / repeats


def _ngspice_whole(deck: str, analysis: str, repeats: int = 3) -> float:
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "deck.cir"
        out = Path(tmp) / "out.txt"
        path.write_text(deck.replace("{control}", f"{analysis}\nwrdata {out} v(0)\nquit"))
        return _median_time(lambda: subprocess.run(["ngspice", "-b", str(path)], capture_output=True, check=True),
                            repeats)


def _symbias_whole(argv: list[str], repeats: int = 3) -> float:
    command = [sys.executable, "-m", "symbias", *argv, "--json"]
    return _median_time(lambda: subprocess.run(command, capture_output=True, check=True, cwd=ROOT), repeats)


def main() -> int:
    if shutil.which("ngspice") is None:
        print("ngspice is not installed: nothing to compare against")
        return 1
    rows = []
    for name, (variable, start, stop) in CASES.items():
        path = DECKS / f"{name}.cir"
        circuit = read_netlist(path)
        deck = reference_deck(circuit, control="{control}")
        if variable == "temp":
            sweep = lambda: sweep_temperature(circuit, start, stop, POINTS)  # noqa: E731
            sweep_args = ["sweep", str(path), "--vary", "temp"]
        else:
            sweep = lambda: sweep_source(circuit, variable, start, stop, POINTS)  # noqa: E731
            sweep_args = ["sweep", str(path), "--vary", variable]
        sweep_args += ["--from", str(start), "--to", str(stop), "--points", str(POINTS)]
        ours_op = _median_time(lambda: operating_point(circuit), 20)
        ours_sweep = _median_time(sweep, 3)
        ref_op = _ngspice_in_process(deck, "op", 200)
        ref_sweep = _ngspice_in_process(deck, _analysis_line(variable, start, stop), 20)
        whole_op = _symbias_whole(["bias", str(path)])
        whole_sweep = _symbias_whole(sweep_args)
        ref_whole_op = _ngspice_whole(deck, "op")
        ref_whole_sweep = _ngspice_whole(deck, _analysis_line(variable, start, stop))
        rows.append((name, ours_op, ref_op, ours_sweep, ref_sweep, whole_op, ref_whole_op, whole_sweep,
                     ref_whole_sweep))

    def ratio(a: float, b: float) -> str:
        return f"{a / b:.0f}x" if b > 0 else "n/a"

    lines = [
        "# DC benchmark: symbias against ngspice on the same decks",
        "",
        f"Machine: this run; Python {sys.version.split()[0]}; {POINTS}-point sweeps. Ratio = symbias / ngspice.",
        "",
        "## In-process (solve only)",
        "",
        "| circuit | OP symbias | OP ngspice | ratio | sweep symbias | sweep ngspice | ratio |",
        "|---|---|---|---|---|---|---|",
    ]
    for r in rows:
        lines.append(f"| {r[0]} | {r[1] * 1e3:.2f} ms | {r[2] * 1e3:.3f} ms | {ratio(r[1], r[2])} | "
                     f"{r[3] * 1e3:.1f} ms | {r[4] * 1e3:.2f} ms | {ratio(r[3], r[4])} |")
    lines += [
        "",
        "## Whole process (start-up, parsing, output)",
        "",
        "| circuit | bias | ngspice op | ratio | sweep | ngspice dc | ratio |",
        "|---|---|---|---|---|---|---|",
    ]
    for r in rows:
        lines.append(f"| {r[0]} | {r[5]:.2f} s | {r[6]:.3f} s | {ratio(r[5], r[6])} | "
                     f"{r[7]:.2f} s | {r[8]:.3f} s | {ratio(r[7], r[8])} |")
    text = "\n".join(lines) + "\n"
    print(text)
    (ROOT / "bench" / "results-dc.md").write_text(text)
    return 0


if __name__ == "__main__":
    sys.exit(main())
