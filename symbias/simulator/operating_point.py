"""The simulator's operating point: ngspice's ``op`` with the user's own models, as symbias's OperatingPoint.

Third step of the simulator side: Circuit -> deck (:mod:`~symbias.simulator.deck`)
-> ``ngspice -b`` (:mod:`~symbias.simulator.ngspice`) -> the printed numbers ->
the same frozen :class:`~symbias.dc.results.OperatingPoint` the built-in solver
returns, so every later step (symbol values, formulas at the bias point,
sensitivities, reports) works unchanged.

What is read, per element (names as :mod:`symbias.simulator.families` lists them):

* node voltages ``v(node)``; branch currents of V, L, E, H (``name#branch``,
  SPICE sign); currents of R (``@r[i]``), I (``@i[current]``), G and F
  (``@g[i]``) from the first node through the element to the second;
* per device its family's small-signal values and, for the report, the
  currents: BJT ``c b e`` as reported; MOS ``d`` is the drain current
  ngspice reports, ``s = -d`` (gate and bulk leakage are not read); diode
  ``a = -k`` its current.  Terminal voltages are computed from the node
  voltages.

Regions: MOS from the simulator's threshold and saturation voltage
(*saturation* when the overdrive is positive and ``|VDS| >= VDSAT``, *triode*
below, *subthreshold* below threshold, *cutoff* when no current flows); diode
*forward*, *reverse*, *off* from its voltage and current; BJT *unknown*
(ngspice reports no region, and symbias does not guess one from a model it did
not write).

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN\\n.model QN npn (BF=100 RB=50)\\n")
>>> op = simulator_operating_point(c)  # doctest: +SKIP
>>> sorted(op.devices["Q1"].small_signal)  # doctest: +SKIP
['beta', 'ccs', 'cmu', 'cpi', 'gm', 'rb', 'rmu', 'ro', 'rpi']
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from typing import Mapping

from ..circuit import GROUND, Circuit, Element
from ..dc.results import DeviceOperatingPoint, OperatingPoint
from ..devices.dc_context import element_number
from ..elements import KINDS
from ..errors import SimulatorWarning
from ..process import Process
from .deck import TIGHT_OPTIONS, DeckNames, deck_names, write_deck
from .families import Family, family_of
from .ngspice import ignored_parameters, printed_values, run_ngspice

__all__ = ["SimulatorSettings", "simulator_operating_point", "operating_point_vectors"]

#: Element letters whose current is a branch unknown of the simulator.
_BRANCHES = ("V", "L", "E", "H")
#: Element letters with a current parameter, and its name.
_CURRENTS = {"R": "i", "I": "current", "G": "i", "F": "i"}
#: Below this a device carries no current (A), as the built-in regions count it.
_NO_CURRENT = 1e-12


@dataclass(frozen=True)
class SimulatorSettings:
    """How ngspice is run.

    Parameters
    ----------
    timeout : float
        Seconds before a run is stopped.
    keep : str, optional
        Folder to keep the deck and ngspice's output in (for inspection).
    options : str
        ``.options`` of the deck.
    commands : tuple of str
        Control commands before ``op`` (e.g. ``"optran 0 0 0 0 0 0"`` to forbid the transient start).
    executable : str, optional
        The ngspice to run (default: ``SYMBIAS_NGSPICE``, else ``ngspice`` on PATH).
    """

    timeout: float = 60.0
    keep: str | None = None
    options: str = TIGHT_OPTIONS
    commands: tuple[str, ...] = ()
    executable: str | None = None


def _device_families(circuit: Circuit) -> dict[str, Family]:
    families = {}
    for element in circuit.devices:
        model = circuit.model_of(element)
        families[element.key] = family_of(element.kind, model.type, model.params, path=circuit.path,
                                          line=element.line)
    return families


def operating_point_vectors(circuit: Circuit, names: DeckNames, families: Mapping[str, Family]) -> list[str]:
    """Every ngspice vector the operating point is built from, in a fixed order.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nV1 a 0 1\\nR1 a 0 1k\\n")
    >>> operating_point_vectors(c, deck_names(c), {})
    ['v(a)', 'v1#branch', '@r1[i]']
    """
    vectors = [names.voltage(node) for node in circuit.nodes if node != GROUND]
    for element in circuit.elements:
        if element.kind in _BRANCHES:
            vectors.append(names.branch(element.name))
        elif element.kind in _CURRENTS:
            vectors.append(names.vector_of(element.name, _CURRENTS[element.kind]))
    for element in circuit.devices:
        family = families[element.key]
        vectors += [names.vector_of(element.name, p) for p in family.reads]
        vectors += [f"@{element.model.lower()}[{p}]" for p in family.model_reads]
    return list(dict.fromkeys(vectors))


def simulator_operating_point(circuit: Circuit, process: Process | None = None, temperature: float = 27.0,
                              values: Mapping[str, float] | None = None, *, guess: Mapping[str, float] | None = None,
                              settings: SimulatorSettings = SimulatorSettings()) -> OperatingPoint:
    """ngspice's operating point of ``circuit`` with the circuit's own model cards, as an OperatingPoint.

    Parameters
    ----------
    process : Process, optional
        Supplies parameters a card leaves out (as for the built-in models).
    temperature : float
        degC.
    values : mapping, optional
        Numbers for free symbols.
    guess : mapping, optional
        Node -> voltage, written as ``.nodeset``.

    Raises
    ------
    CircuitError
        A free symbol without a number; a model level whose names symbias does not know.
    SimulatorError
        ngspice missing, failing, not converging, or rejecting a card (its message quoted).
    """
    names = deck_names(circuit)
    families = _device_families(circuit)
    vectors = operating_point_vectors(circuit, names, families)
    control = "\n".join(["set numdgt=15", *settings.commands, "op", *(f"print {v}" for v in vectors), "quit"])
    deck = write_deck(circuit, process, temperature, values, control=control, options=settings.options,
                      guess=guess)
    run = run_ngspice(deck.text, timeout=settings.timeout, keep=settings.keep, where=circuit.path,
                      executable=settings.executable)
    for ignored in ignored_parameters(run.stdout, run.stderr):
        warnings.warn(f"{circuit.path or '<input>'}: ngspice ignored the model parameter {ignored}",
                      SimulatorWarning, stacklevel=2)
    numbers = printed_values(run.stdout, vectors, circuit.path)
    return _operating_point(circuit, names, families, numbers, temperature, values)


def _operating_point(circuit: Circuit, names: DeckNames, families: Mapping[str, Family],
                     numbers: Mapping[str, float], temperature: float, values) -> OperatingPoint:
    voltages = {GROUND: 0.0}
    voltages.update({node: numbers[names.voltage(node)] for node in circuit.nodes if node != GROUND})
    branch = {e.name: numbers[names.branch(e.name)] for e in circuit.elements if e.kind in _BRANCHES}
    element = {e.name: numbers[names.vector_of(e.name, _CURRENTS[e.kind])] for e in circuit.elements
               if e.kind in _CURRENTS}
    devices = {}
    for device in circuit.devices:
        family = families[device.key]
        read = {p: numbers[names.vector_of(device.name, p)] for p in family.reads}
        read.update({p: numbers[f"@{device.model.lower()}[{p}]"] for p in family.model_reads})
        devices[device.name] = _device(circuit, device, family, read, voltages, values)
    return OperatingPoint(title=circuit.title, path=circuit.path, temperature=float(temperature),
                          node_voltages=voltages, branch_currents=branch, element_currents=element, devices=devices,
                          method="ngspice", iterations=0, solution=None)


def _device(circuit: Circuit, device: Element, family: Family, read: Mapping[str, float],
            voltages: Mapping[str, float], values) -> DeviceOperatingPoint:
    model = KINDS[device.kind].hook("dc")
    polarity = circuit.model_of(device).polarity or 1
    pins = dict(zip(KINDS[device.kind].terminals, device.nodes))
    terminal = {key: voltages[pins[a]] - voltages[pins[b]] for key, a, b in
                ((key, model.terminals[i], model.terminals[j]) for key, i, j in model.voltages)}
    units = _units(circuit, device, values)
    if device.kind == "Q":
        currents = {"c": read["ic"], "b": read["ib"], "e": read["ie"]}
        small, limits, region = _bjt(family, read, units), {"vcesat": math.nan}, "unknown"
    elif device.kind == "M":
        currents = {"d": polarity * read["id"], "g": 0.0, "s": -polarity * read["id"], "b": 0.0}
        small, limits, region = _mos(family, read, terminal, polarity)
    else:
        currents = {"a": read["id"], "k": -read["id"]}
        small = {"rd": _inverse(read["gd"]) + read["rs"] / units, "cj": read["cd"]}
        limits, region = {}, _diode_region(terminal["vd"], read["id"])
    return DeviceOperatingPoint(
        name=device.name, type=circuit.model_of(device).type, region=region, currents=currents, voltages=terminal,
        small_signal=small, limits=limits, line=device.line, kind=device.kind, output=model.output,
        polarity=polarity, working=region in model.working_regions, fields=model.fields)


def _units(circuit: Circuit, device: Element, values) -> float:
    """area times m of a BJT or diode (what divides its series resistances)."""
    units = 1.0
    for key in ("area", "m"):
        if key in device.params:
            units *= element_number(device, device.params[key], values, circuit.path, key)
    return units


def _inverse(conductance: float) -> float:
    return 1.0 / conductance if conductance != 0 else math.inf


def _bjt(family: Family, read: Mapping[str, float], units: float) -> dict[str, float]:
    if family.name == "VBIC":
        cpi, cmu, ccs = read["cbe"] + read["cbex"], read["cbc"] + read["cbcx"], read["cbcp"]
    else:
        cpi, cmu, ccs = read["cpi"], read["cmu"] + read["cbx"], read["csub"]
    small = {"gm": read["gm"], "rpi": _inverse(read["gpi"]), "ro": _inverse(read["go"]),
             "beta": read["gm"] / read["gpi"] if read["gpi"] else math.inf, "rmu": _inverse(read["gmu"]),
             "cpi": cpi, "cmu": cmu, "ccs": ccs}
    if read["gx"] > 0:
        small["rb"] = 1.0 / read["gx"]
    if read["re"] > 0:
        small["re"] = read["re"] / units
    return small


def _mos(family: Family, read: Mapping[str, float], terminal: Mapping[str, float],
         polarity: int) -> tuple[dict[str, float], dict[str, float], str]:
    if family.charge_model:
        caps = {"cgs": -read["cgs"], "cgd": -read["cgd"], "cdb": read["capbd"], "csb": read["capbs"]}
        vth = polarity * read["vth"]  # BSIM reports it in the device's own frame
    else:
        caps = {"cgs": read["cgs"], "cgd": read["cgd"], "cdb": read["cbd"], "csb": read["cbs"]}
        vth = read["von"]  # the Meyer models report it with the sign of the circuit
    small = {"gm": read["gm"], "gmb": read.get("gmb", read.get("gmbs", 0.0)), "ro": _inverse(read["gds"]), **caps}
    vgs, vds = terminal["vgs"], terminal["vds"]
    if polarity * vds < 0:  # drain and source swap roles
        vgs, vds = vgs - vds, -vds
    vov = polarity * (vgs - vth)
    vdsat = abs(read["vdsat"])
    if abs(read["id"]) < _NO_CURRENT:
        region = "cutoff"
    elif vov <= 0:
        region = "subthreshold"
    else:
        region = "saturation" if polarity * vds >= vdsat else "triode"
    return small, {"vth": vth, "vov": vov, "vdsat": vdsat}, region


def _diode_region(vd: float, current: float) -> str:
    if vd >= 0 and current >= _NO_CURRENT:
        return "forward"
    return "reverse" if vd < 0 else "off"
