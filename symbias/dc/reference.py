"""The numeric reference simulator: write a circuit as a SPICE deck, run it, read the results.

A side branch of the DC side used by the tests and the benchmark to check
symbias against ngspice on the same circuit: the process entries and ``.model``
overrides are merged exactly as :func:`~symbias.dc.system.build_system` does,
then mapped onto the simulator's models (see ``docs/dc.md``):

* BJT -> Gummel-Poon with only ``IS BF BR NF NR VAF XTI EG XTB TNOM`` set,
  which is the Ebers-Moll transport form with forward Early effect of
  :mod:`symbias.devices.bjt`;
* MOS -> level 1 with ``VTO KP LAMBDA GAMMA PHI TNOM``; TCV and BEX have no
  level-1 equivalent, so a reference comparison away from TNOM is only
  meaningful for BJT and diode circuits and resistors;
* diode -> the simulator's junction diode with ``IS N RS BV IBV NBV XTI EG
  TNOM CJO VJ M TT FC`` (the parameters :mod:`symbias.devices.diode` models),
  ``area=`` for area times m (ngspice takes no bare area on a diode line).

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist("t\\nV1 a 0 1\\nR1 a b RX\\nQ1 b b 0 QN\\n.model QN npn (BF=80)\\n")
>>> print(reference_deck(c, values={"RX": 1e3}, control="op").splitlines()[2])
R1 a b 1000.0
"""

from __future__ import annotations

import shutil
import subprocess
import tempfile
from pathlib import Path
from typing import Mapping, Sequence

import numpy as np

from ..circuit import Circuit, Element
from ..devices.bjt import BjtModel
from ..devices.diode import DIODE_DEFAULTS
from ..devices.mos import MosModel
from ..process import Process
from .system import element_number, resolved_model_parameters

__all__ = ["reference_deck", "run_reference", "read_wrdata", "simulator", "TIGHT_OPTIONS"]

#: Simulator options for reference runs: tight tolerances, SPICE's usual gmin.
TIGHT_OPTIONS = "reltol=1e-7 abstol=1e-16 vntol=1e-10 gmin=1e-12 itl1=500 itl2=500"

_BJT_KEYS = ("IS", "BF", "BR", "NF", "NR", "VAF", "XTI", "EG", "XTB", "TNOM")
_MOS_KEYS = ("VTO", "KP", "LAMBDA", "GAMMA", "PHI", "TNOM")


def _num(value: float) -> str:
    return repr(float(value))


def _element_line(element: Element, circuit: Circuit, process: Process | None, values) -> str:
    path = circuit.path

    def number(expr, what="value"):
        return _num(element_number(element, expr, values, path, what))

    nodes = " ".join(element.nodes)
    kind = element.kind
    if kind == "R":
        text = f"{element.name} {nodes} {number(element.value)}"
        tc1 = tc2 = None
        if "layer" in element.params and process is not None:
            layer = process.resistor(str(element.params["layer"]))
            tc1, tc2 = layer.tc1, layer.tc2
        if "tc1" in element.params:
            tc1 = element_number(element, element.params["tc1"], values, path, "tc1")
        if "tc2" in element.params:
            tc2 = element_number(element, element.params["tc2"], values, path, "tc2")
        if tc1 is not None:
            text += f" tc1={_num(tc1)}"
        if tc2 is not None:
            text += f" tc2={_num(tc2)}"
        return text
    if kind in ("V", "I"):
        return f"{element.name} {nodes} DC {number(element.value)}"
    if kind in ("C", "L", "E", "G"):
        return f"{element.name} {nodes} {number(element.value)}"
    if kind in ("F", "H"):
        return f"{element.name} {nodes} {element.control} {number(element.value)}"
    if kind == "Q":
        area = 1.0
        for key in ("area", "m"):
            if key in element.params:
                area *= element_number(element, element.params[key], values, path, key)
        return f"{element.name} {' '.join(element.nodes[:3])} {element.model} {_num(area)}"
    if kind == "M":
        sizes = " ".join(f"{k}={number(element.params[k], k)}" for k in ("w", "l", "m") if k in element.params)
        return f"{element.name} {nodes} {element.model} {sizes}".rstrip()
    if kind == "D":
        area = 1.0
        for key in ("area", "m"):
            if key in element.params:
                area *= element_number(element, element.params[key], values, path, key)
        return f"{element.name} {nodes} {element.model} area={_num(area)}"
    raise ValueError(f"cannot export element kind {kind}")  # pragma: no cover - all kinds handled


def _model_line(circuit: Circuit, element: Element, process: Process | None, values) -> str:
    type_, params, tnom = resolved_model_parameters(circuit, element, process, values)
    model = circuit.model_of(element)
    if element.kind == "Q":
        m = BjtModel.from_params(type_, params, tnom)
        fields = {k: getattr(m, k) for k in _BJT_KEYS}
        if fields["VAF"] == float("inf"):
            del fields["VAF"]
        body = " ".join(f"{k}={_num(v)}" for k, v in fields.items())
        return f".model {model.name} {type_} ({body})"
    if element.kind == "D":
        return f".model {model.name} D ({_diode_body(params, tnom)})"
    m = MosModel.from_params(type_, params, tnom)
    body = " ".join(f"{k}={_num(getattr(m, k))}" for k in _MOS_KEYS)
    return f".model {model.name} {type_} (level=1 {body})"


