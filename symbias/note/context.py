"""What a design note is built from: the request, and the results every section shares.

First step of the note package (target + design inputs + :class:`NoteRequest`
-> :class:`NoteContext`).  The derivation (exact and leading-order results
with their values at the operating point) and the operating point are
computed once here through :mod:`symbias.pipeline`; each section module then
reads them and asks the pipeline for what only it needs (sweeps, the mirror
ratio, the mismatch solves).

Examples
--------
>>> from symbias.pipeline import load_target, design_inputs
>>> target = load_target("bjt-simple-mirror")
>>> context = note_context(target, design_inputs(target), NoteRequest(approximate=False))
>>> context.kind, context.output_probe, round(context.output_value * 1e6, 2)
('mirror', 'Iout(Vout)', 100.56)
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

from ..errors import UsageError
from ..pipeline import Derivation, DeriveRequest, DesignInputs, Target, derive

__all__ = ["NoteRequest", "NoteContext", "note_context", "built_in", "input_source"]


@dataclass(frozen=True)
class NoteRequest:
    """How much a note computes, and what it records about how it was made.

    Parameters
    ----------
    output_points, temperature_points, supply_points : int
        Points of the output, temperature and supply sweeps.
    temperatures : (float, float)
        Range of the temperature sweep (degC).
    supply_span : (float, float)
        The supply sweep as fractions of the nominal supply.
    monte_carlo : int
        Monte Carlo samples of the random error (0: none).
    seed : int
        Seed of the Monte Carlo samples and of the approximation's error search.
    approximate : bool
        Add the leading-order forms (with their worst error).
    samples : int
        Random points of the approximation's error search.
    command : str
        The command line recorded in the note.
    input_files : tuple of str
        Files whose sha256 the note records (netlist or library file, process, spec).
    version : str
        The symbias version recorded (the package's by default).
    """

    output_points: int = 61
    temperature_points: int = 34
    supply_points: int = 21
    temperatures: tuple[float, float] = (-40.0, 125.0)
    supply_span: tuple[float, float] = (0.5, 1.5)
    monte_carlo: int = 400
    seed: int = 1
    approximate: bool = True
    samples: int = 2000
    command: str = ""
    input_files: tuple[str, ...] = ()
    version: str = ""

    def __post_init__(self) -> None:
        for key in ("output_points", "temperature_points", "supply_points"):
            if getattr(self, key) < 3:
                raise UsageError(f"{key.replace('_', ' ')} must be at least 3, got {getattr(self, key)}")
        if self.monte_carlo < 0:
            raise UsageError(f"Monte Carlo samples must be 0 or more, got {self.monte_carlo}", path="--samples")
        if not self.temperatures[0] < self.temperatures[1]:
            raise UsageError("the temperature range must run from low to high", path="--temperatures")


@dataclass(frozen=True, eq=False)
class NoteContext:
    """The results every section reads.

    Attributes
    ----------
    target : Target
    inputs : DesignInputs
    request : NoteRequest
    derivation : Derivation
        Default quantities, with the leading-order forms, the transfer error and
        the DC ratio at the operating point.
    point : OperatingPoint
        The conducting operating point at the nominal corner.
    kind : {"mirror", "source", "reference"}
        A mirror has an input current source and an output voltage source; a
        source has only the output source; a reference has an output node.
    output : str
        The output role: a voltage source or (references) a node.
    output_probe : str
        ``Iout(Vout)`` or ``V(node)``, as the sweeps name it.
    output_value : float
        The output at the operating point (A or V).
    output_unit : str
    """

    target: Target
    inputs: DesignInputs
    request: NoteRequest
    derivation: Derivation
    point: Any
    kind: str
    output: str
    output_probe: str
    output_value: float
    output_unit: str

    @property
    def circuit(self):
        """The circuit analysed."""
        return self.target.circuit

    @property
    def topology(self):
        """The library topology, or None for a netlist file."""
        return self.target.topology

    @property
    def supply(self) -> str | None:
        """The first supply source (the topology's role, else a source named Vcc/Vdd), or None."""
        supplies = self.target.roles.get("supply", ())
        if supplies:
            return supplies[0]
        names = {e.key: e.name for e in self.circuit.elements_of("V")}
        return next((names[k] for k in ("vcc", "vdd", "vs", "vsupply") if k in names), None)


def built_in(inputs: DesignInputs) -> DesignInputs:
    """The inputs with the built-in models (sweeps and Monte Carlo run on them)."""
    return replace(inputs, models="built-in") if inputs.models != "built-in" else inputs


def note_context(target: Target, inputs: DesignInputs, request: NoteRequest) -> NoteContext:
    """Derive the default quantities at the operating point and name the output.

    Raises
    ------
    CircuitError, AnalysisError, ConvergenceError, SimulatorError
        From the pipeline.
    """
    from ..devices.options import SmallSignalOptions
    from ..pipeline.sweeps import default_output

    options = target.topology.small_signal_options() if target.topology is not None else SmallSignalOptions()
    derivation = derive(target, DeriveRequest(options=options, approximate=request.approximate,
                                              transfer_error=True, at_bias=inputs, seed=request.seed,
                                              samples=request.samples))
    point = derivation.bias.point
    output = target.roles.get("output")
    circuit = target.circuit
    if output is None:
        probe = default_output(circuit)
        output = probe[probe.index("(") + 1:-1]
    if circuit.has_element(output):
        from ..conventions import output_current

        current = output_current(circuit, output)
        probe, value, unit = current.label, current.sign * point.current(current.source), "A"
        has_input = any(e.kind == "I" and e.name == target.roles.get("input") for e in circuit.elements) or (
            target.topology is None and _input_source(target, derivation) is not None)
        kind = "mirror" if has_input else "source"
    else:
        probe, value, unit, kind = f"V({output})", point.voltage(output), "V", "reference"
    return NoteContext(target, inputs, request, derivation, point, kind, output, probe, float(value), unit)


def _input_source(target: Target, derivation: Derivation) -> str | None:
    """For a netlist without roles: the current source a derived current gain is taken from."""
    for result in derivation.results:
        if result.quantity.kind == "current_gain":
            return result.quantity.arguments[1]
    return None


def input_source(context: NoteContext) -> str | None:
    """The mirror's input current source (None for sources and references)."""
    if context.kind != "mirror":
        return None
    return context.target.roles.get("input") or _input_source(context.target, context.derivation)
