"""Benchmark: dominant-term approximation time against the exact derivation time, same run.

Cases (library-size circuits, up to about 8 nodes):

- every topology of the shipped library (:func:`symbias.library.load_library`):
  the output resistance at its output role and its main transfer, derived
  with the topology's own small-signal options, as ``symbias show`` does;
- every shipped example and every approximation test deck, matched (beta
  form) and unmatched, each default quantity of ``symbias derive``.

For each case the exact derivation is timed (best of 3), then the
leading-order step of ``symbias show``: :func:`symbias.approx.approximate`
at the default 10 % tolerance plus the display form when a shorter form is
found.  That step runs with sympy's cache cleared each time, and the best of
3 runs counts (other jobs share the machine).  Figures are printed as ratios
(approximation time over exact derivation time, both measured in this run);
the 2 s target of an approximation is checked here (met / MISSED), not
printed as a time.  The exit status is 0 when every case meets the target.

Run: ``python3 bench/approx.py`` (about a minute).
"""

from __future__ import annotations

import os
import platform
import sys
import time
from pathlib import Path
from typing import Any, Callable, Iterator

ROOT = Path(__file__).resolve().parents[1]
TARGET_SECONDS = 2.0
EXACT_REPEAT = 3
APPROX_REPEAT = 3


def _best(function: Callable[[], Any], repeat: int, before: Callable[[], None] = lambda: None) -> tuple[float, Any]:
    best, result = float("inf"), None
    for _ in range(repeat):
        before()
        start = time.perf_counter()
        result = function()
        best = min(best, time.perf_counter() - start)
    return best, result


def _library_cases() -> Iterator[tuple[str, str, str, Callable[[], Any], list[str]]]:
    """(circuit, model, quantity, exact derivation, assumptions) for every library topology, as `show` derives."""
    from symbias.analyses import QUANTITIES, output_resistance
    from symbias.library import load_library

    for topology in sorted(load_library().values(), key=lambda t: t.id):
        circuit = topology.circuit()
        options = topology.small_signal_options()
        output = topology.roles["output"]
        yield (topology.id, "library", "output_resistance",
               lambda c=circuit, p=output, o=options: output_resistance(c, p, o), [])
        transfer = topology.transfer(circuit)
        if transfer is not None:
            quantity, out, source = transfer
            function = QUANTITIES[quantity][0]
            yield (topology.id, "library", quantity,
                   lambda f=function, c=circuit, a=(out, source), o=options: f(c, *a, o), [])


def _deck_cases() -> Iterator[tuple[str, str, str, Callable[[], Any], list[str]]]:
    """The same for the shipped examples and the approximation test decks, matched and unmatched."""
    from symbias.analyses import QUANTITIES
    from symbias.errors import SymbiasError
    from symbias.pipeline import Target, default_quantities
    from symbias.netlist import read_netlist
    from symbias.devices.options import SmallSignalOptions

    decks = sorted((ROOT / "examples").glob("*.cir")) + sorted((ROOT / "tests" / "decks" / "approx").glob("*.cir"))
    models = (("matched", SmallSignalOptions(match=True, beta=True)), ("unmatched", SmallSignalOptions()))
    for deck in decks:
        circuit = read_netlist(deck)
        try:
            wanted = [(q.kind, q.arguments) for q in default_quantities(Target(circuit))]
        except SymbiasError:
            continue
        for label, options in models:
            for quantity, arguments in wanted:
                function = QUANTITIES[quantity][0]
                yield (deck.stem, label, quantity,
                       lambda f=function, c=circuit, a=arguments, o=options: f(c, *a, options=o), None)


def _leading_order_step(formula, assumptions: list[str]):
    """What `symbias show` does after the derivation: approximate, display form when shorter."""
    from symbias.approx import approximate

    result = approximate(formula, assumptions)
    (kept_num, all_num), (kept_den, all_den) = result.kept
    if (kept_num, kept_den) != (all_num, all_den):
        str(result.expr)
    return result


def main() -> int:
    import sympy
    from sympy.core.cache import clear_cache

    from symbias.errors import SymbiasError

    load = ", ".join(f"{v:.1f}" for v in os.getloadavg()) if hasattr(os, "getloadavg") else "n/a"
    print(f"Python {platform.python_version()}, sympy {sympy.__version__}, {os.cpu_count()} CPUs, "
          f"load average at start {load}")
    print(f"approximation time over exact derivation time, same run; target: every case under {TARGET_SECONDS:g} s\n")
    header = (f"{'circuit':34} {'model':10} {'quantity':18} {'terms':>11} {'symbols':>7} {'approx/exact':>13} "
              f"{'kept':>11}  target")
    print(header)
    print("-" * len(header))
    _leading_order_step(_warm_up_formula(), [])  # imports and first-call costs stay out of the figures
    missed, cases, worst = 0, 0, (0.0, "")
    for circuit, label, quantity, derive, assumptions in [*_library_cases(), *_deck_cases()]:
        exact_time, formula = _best(derive, EXACT_REPEAT)
        if assumptions is None:
            assumptions = ["A >> 1"] if "A" in {s.name for s in formula.symbols} else []
        name = f"{circuit:34} {label:10} {quantity:18} {formula.nterms[0]:>5}/{formula.nterms[1]:<5} " \
               f"{len(formula.symbols):>7}"
        try:
            approx_time, result = _best(lambda: _leading_order_step(formula, assumptions), APPROX_REPEAT,
                                        before=clear_cache)
        except SymbiasError as err:
            print(f"{name} skipped: {err.reason}")
            continue
        cases += 1
        met = approx_time < TARGET_SECONDS
        missed += not met
        ratio = approx_time / exact_time
        worst = max(worst, (ratio, f"{circuit} {label} {quantity}"))
        (kn, an), (kd, ad) = result.kept
        kept = "exact form" if (kn, kd) == (an, ad) else f"{kn}/{kd}"
        print(f"{name} {ratio:>13.1f} {kept:>11}  {'met' if met else 'MISSED'}")
    print(f"\n{cases} cases; largest approx/exact ratio {worst[0]:.1f} ({worst[1]}); "
          f"{missed} case(s) missed the {TARGET_SECONDS:g} s target")
    return 1 if missed else 0


def _warm_up_formula():
    from symbias.analyses import output_resistance
    from symbias.netlist import read_netlist
    from symbias.devices.options import SmallSignalOptions

    return output_resistance(read_netlist(ROOT / "examples" / "wilson_mirror.cir"), "Vout", SmallSignalOptions())


if __name__ == "__main__":
    sys.exit(main())
