"""Which ngspice instance parameters give each small-signal value, per model family.

Data for the simulator's operating point (:mod:`symbias.simulator.operating_point`).
ngspice reports the linearisation of every device after ``op`` as instance
parameters (``@m1[gm]``); their names depend on the model's family, found here
from the card's type and ``LEVEL``.  The names were read from ngspice 39's
``show`` output for each family (``tests/simulator/test_simulator_op.py`` checks
that every name below exists there).

The mapping onto symbias's symbols (see ``docs/dc.md``):

* MOS: ``gm``, ``gmb`` (``gmb``/``gmbs``), ``ro = 1/gds``; with the charge
  models (BSIM3, BSIM4) ``cgs = -dQg/dVs`` and ``cgd = -dQg/dVd`` (the
  simulator's ``cgs``, ``cgd`` are those derivatives, negative) and the
  junction capacitances ``cdb = capbd``, ``csb = capbs``; with the Meyer
  models (levels 1-3, 6, 9) ``cgs``, ``cgd``, ``cdb = cbd``, ``csb = cbs`` as
  reported.  ``vth`` (``von`` for the Meyer models) and ``vdsat`` give the
  region and the limits;
* BJT (Gummel-Poon, VBIC): ``gm``, ``rpi = 1/gpi``, ``ro = 1/go``,
  ``beta = gm/gpi``, ``rmu = 1/gmu``, ``rb = 1/gx`` (none without base
  resistance), ``re`` = the card's ``RE`` over ``area*m``, ``cpi`` (VBIC:
  ``cbe + cbex``), ``cmu = cmu + cbx`` (VBIC: ``cbc + cbcx``), ``ccs = csub``
  (VBIC: ``cbcp``);
* diode: ``rd = 1/gd + RS/(area m)`` (the whole anode-cathode resistance, as
  symbias's own ``rd``), ``cj = cd``.

Examples
--------
>>> family_of("Q", "npn", {}).name, family_of("M", "nmos", {"LEVEL": 54}).name
('Gummel-Poon', 'BSIM4')
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

from ..errors import CircuitError

__all__ = ["Family", "FAMILIES", "family_of"]


@dataclass(frozen=True)
class Family:
    """One model family: the instance parameters to ask ngspice for and how they become symbias's values.

    Parameters
    ----------
    name : str
    letter : str
        Element letter (Q, M, D).
    levels : tuple of int
        ``LEVEL`` values of the family (the first is the default when a card has none).
    reads : tuple of str
        Instance parameters read at the operating point.
    model_reads : tuple of str
        Model parameters read (series resistances).
    charge_model : bool
        MOS: capacitances are charge derivatives (BSIM) rather than Meyer capacitances.
    """

    name: str
    letter: str
    levels: tuple[int, ...]
    reads: tuple[str, ...]
    model_reads: tuple[str, ...] = ()
    charge_model: bool = False


_MEYER = ("id", "gm", "gds", "gmb", "cgs", "cgd", "cbd", "cbs", "von", "vdsat")
_BSIM = ("id", "gm", "gds", "gmbs", "cgs", "cgd", "capbd", "capbs", "vth", "vdsat")

#: Every family symbias reads from ngspice.
FAMILIES: tuple[Family, ...] = (
    Family("MOS level 1", "M", (1,), _MEYER),
    Family("MOS level 2", "M", (2,), _MEYER),
    Family("MOS level 3", "M", (3,), _MEYER),
    Family("MOS level 6", "M", (6,), tuple("gmbs" if r == "gmb" else r for r in _MEYER)),
    Family("MOS level 9", "M", (9,), _MEYER),
    Family("BSIM3", "M", (8, 49), _BSIM, charge_model=True),
    Family("BSIM4", "M", (14, 54), _BSIM, charge_model=True),
    Family("Gummel-Poon", "Q", (1,), ("ic", "ib", "ie", "gm", "gpi", "go", "gmu", "gx", "cpi", "cmu", "cbx",
                                      "csub"), ("re",)),
    Family("VBIC", "Q", (4,), ("ic", "ib", "ie", "gm", "gpi", "go", "gmu", "gx", "cbe", "cbex", "cbc", "cbcx",
                               "cbcp"), ("re",)),
    Family("junction diode", "D", (1,), ("id", "gd", "cd"), ("rs",)),
)


def family_of(letter: str, model_type: str, params: Mapping[str, object], *, path: str | None = None,
              line: int | None = None) -> Family:
    """The family of a device from its element letter and its card's ``LEVEL`` (default 1).

    Raises
    ------
    CircuitError
        For a level whose parameter names symbias does not know.

    Examples
    --------
    >>> family_of("M", "pmos", {"LEVEL": 8}).charge_model
    True
    """
    level = 1
    for key, value in params.items():
        if key.upper() == "LEVEL":
            level = int(float(value))
    for family in FAMILIES:
        if family.letter == letter and level in family.levels:
            return family
    known = ", ".join(f"{f.name} ({'/'.join(map(str, f.levels))})" for f in FAMILIES if f.letter == letter)
    raise CircuitError(f"{model_type} model level {level}: symbias reads ngspice's small-signal values of {known} "
                       "only", path=path, line=line)
