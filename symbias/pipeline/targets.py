"""What is analysed and with which numbers: targets and design inputs.

Pipeline step 1.  A *target* is a circuit with, when it comes from the
topology library, its :class:`~symbias.library.Topology` (roles, design
variables, published formulas).  *Design inputs* are what turns the circuit
into numbers: a process file, a temperature, values for free symbols (the
library's defaults, overridden by the caller's) and starting guesses for
node voltages.

Examples
--------
>>> target = load_target("bjt-widlar-source")
>>> target.topology.id, target.roles["output"]
('bjt-widlar-source', 'Vout')
>>> inputs = design_inputs(target, values={"RE": 5e3})
>>> inputs.values["RE"], inputs.temperature
(5000.0, 27.0)
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any, Iterable, Mapping

from ..circuit import Circuit
from ..errors import UsageError

__all__ = ["Target", "load_target", "target_from_text", "DesignInputs", "design_inputs", "MODEL_SOURCES"]

#: Where bias values come from: symbias's own device models, or ngspice with the netlist's own model cards.
MODEL_SOURCES = ("built-in", "ngspice")


@dataclass(frozen=True)
class Target:
    """A circuit to analyse, with its library topology when it has one.

    Parameters
    ----------
    circuit : Circuit
    topology : Topology or None
        The library entry it came from.
    source : str
        What the caller named: a file path or a library identifier.
    """

    circuit: Circuit
    topology: Any = None
    source: str = ""

    @property
    def roles(self) -> Mapping[str, Any]:
        """The topology's element roles (empty for a plain netlist)."""
        return dict(self.topology.roles) if self.topology is not None else {}

    @property
    def title(self) -> str:
        """The circuit's title line."""
        return self.circuit.title

    @property
    def where(self) -> str:
        """Where the circuit came from, for headers and messages."""
        return self.circuit.path or self.source


def load_target(name: str | Path, library_dirs: Iterable[str | Path] = ()) -> Target:
    """Resolve a netlist file, a library ``.toml`` file or a library identifier.

    Raises
    ------
    NetlistError, CircuitError, LibraryError
        When the file cannot be read or the identifier is unknown.

    Examples
    --------
    >>> load_target("examples/simple_mirror.cir").topology is None
    True
    """
    from ..library import resolve

    circuit, topology = resolve(str(name), extra_dirs=tuple(library_dirs))
    return Target(circuit, topology, str(name))


def target_from_text(text: str, path: str | None = None) -> Target:
    """A target from netlist text (the first line is the title).

    Examples
    --------
    >>> target_from_text("t\\nI1 0 a 1m\\nR1 a 0 1k\\n").circuit.nodes
    ('0', 'a')
    """
    from ..netlist import parse_netlist

    return Target(parse_netlist(text, path), None, path or "<text>")


@dataclass(frozen=True)
class DesignInputs:
    """The numbers a circuit needs: process, temperature, free-symbol values, node guesses.

    Parameters
    ----------
    process : Process or None
        Device parameters; the netlist's ``.model`` cards override them.
    temperature : float
        degC.
    values : mapping of str to float
        Numbers for free symbols (library defaults overridden by the caller's).
    guess : mapping of str to float
        Starting node voltages, to pick one of several DC solutions.
    models : {"built-in", "ngspice"}
        Source of the operating point and its small-signal values: symbias's
        own device models, or ngspice run on the netlist's own model cards
        (:mod:`symbias.simulator`).
    corners : tuple of str
        Sections of the netlist's ``.lib`` files to read instead of the ones
        written (process corners); empty: as written.
    keep_deck : str or None
        Folder where the simulator's deck and output are kept for inspection.
    """

    process: Any = None
    temperature: float = 27.0
    values: Mapping[str, float] = field(default_factory=dict)
    guess: Mapping[str, float] = field(default_factory=dict)
    models: str = "built-in"
    corners: tuple[str, ...] = ()
    keep_deck: str | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "values", MappingProxyType({k: float(v) for k, v in dict(self.values).items()}))
        object.__setattr__(self, "guess", MappingProxyType({k: float(v) for k, v in dict(self.guess).items()}))
        object.__setattr__(self, "temperature", float(self.temperature))
        object.__setattr__(self, "corners", tuple(dict.fromkeys(str(c) for c in self.corners)))
        if self.models not in MODEL_SOURCES:
            raise UsageError(f"models must be one of {', '.join(MODEL_SOURCES)}, got {self.models!r}",
                             path="--models")

    def __reduce__(self):
        return (DesignInputs, (self.process, self.temperature, dict(self.values), dict(self.guess), self.models,
                               self.corners, self.keep_deck))


def design_inputs(target: Target, process: Any = None, temperature: float = 27.0,
                  values: Mapping[str, float] | None = None, guess: Mapping[str, float] | None = None, *,
                  models: str = "built-in", corners: Iterable[str] = (), keep_deck: str | None = None) -> DesignInputs:
    """Design inputs for a target: its library defaults, then ``values``; a process given as object or path.

    Raises
    ------
    ProcessError
        When a process file cannot be read.
    UsageError
        When a value names no free symbol of the circuit or of the topology's variables, or the
        temperature is outside the range of :func:`symbias.limits.temperature_problem`.

    Examples
    --------
    >>> inputs = design_inputs(load_target("examples/degenerated_mirror.cir"), values={"RE": 2e3}, temperature=85)
    >>> dict(inputs.values), inputs.temperature
    ({'RE': 2000.0}, 85.0)
    """
    from ..limits import temperature_problem
    from ..process import Process, load_process

    problem = temperature_problem(temperature)
    if problem is not None:
        raise UsageError(problem, path="--temp")
    numbers = {v.name: float(v.value) for v in (target.topology.variables if target.topology is not None else ())}
    given = dict(values or {})
    _check_names(target, given)
    numbers.update(given)
    if process is not None and not isinstance(process, Process):
        process = load_process(process)
    return DesignInputs(process, temperature, numbers, dict(guess or {}), models, tuple(corners), keep_deck)


def _check_names(target: Target, values: Mapping[str, float]) -> None:
    """Every given value must name a free symbol of the netlist (names are case-insensitive)."""
    known = {n.lower() for n in _free_names(target.circuit)}
    if target.topology is not None:
        known |= {v.name.lower() for v in target.topology.variables}
    unknown = sorted(n for n in values if n.lower() not in known)
    if unknown:
        listed = ", ".join(sorted(known)) or "none"
        raise UsageError(f"--set {unknown[0]}: the circuit has no free symbol of that name (free symbols: {listed})",
                         path=target.where)


def _free_names(circuit: Circuit) -> set[str]:
    names: set[str] = set()
    for element in circuit.elements:
        for value in (element.value, *element.params.values()):
            if value is not None:
                names |= value.names
    for model in circuit.models.values():
        for value in model.params.values():
            names |= value.names
    return names
