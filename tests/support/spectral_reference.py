"""ngspice .ac and .noise runs on the same deck, for the frequency and noise tests.

:func:`symbias.simulator.deck.reference_deck` writes the DC parameters of each
model; the capacitance, series-resistance and noise parameters of the
netlist's ``.model`` cards (:data:`EXTRA`) are appended here to the written
model lines, so the simulator sees the same card.  The input source of an
analysis gets ``AC 1``; a current output is read through a
current-controlled voltage source of 1 ohm (``Hmeas``), which the simulator
takes as noiseless, so ``onoise_spectrum`` is then the output noise current.
"""

from __future__ import annotations

import numpy as np

from symbias.simulator.deck import reference_deck
from symbias.simulator.ngspice import run_reference

__all__ = ["EXTRA", "spectral_deck", "ngspice_noise", "ngspice_ac"]

#: Model parameters reference_deck does not write and these tests need.
EXTRA = ("CJE", "VJE", "MJE", "CJC", "VJC", "MJC", "CJS", "VJS", "MJS", "TF", "FC", "RB", "RE", "KF", "AF", "TOX",
         "CGSO", "CGDO", "CBD", "CBS", "PB", "MJ")


def spectral_deck(circuit, ac_source: str, extra_lines: tuple[str, ...] = (), process=None, values=None) -> str:
    """The reference deck with the extra model parameters, ``AC 1`` on ``ac_source`` and extra element lines."""
    text = reference_deck(circuit, process, values=values, control="{control}")
    lines = text.splitlines()
    cards = {m.name.lower(): m for m in circuit.models.values()}
    for i, line in enumerate(lines):
        if line.lower().startswith(".model"):
            name = line.split()[1].lower()
            extra = [f"{k}={float(v.evaluate({})):.12g}" for k, v in cards[name].params.items() if k in EXTRA]
            lines[i] = line[:-1] + " " + " ".join(extra) + ")"
        elif line.split() and line.split()[0].lower() == ac_source.lower():
            lines[i] = line + " AC 1"
    control = lines.index(".control")
    return "\n".join(lines[:control] + list(extra_lines) + lines[control:]) + "\n"


def ngspice_noise(circuit, output: str, source: str, start: float, stop: float, per_decade: int,
                  **deck) -> tuple[np.ndarray, np.ndarray]:
    """(frequencies, output noise density in A^2/Hz or V^2/Hz) from ngspice's .noise.

    ``output`` is a voltage source (its current, through ``Hmeas``) or a node.
    """
    if circuit.has_element(output):
        text = spectral_deck(circuit, source, (f"Hmeas meas 0 {output} 1",), **deck)
        probe = "v(meas)"
    else:
        text = spectral_deck(circuit, source, **deck)
        probe = f"v({output.lower()})"
    data = run_reference(text, f"noise {probe} {source} dec {per_decade} {start:g} {stop:g}\nsetplot noise1",
                         ["onoise_spectrum"])
    return data[:, 0], data[:, 1] ** 2


def ngspice_ac(circuit, source: str, vector: str, start: float, stop: float, per_decade: int,
               **deck) -> tuple[np.ndarray, np.ndarray]:
    """(frequencies, complex vector) of an .ac run with ``AC 1`` on ``source``."""
    text = spectral_deck(circuit, source, **deck)
    data = run_reference(text, f"ac dec {per_decade} {start:g} {stop:g}", [f"real({vector})", f"imag({vector})"])
    return data[:, 0], data[:, 1] + 1j * data[:, 2]
