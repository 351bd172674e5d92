"""Output noise in closed form: ``S_out = sum_i |H_i|^2 S_i`` with every transfer ``H_i`` exact.

Third step of :mod:`symbias.noise` (sources + output -> :class:`OutputNoiseFormula`).
Every source is a current injected across two nodes of the same network, so
the transfers share the network's determinant and differ only in their
cofactors: one memoised minor expansion gives them all
(:class:`~symbias.linear.mna.CofactorSolver`), each then a
:class:`~symbias.formula.Formula` of its own.  With capacitances the
transfers hold ``s``; their low-frequency forms (``s -> 0``, the lowest
powers kept in the ring) give the closed-form total at low frequency,
``sum_i H_i(0)^2 S_i``, with the white and the 1/f parts.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> deck = '''1:1 NMOS mirror
... Iref 0 in 1
... M1 in in 0 0 NM
... M2 out in 0 0 NM
... Vout out 0 1
... .model NM nmos
... '''
>>> from symbias.devices.options import SmallSignalOptions
>>> noise = output_noise_formula(parse_netlist(deck), "Vout", SmallSignalOptions(ro=False, match=True))
>>> [(t.source.name, t.low_frequency.expr) for t in noise.terms]
[('M1 channel thermal', -1), ('M2 channel thermal', 1)]
>>> noise.white_expr()
8*gamma_n*gm*kT
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any, Mapping, Sequence

from ..circuit import Circuit
from ..devices.options import SmallSignalOptions
from ..formula import Formula
from ..linear.mna import LinearProblem, Solution, expanded_system, transfer_numerator
from ..linear.network import LinearNetwork, expand
from ..symbols import LAPLACE, NOISE_MEANINGS
from ..transfer_error import limit
from .output import NoiseOutput, drive, noise_output
from .sources import NoiseSource, noise_sources

__all__ = ["NoiseTerm", "OutputNoiseFormula", "output_noise_formula", "source_transfers"]

#: Low-frequency transfer terms up to which the exact closed-form total is factored for display.
_FACTOR_TERMS = 120


@dataclass(frozen=True, eq=False)
class NoiseTerm:
    """One source's part of the output noise.

    Parameters
    ----------
    source : NoiseSource
    transfer : Formula
        Exact ``H_i``: output per unit source current.
    low_frequency : Formula
        ``H_i`` as ``s -> 0`` (the transfer itself without capacitances).
    approximation : Approximation or None
        A leading-order form of ``low_frequency``.
    """

    source: NoiseSource
    transfer: Formula
    low_frequency: Formula
    approximation: Any = None

    def contribution_expr(self, leading: bool = False):
        """``H_i(0)^2 S_i`` as a sympy expression (with the leading-order ``H_i`` when asked and there is one)."""
        gain = self.approximation.expr if leading and self.approximation is not None else self.low_frequency.expr
        return gain ** 2 * self.source.density.to_sympy()


@dataclass(frozen=True, eq=False)
class OutputNoiseFormula:
    """The output noise of a circuit in closed form: its output and one :class:`NoiseTerm` per source."""

    output: NoiseOutput
    terms: tuple[NoiseTerm, ...]
    options: SmallSignalOptions

    def _sum(self, kinds: Sequence[str], leading: bool):
        import sympy

        chosen = [t for t in self.terms if t.source.kind in kinds]
        if not chosen:
            return sympy.Integer(0)
        total = sympy.Add(*(t.contribution_expr(leading) for t in chosen))
        size = sum(sum(t.low_frequency.nterms) for t in chosen)
        # factoring reads well and is quick for short results; it takes seconds beyond a hundred terms
        return sympy.factor(total) if leading or size <= _FACTOR_TERMS else total

    def white_value(self, values: Mapping[str, Any]) -> float:
        """The white output noise at low frequency, ``sum H_i(0)^2 S_i``, at numeric values (no sympy)."""
        return self._value(("thermal", "shot"), values)

    def flicker_value(self, values: Mapping[str, Any]) -> float:
        """The 1/f output noise at low frequency at numeric values (``f`` among them)."""
        return self._value(("flicker",), values)

    def _value(self, kinds: Sequence[str], values: Mapping[str, Any]) -> float:
        total = 0.0
        for term in self.terms:
            if term.source.kind in kinds:
                gain = complex(term.low_frequency.evaluate(values))
                total += abs(gain) ** 2 * float(term.source.density.evaluate(values))
        return total

    def white_expr(self, leading: bool = False):
        """The white (thermal and shot) output noise at low frequency, factored (sympy)."""
        return self._sum(("thermal", "shot"), leading)

    def flicker_expr(self, leading: bool = False):
        """The 1/f output noise at low frequency, factored (sympy; ``f`` is the frequency)."""
        return self._sum(("flicker",), leading)

    @property
    def meanings(self) -> dict[str, Any]:
        """What every symbol of the transfers and densities stands for."""
        out: dict[str, Any] = dict(NOISE_MEANINGS)
        for term in self.terms:
            out.update(term.transfer.meanings)
        return out

    def with_approximations(self, approximations: Sequence[Any]) -> "OutputNoiseFormula":
        """The same terms with a leading-order form for each (``None`` where there is none)."""
        return replace(self, terms=tuple(replace(t, approximation=a) for t, a in zip(self.terms, approximations)))


def source_transfers(network: LinearNetwork, sources: Sequence[NoiseSource], output: NoiseOutput,
                     backend: str | None = None) -> tuple[Solution, ...]:
    """The exact transfer of every source to the output, from one shared cofactor expansion.

    Raises
    ------
    AnalysisError
        When the network is singular (with the cause, as :func:`~symbias.linear.mna.expanded_system` gives it).
    LimitError
        Over the size limits every exact solve has.
    """
    index, ring, variables, solver, det = expanded_system(network, backend)
    return tuple(Solution(ring, variables, transfer_numerator(ring, solver, index, drive(source.nodes),
                                                              output.observe), det, len(solver.memo))
                 for source in sources)


def output_noise_formula(circuit: Circuit, output: str, options: SmallSignalOptions | None = None,
                         flicker: Sequence[str] = (), backend: str | None = None) -> OutputNoiseFormula:
    """Every noise source of a circuit with its exact transfer to the output.

    Parameters
    ----------
    circuit : Circuit
    output : str
        A voltage source (output noise current) or a node / ``a,b`` (noise voltage).
    options : SmallSignalOptions, optional
    flicker : sequence of str
        Devices with flicker noise.
    backend : {"flint", "sympy"}, optional

    Raises
    ------
    CircuitError, AnalysisError
        For a bad output or a singular network.
    """
    options = options or SmallSignalOptions()
    where = noise_output(circuit, output)
    network = expand(circuit, options)
    sources = noise_sources(circuit, network, flicker)
    terms = []
    for source, solution in zip(sources, source_transfers(network, sources, where, backend)):
        problem = LinearProblem(network, drive(source.nodes), where.observe)
        formula = Formula.from_solution(solution, quantity="noise_transfer", label=f"{where.label}/i({source.name})",
                                        unit=where.transfer_unit, problem=problem,
                                        assumptions=("linear small-signal analysis about a fixed operating point",
                                                     f"{source.name} as a current source across {source.nodes[0]}, "
                                                     f"{source.nodes[1]}; independent sources zeroed"))
        names = {s.name for s in formula.symbols}
        formula = replace(formula, meanings={k: v for k, v in network.meanings.items() if k in names})
        low = limit(formula, LAPLACE, "zero") if any(s.name == LAPLACE for s in formula.symbols) else formula
        terms.append(NoiseTerm(source, formula, low))
    return OutputNoiseFormula(where, tuple(terms), options)
