"""The conducting state of a circuit, the other DC states beside it, and the conducting branch of a sweep.

Fifth step of the DC side, above :mod:`symbias.dc.solutions` (the search for
every state).  A self-biased cell (a bandgap core, a PTAT or beta-multiplier
source) has several DC states: the working one and one in which (almost) no
current flows, and a plain Newton solve may land on either.  Every command
that reports numbers at an operating point takes it from
:func:`conducting_point`: it solves as usual, searches for the other states
from many starts, reports the *conducting* state (the one carrying the most
transistor current) and attaches a :class:`StateSurvey` - which states
exist, which was chosen and why, and whether a zero-current state makes a
start-up circuit necessary.  A ``guess`` (node voltages, like a simulator's
nodeset) is the designer's choice and is kept; the survey still lists the
others.

Along a sweep, :func:`branch_losses` finds the swept values at which the
circuit is no longer on its conducting branch: where the total transistor
current falls below :data:`~symbias.dc.solutions.ZERO_FRACTION` of the
conducting state's (the branch ended, as at a supply below the cell's
minimum, or the solver fell onto the zero-current state).

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist('''core with ideal amplifier
... R1 vo a 10k
... R2 vo b 10k
... R3 b c 1k
... Q1 a a 0 QN
... Q2 c c 0 QN 8
... E1 vo 0 a b 1e4
... .model QN npn (IS=1e-16 BF=100)
... ''')
>>> op = conducting_point(c)
>>> round(op.voltage("vo"), 3), op.states.needs_startup, op.states.reason
(1.235, True, 'conducting state')
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Mapping

import numpy as np

from ..circuit import Circuit
from ..process import Process
from .newton import DcOptions, bank_numbers, device_controls
from .report import report_point as report
from .results import OperatingPoint
from .solutions import ZERO_FRACTION, DcState, Solutions, same_state, search_states
from .stepping import solve
from .system import DcSystem, build_system

__all__ = ["StateSurvey", "conducting_point", "device_current", "branch_losses", "branch_test"]

#: Why a state was chosen.
REASONS = ("conducting state", "only state", "guess", "no conducting state")


@dataclass(frozen=True)
class StateSurvey:
    """The DC states found for a circuit and the one an operating point reports.

    Attributes
    ----------
    found : Solutions
        Every state found, lowest transistor current first.
    chosen : int
        Index in ``found.states`` of the state reported.
    reason : str
        ``"conducting state"`` (the one carrying the most transistor current,
        chosen among several), ``"only state"``, ``"guess"`` (picked by the
        designer's node-voltage guess) or ``"no conducting state"`` (every
        state found is a zero-current one).
    """

    found: Solutions
    chosen: int
    reason: str

    @property
    def states(self) -> tuple[DcState, ...]:
        """Every state found, lowest transistor current first."""
        return self.found.states

    @property
    def chosen_state(self) -> DcState:
        """The state reported."""
        return self.found.states[self.chosen]

    @property
    def others(self) -> tuple[DcState, ...]:
        """The states not reported."""
        return tuple(s for i, s in enumerate(self.found.states) if i != self.chosen)

    @property
    def needs_startup(self) -> bool:
        """True when a zero-current state exists beside a working one: the cell needs a start-up circuit."""
        return self.found.needs_startup

    @property
    def several(self) -> bool:
        """True when more than one DC state was found."""
        return len(self.found.states) > 1

    def to_dict(self) -> dict:
        """Plain-dict form for JSON: the choice, the start-up finding and a summary of every state.

        Each state gives ``device_current`` (A, sum of the transistor output
        currents' magnitudes), ``supply_current`` (A, sum of the voltage-source
        currents' magnitudes), ``zero_current``, ``exact`` (false for the all-off
        state held only by leakage), ``chosen``, ``starts`` and ``node_voltages`` (V).
        """
        return {
            "count": len(self.found.states),
            "chosen": self.chosen,
            "reason": self.reason,
            "needs_startup": self.needs_startup,
            "tried": self.found.tried,
            "states": [{"chosen": i == self.chosen, "zero_current": s.zero_current, "exact": s.exact,
                        "device_current": s.device_current, "supply_current": s.supply_current,
                        "starts": list(s.starts),
                        "node_voltages": {k: v for k, v in s.point.node_voltages.items() if k != "0"}}
                       for i, s in enumerate(self.found.states)],
        }


def _choice(found: Solutions, default: int, guessed: bool) -> tuple[int, str]:
    """The index of the state to report and why (see :class:`StateSurvey`)."""
    states = found.states
    if len(states) == 1:
        return 0, "only state"
    if guessed:
        return default, "guess"
    working = found.working
    if working is None:
        return default, "no conducting state"
    return states.index(working), "conducting state"


def conducting_point(circuit: Circuit, process: Process | None = None, temperature: float = 27.0,
                     values: Mapping[str, float] | None = None, *, guess: Mapping[str, float] | None = None,
                     options: DcOptions = DcOptions()) -> OperatingPoint:
    """The DC operating point on the circuit's conducting state, with a :class:`StateSurvey` attached.

    Solves as :func:`~symbias.dc.operating_point.operating_point` does, then
    searches for every other state (:func:`~symbias.dc.solutions.search_states`)
    and reports the one carrying the most transistor current, unless a
    ``guess`` picked the state.  A circuit without nonlinear devices has one
    state and gets no survey (``states`` None).

    Raises
    ------
    CircuitError, ConvergenceError
        As :func:`~symbias.dc.operating_point.operating_point`.
    """
    system = build_system(circuit, process, temperature, values)
    solution = solve(system, guess=guess, options=options)
    point = report(system, solution)
    if not system.banks:
        return point
    found = search_states(system, known=(("operating-point solve", solution),), options=options)
    default = next((i for i, s in enumerate(found.states) if same_state(s.point.solution.x, solution.x,
                                                                         system.node_count)), 0)
    chosen, reason = _choice(found, default, bool(guess))
    survey = StateSurvey(found, chosen, reason)
    if chosen == default:
        return replace(point, states=survey)
    return replace(found.states[chosen].point, states=survey)


def device_current(results) -> np.ndarray:
    """Total transistor current (sum of the output currents' magnitudes, A) at every point of a batch.

    ``results`` is an :class:`~symbias.dc.results.OperatingPoints`; the same sum
    :func:`~symbias.dc.solutions.find_solutions` classifies states by.
    """
    total = np.zeros(results.size)
    for device in results.devices.values():
        total = total + np.abs(device.output_current)
    return total


def branch_test(system: DcSystem, follow: OperatingPoint | None):
    """``accept(points, x)`` for :func:`~symbias.dc.continuation.solve_sweep`: on the followed branch?

    None (accept everything) unless ``follow`` is the conducting one of
    several states; otherwise a solution is on the branch while its total
    transistor current stays at or above
    :data:`~symbias.dc.solutions.ZERO_FRACTION` of that state's.
    """
    survey = getattr(follow, "states", None)
    if survey is None or not survey.several or survey.chosen_state.zero_current:
        return None
    floor = ZERO_FRACTION * survey.chosen_state.device_current

    def accept(points: np.ndarray, x: np.ndarray) -> np.ndarray:
        total = np.zeros(len(points))
        with np.errstate(all="ignore"):  # a diverged sample holds garbage; it is rejected anyway
            for bank, numbers, controls in zip(system.banks, bank_numbers(system, points), device_controls(system, x)):
                currents, _ = bank.model.evaluate(numbers, controls)
                column = bank.model.current_terminals.index(bank.model.terminals.index(bank.model.output))
                total = total + np.abs(currents[..., column]).sum(axis=1)
        return np.nan_to_num(total) >= floor

    return accept


def branch_losses(values: np.ndarray, currents: np.ndarray, reference: float) -> tuple[tuple[float, float], ...]:
    """Ranges of swept values where the circuit is off its conducting branch.

    A point is off the branch when its total transistor current ``currents``
    is below :data:`~symbias.dc.solutions.ZERO_FRACTION` of ``reference``
    (the conducting state's); each run of such points gives one
    ``(first value, last value)`` pair, in sweep order.

    Examples
    --------
    >>> branch_losses(np.array([0.0, 1.0, 2.0, 3.0]), np.array([1e-9, 1e-9, 1e-4, 1e-4]), 1e-4)
    ((0.0, 1.0),)
    """
    lost = np.asarray(currents) < ZERO_FRACTION * reference
    runs = []
    start = None
    for i, flag in enumerate(lost):
        if flag and start is None:
            start = i
        if start is not None and (not flag or i == len(lost) - 1):
            stop = i if flag else i - 1
            runs.append((float(values[start]), float(values[stop])))
            start = None
    return tuple(runs)