def _diode_body(params: Mapping[str, float], tnom: float) -> str:
    aliases = {"CJ0": "CJO", "CJ": "CJO", "PB": "VJ", "MJ": "M"}
    merged = dict(DIODE_DEFAULTS)
    merged.update({aliases.get(k, k): float(v) for k, v in params.items() if aliases.get(k, k) in DIODE_DEFAULTS})
    fields = {k: v for k, v in merged.items() if np.isfinite(v)}  # no BV: no breakdown; no NBV: N
    fields["TNOM"] = tnom
    return " ".join(f"{k}={_num(v)}" for k, v in fields.items())


def reference_deck(circuit: Circuit, process: Process | None = None, temperature: float = 27.0,
                   values: Mapping[str, float] | None = None, *, control: str = "op",
                   options: str = TIGHT_OPTIONS, guess: Mapping[str, float] | None = None) -> str:
    """Deck text for a SPICE simulator: elements with numbers, resolved models, options, control block.

    Parameters
    ----------
    control : str
        Lines for the ``.control`` block (e.g. ``"op\\nwrdata out.txt v(a)"``).
    guess : mapping, optional
        Node -> voltage written as ``.nodeset`` (the counterpart of the
        solver's ``guess``), to land on the same one of several solutions.
    """
    lines = [circuit.title or "symbias reference deck"]
    lines += [_element_line(e, circuit, process, values) for e in circuit.elements]
    seen: set[str] = set()
    for element in circuit.devices:
        key = (element.model or "").lower()
        if key not in seen:
            seen.add(key)
            lines.append(_model_line(circuit, element, process, values))
    tnom = process.tnom if process is not None else 27.0
    lines.append(f".options {options} temp={_num(temperature)} tnom={_num(tnom)}")
    if guess:
        lines.append(".nodeset " + " ".join(f"v({node.lower()})={_num(v)}" for node, v in guess.items()))
    lines += [".control", *control.strip().splitlines(), ".endc", ".end"]
    return "\n".join(lines) + "\n"


def simulator() -> str | None:
    """Path of the ngspice executable, or None when it is not installed.

    Examples
    --------
    >>> simulator() is None or simulator().endswith("ngspice")
    True
    """
    return shutil.which("ngspice")


def read_wrdata(path: str | Path, count: int) -> np.ndarray:
    """Read a ``wrdata`` file of ``count`` vectors: one row per point, sweep value first.

    ``wrdata`` writes each vector as a (scale, value) column pair; the scale
    is kept once.

    Raises
    ------
    ValueError
        If the file is missing, empty or has the wrong number of columns.
    """
    path = Path(path)
    if not path.exists():
        raise ValueError(f"simulator wrote no {path.name}")
    data = np.atleast_2d(np.loadtxt(path))
    if data.size == 0 or data.shape[1] != 2 * count:
        raise ValueError(f"{path.name}: expected {2 * count} columns, got {data.shape}")
    return np.column_stack([data[:, 0], data[:, 1::2]])


def run_reference(deck_lines: Sequence[str] | str, analysis: str, vectors: Sequence[str], *,
                  timeout: float = 60.0) -> np.ndarray:
    """Run ngspice in batch mode on a deck and return the vectors of one analysis.

    Parameters
    ----------
    deck_lines : str
        A deck from :func:`reference_deck` made with ``control="{control}"``
        (the placeholder is filled in here), or any deck text containing it.
    analysis : str
        ``"op"``, ``"dc Vout 0 5 0.025"``, ``"dc temp -40 125 5"`` ...
    vectors : sequence of str
        ngspice vector names: ``v(out)``, ``i(vout)``, ``@q1[ic]``.

    Returns
    -------
    ndarray
        One row per point: the sweep value (the point index for ``op``), then
        each vector.

    Raises
    ------
    RuntimeError
        When ngspice is missing or fails; ValueError when its output file is not as expected.
    """
    exe = simulator()
    if exe is None:
        raise RuntimeError("ngspice is not installed")
    text = deck_lines if isinstance(deck_lines, str) else "\n".join(deck_lines)
    with tempfile.TemporaryDirectory(prefix="symbias-ref-") as tmp:
        out = Path(tmp) / "out.txt"
        control = f"{analysis}\nwrdata {out} {' '.join(vectors)}\nquit"
        deck = Path(tmp) / "deck.cir"
        deck.write_text(text.replace("{control}", control), encoding="utf-8")
        done = subprocess.run([exe, "-b", str(deck)], capture_output=True, text=True, timeout=timeout)
        if done.returncode != 0:
            raise RuntimeError(f"ngspice failed ({done.returncode}): {done.stderr.strip()[-300:]}")
        return read_wrdata(out, len(vectors))
