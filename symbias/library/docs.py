"""Write ``docs/topologies.md`` from the library files.

A renderer of the library side, the last module of the package
(:class:`~symbias.library.topology.Topology` -> Markdown): a summary table, then one section per topology with its
description, netlist, roles, design variables, published formulas in LaTeX
(with assumptions and source) and references.  The output depends only on the
library files, so a test can check that the committed page is up to date.

Command line::

    python -m symbias.library.docs docs/topologies.md           # write
    python -m symbias.library.docs docs/topologies.md --check   # exit 1 when out of date

Examples
--------
>>> from symbias.library import load_library, shipped_dir
>>> page = render_markdown(load_library([shipped_dir()]).values())
>>> page.splitlines()[0]
'# Topology library'
"""

from __future__ import annotations

import argparse
import re
import sys
from pathlib import Path
from typing import Iterable

from ..errors import SymbiasError
from ..expressions import parse_expression
from ..symbols import latex_name
from .fields import FAMILIES
from .search import load_library, shipped_dir

__all__ = ["render_markdown", "formula_latex", "main"]


def formula_latex(text: str) -> str:
    """LaTeX of a library formula string.

    Examples
    --------
    >>> formula_latex("beta*ro/2")
    '\\\\frac{\\\\beta r_{o}}{2}'
    """
    import sympy

    expr = parse_expression(text).to_sympy()
    return sympy.latex(expr, symbol_names={s: latex_name(s.name) for s in expr.free_symbols})


def _devices(topology) -> str:
    from collections import Counter

    circuit = topology.circuit()
    counts = Counter(circuit.model_of(d).type for d in circuit.devices)
    return ", ".join(f"{n} {kind}" for kind, n in sorted(counts.items()))


#: How the generated page names each ``sizes`` value.
_SIZED = {"output-current": "the target output current", "zero-tc": "zero temperature slope of the output",
          "matching": "the random-error limit (Pelgrom)"}


def _cell(text: str) -> str:
    return text.replace("|", r"\|")


def _section(topology) -> list[str]:
    out = [f"## {topology.title}", "", f"`{topology.id}`: {topology.family}, {topology.technology}", "",
           topology.description, "", "```spice", topology.netlist.rstrip(), "```", ""]
    roles = ", ".join(f"{k}: `{', '.join(v) if isinstance(v, tuple) else v}`" for k, v in topology.roles.items())
    out += [f"Roles: {roles}.", ""]
    if topology.headroom:
        parts = [f"{k} ${formula_latex(v)}$" for k, v in topology.headroom.items()]
        out += ["Headroom: " + "; ".join(parts) + ".", ""]
    if topology.variables:
        out += ["| variable | default | unit | sizing rule |", "|---|---|---|---|"]
        for v in topology.variables:
            rule = v.rule + (f" (`{v.expr}`)" if v.expr else "")
            if v.sizes:
                rule += f"; a ranking solves it for {_SIZED[v.sizes]}"
            out.append(f"| `{v.name}` | {v.default} | {v.unit} | {_cell(rule)} |")
        out.append("")
    if topology.formulas:
        out += ["Published forms (each checked against the engine's derivation in the test suite):", ""]
        for f in topology.formulas:
            out += [f"- {f.quantity.replace('_', ' ')}, {f.form}:", "",
                    f"  $$ {formula_latex(f.expr)} $$", "",
                    f"  Assumptions: {'; '.join(f.assumptions)}. Source: {f.source}.", ""]
    out += ["References:", ""]
    out += [f"- {ref.text}" for ref in topology.references]
    out.append("")
    return out


def render_markdown(topologies: Iterable) -> str:
    """The Markdown page of the given topologies (sorted by family, technology and identifier)."""
    chosen = sorted(topologies, key=lambda t: (FAMILIES.index(t.family), t.technology, t.id))
    out = [
        "# Topology library",
        "",
        "Generated from `topologies/*.toml` by `python -m symbias.library.docs docs/topologies.md`; do not edit",
        "by hand (a test checks that this page is up to date). The file format is described in",
        "[library-format.md](library-format.md).",
        "",
        "Formulas are design aids: sign-off needs full simulation and measurement, and high-voltage or",
        "safety-relevant circuits follow local codes and licensed practice. Sources marked \"from memory\"",
        "were recalled without the book at hand; \"common practice\" marks a fact of the trade.",
        "",
        "| identifier | title | family | technology | devices |",
        "|---|---|---|---|---|",
    ]
    for t in chosen:
        out.append(f"| [`{t.id}`](#{_anchor(t.title)}) | {_cell(t.title)} | {t.family} | {t.technology} "
                   f"| {_devices(t)} |")
    out.append("")
    for t in chosen:
        out += _section(t)
    return "\n".join(out).rstrip() + "\n"


def _anchor(title: str) -> str:
    """GitHub-style heading anchor."""
    text = re.sub(r"[^\w\- ]", "", title.lower())
    return text.replace(" ", "-")


def main(argv: list[str] | None = None) -> int:
    """Write (or with ``--check`` compare) the library page; return the exit status."""
    parser = argparse.ArgumentParser(prog="python -m symbias.library.docs",
                                     description="Generate docs/topologies.md from the topology library.")
    parser.add_argument("output", help="Markdown file to write, e.g. docs/topologies.md")
    parser.add_argument("--check", action="store_true", help="do not write; exit 1 if the file is out of date")
    args = parser.parse_args(argv)
    try:
        page = render_markdown(load_library([shipped_dir()]).values())
    except SymbiasError as err:
        print(str(err), file=sys.stderr)
        return 2
    path = Path(args.output)
    try:
        if args.check:
            current = path.read_text(encoding="utf-8") if path.exists() else ""
            if current != page:
                print(f"{path}: out of date; run python -m symbias.library.docs {path}", file=sys.stderr)
                return 1
            return 0
        path.write_text(page, encoding="utf-8")
    except (OSError, UnicodeDecodeError) as err:
        print(f"{path}: {getattr(err, 'strerror', None) or err}", file=sys.stderr)
        return 2
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
