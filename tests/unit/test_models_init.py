"""The models package: public names loaded on first use, and the import rules of its modules.

``import audit.models`` must not load onnx, onnxruntime or Torch; no backend may import the
dispatcher (``audit.models.open``); nothing in ``audit.models`` may import the engine,
estimators, designs, studies, the report or rich. The rules are read from the source
(imports inside functions too), so a backend that breaks one fails here.
"""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

import audit.models

PACKAGE = Path(audit.models.__file__).resolve().parent
HEAVY = ("onnx", "onnxruntime", "torch")
#: Modules nothing under audit/models may import (nor their submodules).
FORBIDDEN = ("audit.engine", "audit.estimators", "audit.design", "audit.studies", "audit.report", "rich")
DISPATCHER = "audit.models.open"
#: Modules that are not backends and may import the dispatcher.
NOT_BACKENDS = ("audit.models", DISPATCHER)


def _loaded_after(statement: str) -> list[str]:
    code = f"import sys\n{statement}\nprint(' '.join(m for m in {HEAVY!r} if m in sys.modules))"
    result = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return result.stdout.split()


def test_import_loads_no_backend_runtime() -> None:
    assert _loaded_after("import audit.models") == []
    assert _loaded_after("import audit.models as m\nm.PythonModel, m.open_model, m.Model, m.feature_count") == []
    assert _loaded_after("import audit.models as m\nm.OnnxModel") == ["onnxruntime"]  # onnx: when a graph is read


def test_public_names() -> None:
    assert sorted(audit.models.__all__) == sorted(audit.models._EXPORTS)
    for name in audit.models.__all__:
        assert getattr(audit.models, name) is not None, name
    assert set(audit.models.__all__) <= set(dir(audit.models))
    with pytest.raises(AttributeError, match="no attribute 'nothing'"):
        audit.models.nothing  # noqa: B018


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(PACKAGE.parent.parent).with_suffix("").parts)
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _imports(source: str, module: str, is_package: bool) -> set[str]:
    """Absolute names of every module ``source`` imports, at any depth (functions included)."""
    package = module if is_package else module.rpartition(".")[0]
    found: set[str] = set()
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                parts = package.split(".")
                base = ".".join(parts[: len(parts) - node.level + 1])
                target = f"{base}.{node.module}" if node.module else base
            else:
                target = node.module or ""
            found.add(target)
            found.update(f"{target}.{alias.name}" for alias in node.names)  # `from . import open`
    return found


def _violations(source: str, module: str, is_package: bool = False) -> list[str]:
    problems = []
    for name in sorted(_imports(source, module, is_package)):
        if any(name == f or name.startswith(f + ".") for f in FORBIDDEN):
            problems.append(f"{module} imports {name}")
        if module not in NOT_BACKENDS and (name == DISPATCHER or name.startswith(DISPATCHER + ".")):
            problems.append(f"{module} imports the dispatcher {name}")
    return problems


def test_the_rule_checker_catches_violations() -> None:
    nested = "def f():\n    from ..open import open_model\n    import rich.console\n"
    assert set(_violations(nested, "audit.models.torch.common")) == {
        "audit.models.torch.common imports rich.console",
        "audit.models.torch.common imports the dispatcher audit.models.open",
        "audit.models.torch.common imports the dispatcher audit.models.open.open_model",
    }
    assert _violations("from .. import studies\n", "audit.models.python") == [
        "audit.models.python imports audit.studies"
    ]
    assert _violations("from .open import open_model\n", "audit.models", is_package=True) == []


def test_import_rules_of_every_module() -> None:
    files = sorted(PACKAGE.rglob("*.py"))
    assert {"open.py", "base.py", "onnx.py", "python.py", "common.py", "load.py"} <= {f.name for f in files}
    problems = []
    for path in files:
        problems += _violations(path.read_text(encoding="utf-8"), _module_name(path), path.name == "__init__.py")
    assert problems == []


def _cycle(edges: dict[str, set[str]]) -> list[str]:
    """One import cycle of ``edges`` (module -> modules it imports), or [] when there is none."""
    done: set[str] = set()

    def visit(name: str, path: list[str]) -> list[str]:
        if name in path:
            return [*path[path.index(name) :], name]
        if name in done:
            return []
        for target in sorted(edges.get(name, ())):
            found = visit(target, [*path, name])
            if found:
                return found
        done.add(name)
        return []

    for name in sorted(edges):
        found = visit(name, [])
        if found:
            return found
    return []


def test_the_cycle_finder_finds_cycles() -> None:
    assert _cycle({"a": {"b"}, "b": {"c"}, "c": {"a"}}) == ["a", "b", "c", "a"]
    assert _cycle({"a": {"b", "c"}, "b": {"c"}, "c": set()}) == []


def test_no_import_cycles_inside_the_package() -> None:
    modules = {_module_name(path): path for path in sorted(PACKAGE.rglob("*.py"))}
    # an import of a package's own ancestor runs that __init__ first: not a cycle
    edges = {
        name: {
            target
            for target in _imports(path.read_text(encoding="utf-8"), name, path.name == "__init__.py")
            if target in modules and target != name and not name.startswith(target + ".")
        }
        for name, path in modules.items()
    }
    assert edges["audit.models.torch.common"] >= {"audit.models.base", "audit.models.tensors"}
    assert _cycle(edges) == []
