"""Benchmark: dominant-term approximation time against the exact derivation time, same run.

For every shipped example and every approximation test deck (library-size
circuits, up to about 8 nodes), matched and unmatched, each default quantity
(Rout at the output, current gain) is derived exactly and then approximated
at the default 10 % tolerance.  Figures are printed as ratios: approximation
time over exact derivation time measured in the same run.  The 2 s target of
an approximation is checked here (met / MISSED), not printed as a time.

Run: ``python3 bench/approx.py`` (about a minute).
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
TARGET_SECONDS = 2.0


def _best(function, repeat: int) -> tuple[float, object]:
    best, result = float("inf"), None
    for _ in range(repeat):
        start = time.perf_counter()
        result = function()
        best = min(best, time.perf_counter() - start)
    return best, result


def main() -> int:
    from symbias.analyses import QUANTITIES
    from symbias.approx import approximate
    from symbias.commands.derive import default_quantities
    from symbias.errors import SymbiasError
    from symbias.netlist import read_netlist
    from symbias.network import SmallSignalOptions

    decks = sorted((ROOT / "examples").glob("*.cir")) + sorted((ROOT / "tests" / "decks" / "approx").glob("*.cir"))
    print(f"{'circuit':34} {'model':10} {'quantity':20} {'terms':>11} {'approx/exact':>13} {'kept':>9}  2 s target")
    missed = 0
    for deck in decks:
        circuit = read_netlist(deck)
        for label, options in (("matched", SmallSignalOptions(match=True, beta=True)), ("unmatched", SmallSignalOptions())):
            try:
                wanted = default_quantities(circuit, None)
            except SymbiasError:
                continue
            for quantity, arguments in wanted:
                function = QUANTITIES[quantity][0]
                exact_time, formula = _best(lambda: function(circuit, *arguments, options=options), 3)
                assumptions = ["A >> 1"] if "A" in {s.name for s in formula.symbols} else []
                try:
                    approx_time, result = _best(lambda: approximate(formula, assumptions), 1)
                except SymbiasError as err:
                    print(f"{deck.stem:34} {label:10} {quantity:20} skipped: {err.reason}")
                    continue
                met = approx_time < TARGET_SECONDS
                missed += not met
                (kn, an), (kd, ad) = result.kept
                print(f"{deck.stem:34} {label:10} {quantity:20} {an:>5}/{ad:<5} {approx_time / exact_time:>13.1f} "
                      f"{kn:>4}/{kd:<4}  {'met' if met else 'MISSED'}")
    print(f"\n{missed} case(s) missed the {TARGET_SECONDS:g} s target")
    return 1 if missed else 0


if __name__ == "__main__":
    sys.exit(main())
