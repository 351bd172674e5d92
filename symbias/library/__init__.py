"""The topology library: TOML files -> frozen :class:`Topology` objects.

Entry point of the library side (text file -> :class:`Topology`, which
yields a :class:`~symbias.circuit.Circuit`).  Each file in a library folder
describes one bias circuit: identity, description, published references, the
netlist, the roles of its elements, design variables with sizing rules and the
published formulas the engine must reproduce.  The file format is documented
in ``docs/library-format.md``.

The package is layered, each module importing only from those above it:

* :mod:`~symbias.library.fields`: the allowed values and the checks of single fields;
* :mod:`~symbias.tomlfile` (shared): TOML decoding and the line of every key;
* :mod:`~symbias.library.topology`: the frozen, validated, picklable domain objects;
* :mod:`~symbias.library.reading`: one file -> :class:`Topology`, every error at its file and line;
* :mod:`~symbias.library.search`: the library folders, loading them, looking one topology up;
* :mod:`~symbias.library.docs`: ``docs/topologies.md`` from the library
  (``python -m symbias.library.docs docs/topologies.md [--check]``; not imported here).

Importing the package loads neither sympy nor networkx.

Examples
--------
>>> top = find_topology("bjt-simple-mirror")
>>> top.family, top.technology, top.roles["output"]
('current-mirror', 'bjt', 'Vout')
>>> [e.name for e in top.circuit().devices]
['Q1', 'Q2']
>>> top.default_quantities()
(('output_resistance', ('Vout',)), ('current_gain', ('Vout', 'Iref')))
"""

from __future__ import annotations

from .fields import FAMILIES, FORMS, FORMULA_QUANTITIES, OPTION_KEYS, TECHNOLOGIES
from .reading import load_topology, parse_topology
from .search import ENV_VAR, find_topology, library_dirs, load_library, resolve, shipped_dir
from .topology import ExpectedFormula, Reference, Topology, Variable

__all__ = [
    "Reference",
    "Variable",
    "ExpectedFormula",
    "Topology",
    "parse_topology",
    "load_topology",
    "load_library",
    "library_dirs",
    "shipped_dir",
    "find_topology",
    "resolve",
    "FAMILIES",
    "TECHNOLOGIES",
    "FORMS",
    "FORMULA_QUANTITIES",
    "OPTION_KEYS",
    "ENV_VAR",
]
