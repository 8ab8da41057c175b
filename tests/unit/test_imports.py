"""The package's import graph: no cycles, and every arrow points down the layers.

Every ``import`` of every module under ``audit/`` is read from its syntax tree,
imports inside functions included, relative imports resolved. The layers, from
the bottom (DEVELOPERS.md, "Layers"):

    0  errors, seeds, version, buffers
    1  inputs, results
    2  design, estimators, models, finite, memory
    3  engine, quadrature
    4  checkpoint, cluster, nodes, export
    5  studies, report
    6  cli
    7  the package itself (audit/__init__.py: the lazy public API)

A module may import its own subsystem and any lower layer; never a higher one,
nor another subsystem of its own layer. On top of that: estimators and design
never import a backend, torch, onnx, onnxruntime or rich; models never import
estimators or rich; backends never import the dispatcher (models/open.py);
the report never imports torch, onnx or onnxruntime; results never import
the report.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[2] / "audit"
LAYERS = {
    "errors": 0,
    "seeds": 0,
    "version": 0,
    "buffers": 0,
    "inputs": 1,
    "results": 1,
    "design": 2,
    "estimators": 2,
    "models": 2,
    "finite": 2,
    "memory": 2,
    "streaming": 2,
    "engine": 3,
    "quadrature": 3,
    "checkpoint": 4,
    "cluster": 4,
    "nodes": 4,
    "export": 4,
    "studies": 5,
    "report": 5,
    "cli": 6,
    "": 7,
    "__main__": 8,
}
FORBIDDEN_THIRD_PARTY = {
    "estimators": {"torch", "onnx", "onnxruntime", "rich"},
    "design": {"torch", "onnx", "onnxruntime", "rich"},
    "models": {"rich"},
    "report": {"torch", "onnx", "onnxruntime"},
    "results": {"rich", "torch", "onnx", "onnxruntime"},
}


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def _modules() -> dict[str, Path]:
    return {_module_name(p): p for p in PACKAGE.rglob("*.py")}


def _compiled() -> set[str]:
    """Extension modules built from C sources beside the Python ones (they import nothing of netdim)."""
    return {_module_name(p.with_suffix(".py")) for p in PACKAGE.rglob("*.c")}


def _imports(name: str, path: Path, known: set[str]) -> tuple[set[str], set[str]]:
    """Internal modules and third-party top-level packages imported by one module (anywhere in it)."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    internal, external = set(), set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for alias in node.names:
                (internal if alias.name.split(".")[0] == "audit" else external).add(
                    alias.name if alias.name.split(".")[0] == "audit" else alias.name.split(".")[0]
                )
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[: len(base) - node.level + 1]
                target = ".".join([*base, node.module] if node.module else base)
            else:
                target = node.module or ""
            if target.split(".")[0] != "audit":
                external.add(target.split(".")[0])
                continue
            for alias in node.names:
                sub = f"{target}.{alias.name}"
                internal.add(sub if sub in known else target)
    internal = {m if m in known else m.rpartition(".")[0] for m in internal}
    return internal - {name}, external


def _graph() -> tuple[dict[str, set[str]], dict[str, set[str]]]:
    mods = _modules()
    known = set(mods) | _compiled()
    graph, external = {}, {}
    for name, path in mods.items():
        graph[name], external[name] = _imports(name, path, known)
    return graph, external


def _subsystem(name: str) -> str:
    parts = name.split(".")
    return parts[1] if len(parts) > 1 else ""


def test_every_module_is_in_a_layer():
    graph, _ = _graph()
    assert {_subsystem(m) for m in graph} <= set(LAYERS), sorted({_subsystem(m) for m in graph} - set(LAYERS))


def test_no_import_cycles():
    graph, _ = _graph()
    state: dict[str, int] = {}
    stack: list[str] = []
    cycles: list[list[str]] = []

    def visit(node: str) -> None:
        state[node] = 1
        stack.append(node)
        for nxt in sorted(graph.get(node, ())):
            if state.get(nxt) == 1:
                cycles.append([*stack[stack.index(nxt) :], nxt])
            elif nxt not in state:
                visit(nxt)
        stack.pop()
        state[node] = 2

    for node in sorted(graph):
        if node not in state:
            visit(node)
    assert not cycles, "import cycles:\n" + "\n".join(" -> ".join(c) for c in cycles)


def test_arrows_point_down_the_layers():
    graph, _ = _graph()
    wrong = []
    for name, targets in graph.items():
        a = _subsystem(name)
        for t in targets:
            b = _subsystem(t)
            if a == b:
                continue
            if LAYERS[b] >= LAYERS[a]:
                wrong.append(f"{name} -> {t} (layer {LAYERS[a]} imports layer {LAYERS[b]})")
    assert not wrong, "\n".join(sorted(wrong))


@pytest.mark.parametrize("subsystem", sorted(FORBIDDEN_THIRD_PARTY))
def test_forbidden_third_party_imports(subsystem):
    _, external = _graph()
    bad = {
        name: sorted(ext & FORBIDDEN_THIRD_PARTY[subsystem])
        for name, ext in external.items()
        if _subsystem(name) == subsystem and ext & FORBIDDEN_THIRD_PARTY[subsystem]
    }
    assert not bad, bad


def test_backends_do_not_import_the_dispatcher_and_models_know_no_estimators():
    graph, _ = _graph()
    for name, targets in graph.items():
        if _subsystem(name) == "models" and name not in ("audit.models", "audit.models.open"):
            assert "audit.models.open" not in targets, name
        if _subsystem(name) == "models":
            assert not any(_subsystem(t) in ("estimators", "engine", "design", "studies") for t in targets), name


def test_the_graph_is_read_correctly():
    # a check of the reader itself, on known edges (one relative, one function-local)
    graph, external = _graph()
    assert "audit.engine" in graph["audit.checkpoint"]
    assert "audit.report" in graph["audit"]  # imported inside a function of audit/__init__.py
    assert "numpy" in external["audit.engine"]
