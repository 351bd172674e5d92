"""The topology library as a designer browses it: listings and one topology with its derived formulas.

Pipeline step for the library: :func:`listing` gives the entries of the
library (filtered by family and technology, in a stable order) with a
one-line summary each; :func:`describe` derives one topology's output
resistance and main transfer with its own small-signal options, and their
leading-order forms.

Examples
--------
>>> rows = listing(family="current-mirror", technology="mos")
>>> rows[0].topology.id, rows[0].devices
('mos-cascode-mirror', '4 nmos')
>>> d = describe(rows[0].topology)
>>> [r.formula.quantity for r in d.derivation.results]
['output_resistance', 'current_gain']
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterable

from ..circuit import Circuit
from ..errors import AnalysisError, AssumptionError
from .derivation import Derivation, DeriveRequest, derive
from .targets import Target

__all__ = ["LibraryRow", "listing", "device_summary", "rout_form", "TopologyDescription", "describe"]


@dataclass(frozen=True, eq=False)
class LibraryRow:
    """One library entry in a listing: the topology and its summary fields."""

    topology: Any
    devices: str
    rout: str


def device_summary(circuit: Circuit) -> str:
    """Device count by model type, e.g. ``"3 npn, 2 pnp"``.

    Examples
    --------
    >>> from symbias.library import find_topology
    >>> device_summary(find_topology("bjt-ptat-source").circuit())
    '2 npn, 3 pnp'
    """
    counts = Counter(circuit.model_of(d).type for d in circuit.devices)
    return ", ".join(f"{n} {kind}" for kind, n in sorted(counts.items()))


def rout_form(topology) -> str:
    """The library's output-resistance formula, leading-order form preferred, or ``""``.

    Examples
    --------
    >>> from symbias.library import find_topology
    >>> rout_form(find_topology("bjt-wilson-mirror"))
    'beta*ro/2'
    """
    formulas = topology.formulas_for("output_resistance")
    leading = [f for f in formulas if f.form == "leading-order"]
    chosen = (leading or list(formulas))[:1]
    return chosen[0].expr if chosen else ""


def listing(family: str | None = None, technology: str | None = None,
            library_dirs: Iterable[str | Path] = ()) -> tuple[LibraryRow, ...]:
    """The library's topologies, filtered, ordered by family, technology and identifier."""
    from ..library import FAMILIES, load_library

    library = load_library(extra_dirs=tuple(library_dirs))
    chosen = [t for t in library.values()
              if (family is None or t.family == family) and (technology is None or t.technology == technology)]
    chosen.sort(key=lambda t: (FAMILIES.index(t.family), t.technology, t.id))
    return tuple(LibraryRow(t, device_summary(t.circuit()), rout_form(t)) for t in chosen)


@dataclass(frozen=True, eq=False)
class TopologyDescription:
    """A topology with its derived output resistance and main transfer (leading order where shorter)."""

    topology: Any
    derivation: Derivation | None
    leading: tuple[Any, ...] = ()


def describe(topology, derive_formulas: bool = True) -> TopologyDescription:
    """Derive a topology's default quantities with its own options, and their leading-order forms.

    A leading-order form is kept only when it is shorter than the exact form
    and the approximation succeeds under the default assumptions.
    """
    if not derive_formulas:
        return TopologyDescription(topology, None)
    target = Target(topology.circuit(), topology, topology.id)
    derivation = derive(target, DeriveRequest(options=topology.small_signal_options()))
    leading = tuple(None if r.formula is None else _leading_order(r.formula) for r in derivation.results)
    return TopologyDescription(topology, derivation, leading)


def _leading_order(formula):
    """The dominant-term form, or None when it keeps every term or cannot be found."""
    from ..approx import approximate

    try:
        approximation = approximate(formula)
    except (AnalysisError, AssumptionError):
        return None  # e.g. a result with s or no admissible point: the exact form stands
    (kept_num, all_num), (kept_den, all_den) = approximation.kept
    if (kept_num, kept_den) == (all_num, all_den):
        return None
    return approximation
