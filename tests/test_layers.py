"""The package's layers (DESIGN.md, DEVELOPERS.md): every module imports only
modules of its own layer or of the layers below it, and the import graph of
eosfill's modules has no cycle — counting imports inside functions too, since
a lazy import is still a dependency.  Read from the source with ``ast``, so
nothing is imported to check it."""
from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "eosfill"

# from the ground up; each layer may import only those before it (and itself)
LAYERS = ["errors", "constants", "model", "equilibrium", "states", "vessel", "transient", "study", "io"]
TOP = {"__init__", "__main__"}  # the package's entry points may import anything

# Known upward imports still to be removed (each names what removes it); the
# test fails on any other, and on an entry here that no longer happens.
KNOWN_UPWARD = {
}


def _module_name(path: Path) -> str:
    rel = path.relative_to(PACKAGE.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def _modules():
    return {_module_name(p): p for p in PACKAGE.rglob("*.py")}


def _imports(name: str, path: Path, known: set) -> set:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    pkg = name if path.name == "__init__.py" else name.rsplit(".", 1)[0]
    out = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            targets = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = pkg.split(".")
                base = base[: len(base) - node.level + 1]
                mod = ".".join(base + ([node.module] if node.module else []))
            else:
                mod = node.module or ""
            # ``from pkg import sub`` depends on pkg.sub, not on pkg's __init__
            targets = [f"{mod}.{a.name}" if f"{mod}.{a.name}" in known else mod for a in node.names]
        else:
            continue
        for t in targets:
            # the longest known module that t names (``from eosfill.model import cubic``
            # names eosfill.model.cubic)
            while t and t not in known:
                t = t.rpartition(".")[0]
            if t and t.startswith("eosfill") and t != name:
                out.add(t)
    return out


def _layer(mod: str) -> str | None:
    parts = mod.split(".")
    if len(parts) == 1:
        return None  # the package itself
    head = parts[1]
    return None if head in TOP else head


GRAPH = {m: _imports(m, p, set(_modules())) for m, p in _modules().items()}


def test_every_module_belongs_to_a_layer():
    stray = [m for m in GRAPH if _layer(m) is not None and _layer(m) not in LAYERS]
    assert not stray, f"modules outside the layer plan: {stray}"


@pytest.mark.parametrize("mod", sorted(m for m in GRAPH if _layer(m) in LAYERS))
def test_imports_go_down_the_layers(mod):
    mine = LAYERS.index(_layer(mod))
    upward = sorted(t for t in GRAPH[mod]
                    if _layer(t) is not None and LAYERS.index(_layer(t)) > mine)
    unknown = [t for t in upward if (mod, t) not in KNOWN_UPWARD]
    assert not unknown, f"{mod} (layer {LAYERS[mine]}) imports from higher layers: {unknown}"


def test_known_upward_imports_still_exist():
    gone = [pair for pair in KNOWN_UPWARD if pair[1] not in GRAPH.get(pair[0], ())]
    assert not gone, f"remove from KNOWN_UPWARD, fixed: {gone}"


def test_no_import_cycles():
    # Tarjan-free check: depth-first search with colours, report one cycle
    state, stack, cycles = {}, [], []

    def visit(m):
        state[m] = 1
        stack.append(m)
        for t in sorted(GRAPH.get(m, ())):
            if t == "eosfill" or _layer(t) is None and t != m:
                continue  # the package's lazy __init__ is an entry point, not a layer
            if state.get(t) == 1:
                cycles.append(stack[stack.index(t):] + [t])
            elif t not in state:
                visit(t)
        stack.pop()
        state[m] = 2

    for m in sorted(GRAPH):
        if _layer(m) is not None and m not in state:
            visit(m)
    assert not cycles, "import cycles: " + "; ".join(" -> ".join(c) for c in cycles)


def test_layout_sees_the_known_modules():
    # the checks above would pass vacuously on an empty graph
    assert "eosfill.model.cubic" in GRAPH and "eosfill.states.fluid" in GRAPH
    assert "eosfill.model.cubic" in GRAPH["eosfill.model.mixture"]
    assert "eosfill.states.dispatch" in GRAPH["eosfill.states.fluid"]
