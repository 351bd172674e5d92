"""The package's structure: the layer table of docs/architecture.md holds for every import.

Reference: the layer table in docs/architecture.md (the project's own design record),
checked against the imports the code really makes, read with Python's ``ast`` module
(imports inside functions included), and file and function sizes against the limits
the contributor guide states.
"""

from __future__ import annotations

import ast
import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
PACKAGE = ROOT / "symbias"
MAX_FILE_LINES = 600
MAX_FUNCTION_LINES = 80


def _layers() -> dict[str, int]:
    """Module prefix -> layer, read from the table in docs/architecture.md."""
    text = (ROOT / "docs" / "architecture.md").read_text()
    layers: dict[str, int] = {}
    for number, modules in re.findall(r"^\|\s*(\d+)\s*\|([^|]+)\|", text, flags=re.M):
        for name in re.findall(r"`(symbias[\w.]*)`", modules):
            layers[name] = int(number)
    assert len(layers) > 10, "the layer table of docs/architecture.md was not found"
    return layers


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(ROOT).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _modules() -> dict[str, Path]:
    return {_module_name(p): p for p in sorted(PACKAGE.rglob("*.py"))}


def _layer_of(module: str, layers: dict[str, int]) -> int | None:
    best = None
    for prefix, layer in layers.items():
        if module == prefix or module.startswith(prefix + "."):
            if best is None or len(prefix) > len(best[0]):
                best = (prefix, layer)
    return None if best is None else best[1]


def _imports(module: str, path: Path) -> set[str]:
    """Every symbias module ``module`` imports, at any depth of its code."""
    tree = ast.parse(path.read_text(), str(path))
    package = module if path.name == "__init__.py" else module.rsplit(".", 1)[0]
    found: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found |= {alias.name for alias in node.names if alias.name.startswith("symbias")}
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[: len(base) - (node.level - 1)]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            if not target.startswith("symbias"):
                continue
            found.add(target)
            for alias in node.names:  # "from . import x" may name a submodule
                if f"{target}.{alias.name}" in _MODULES:
                    found.add(f"{target}.{alias.name}")
    return {name for name in found if name in _MODULES}


_MODULES = _modules()


def test_every_module_has_a_layer():
    layers = _layers()
    missing = [m for m in _MODULES if m != "symbias" and _layer_of(m, layers) is None]
    assert not missing, f"modules missing from the layer table of docs/architecture.md: {missing}"


def test_no_import_goes_up_a_layer():
    layers = _layers()
    upward = []
    for module, path in _MODULES.items():
        if module == "symbias":
            continue
        mine = _layer_of(module, layers)
        for imported in _imports(module, path):
            theirs = _layer_of(imported, layers) if imported != "symbias" else 0
            if theirs is not None and mine is not None and theirs > mine:
                upward.append(f"{module} (layer {mine}) imports {imported} (layer {theirs})")
    assert not upward, "\n".join(upward)


def test_the_import_graph_has_no_cycle():
    graph = {m: _imports(m, p) - {m} for m, p in _MODULES.items() if m != "symbias"}
    state: dict[str, int] = {}
    cycle: list[str] = []

    def visit(node: str, trail: list[str]) -> bool:
        state[node] = 1
        for nxt in sorted(graph.get(node, ())):
            if nxt == "symbias" or nxt.startswith("symbias.") and nxt not in graph:
                continue
            # a package's __init__ re-exporting its own submodules is not a cycle of steps
            if nxt.startswith(node + ".") or node.startswith(nxt + "."):
                continue
            if state.get(nxt) == 1:
                cycle.extend(trail + [node, nxt])
                return True
            if state.get(nxt) is None and visit(nxt, trail + [node]):
                return True
        state[node] = 2
        return False

    for module in sorted(graph):
        if state.get(module) is None and visit(module, []):
            break
    assert not cycle, " -> ".join(cycle)


@pytest.mark.parametrize("module", sorted(m for m in _MODULES if m != "symbias"))
def test_sizes(module):
    """No file over 600 lines, no function over 80 (DEVELOPERS.md)."""
    path = _MODULES[module]
    text = path.read_text()
    assert text.count("\n") <= MAX_FILE_LINES, f"{path.name} has {text.count(chr(10))} lines"
    long = []
    for node in ast.walk(ast.parse(text)):
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            length = node.end_lineno - node.lineno + 1
            if length > MAX_FUNCTION_LINES:
                long.append(f"{node.name} ({length} lines)")
    assert not long, f"{path.name}: functions over {MAX_FUNCTION_LINES} lines: {long}"
