"""Tests of the audit.report package: its public API, and that it imports nothing but results and rich.

The import check walks the syntax tree of every module of the package,
imports inside functions included.
"""

from __future__ import annotations

import ast
import io
import subprocess
import sys
from pathlib import Path

import pytest
from reportdata import all_kinds, make_result, render_bytes, render_text, squash
from rich.console import Console

import audit.report as report
from audit.report import CAUTION, build_report, markdown, renderable
from audit.report.document import Report
from audit.results import ModelSignature, TensorEntry

PACKAGE = Path(report.__file__).resolve().parent
FORBIDDEN = ("torch", "onnxruntime", "onnx", "audit.models", "audit.engine", "audit.estimators", "audit.studies")


def _module_name(path: Path) -> str:
    return "audit.report." + ".".join(path.relative_to(PACKAGE).with_suffix("").parts)


def _imports(path: Path, module: str) -> list[str]:
    """Absolute names of everything module ``module`` at ``path`` imports (relative imports resolved)."""
    package = module if path.name == "__init__.py" else module.rpartition(".")[0]
    names = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            names += [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = package.removesuffix(".__init__")
            for _ in range(node.level - 1):
                base = base.rpartition(".")[0]
            root = (f"{base}.{node.module}" if node.module else base) if node.level else node.module
            names += [root, *(f"{root}.{a.name}" for a in node.names)]
    return names


def test_the_public_api_is_the_contract():
    assert sorted(report.__all__) == sorted(
        ["CAUTION", "Report", "RunProgress", "build_report", "html_fragment", "html_page", "make_console", "markdown",
         "render", "renderable", "summary"]
    )  # fmt: skip
    assert all(hasattr(report, name) for name in report.__all__)
    assert CAUTION == (
        "An audit of a model's sensitivity is not a safety validation. Where a model informs or controls "
        "equipment, defer to the applicable codes and to qualified engineers."
    )


def test_nothing_in_the_package_imports_a_backend_or_the_engine(tmp_path):
    modules = sorted(PACKAGE.rglob("*.py"))
    assert len(modules) > 15  # the walk found the subpackages too
    bad = {
        str(p.relative_to(PACKAGE)): name
        for p in modules
        for name in _imports(p, _module_name(p))
        if any(name == f or name.startswith(f + ".") for f in FORBIDDEN)
    }
    assert not bad
    # the check would catch one: a relative import inside a function, resolved
    probe = tmp_path / "probe.py"
    probe.write_text("def f():\n    from ...models import open\n    from .. import text\n    import torch\n")
    found = _imports(probe, "audit.report.sections.probe")
    assert {"audit.models", "audit.models.open", "audit.report.text", "torch"} <= set(found)


def test_report_does_not_import_torch_or_onnxruntime():
    code = (
        "import sys, audit.report, audit.report.terminal, audit.report.markdown, audit.report.signature, "
        "audit.report.progress, audit.report.sections, audit.report.findings; "
        "bad = [m for m in ('torch', 'onnxruntime', 'onnx', 'audit.engine', 'audit.models') if m in sys.modules]; "
        "sys.exit(1 if bad else 0)"
    )
    assert subprocess.run([sys.executable, "-c", code], check=False).returncode == 0


@pytest.mark.parametrize("kind", ["audit", "comparison", "advice"])
def test_every_kind_goes_through_one_report(kind):
    result = all_kinds()[kind]
    built = build_report(result)
    assert isinstance(built, Report) and built.kind == kind
    text = render_text(result)
    assert squash(text).endswith(squash(CAUTION))
    buf = io.StringIO()
    Console(file=buf, width=80, no_color=True).print(renderable(result))
    assert buf.getvalue() == text
    assert markdown(result).endswith(f"> {CAUTION}\n")
    if kind != "audit":  # the audit option is accepted by every kind and changes nothing elsewhere
        assert render_text(result, all_outputs=True) == text


def test_options_are_checked():
    with pytest.raises(TypeError, match="unknown report option"):
        renderable(make_result(), colour=True)
    with pytest.raises(ValueError, match="max_outputs"):
        renderable(make_result(), max_outputs=-1)
    assert markdown(make_result()) == markdown(make_result(), all_outputs=True)
    assert markdown(make_result(), all_outputs=False) != markdown(make_result())
    sig = ModelSignature("f", "python", [TensorEntry("x", (3,), "float64")], [TensorEntry("y", (), "float64")])
    with pytest.raises(TypeError, match="signature"):
        markdown(sig)
    assert render_bytes(sig).startswith("Model f  [python]")
    with pytest.raises(TypeError, match="unknown report option"):
        renderable(sig, colour=True)


def test_ascii_only_can_be_asked_for():
    console = Console(file=io.StringIO(), width=80, record=True)
    console.print(renderable(make_result(), ascii_only=True))
    text = console.export_text()
    assert text.isascii() and "mean dimension nu" in text and "nu weighted" in text


# What each part of the package may import from the rest of it (besides audit.results and rich):
# imports point one way, from the renderers to the content to the formatting.
LAYERS = {
    "text": set(),
    "document": set(),
    "widgets": {"text"},
    "describe": {"text", "document"},
    "commands": {"describe", "text", "document"},
    "findings": {"findings", "describe", "commands", "text", "document"},
    "ranges": {"text", "document"},
    "terms": {"text", "document"},
    "sections": {"sections", "findings", "describe", "commands", "ranges", "terms", "text", "document"},
    "charts": {"charts", "sections", "findings", "describe", "text", "document"},
    "html": {"html", "charts", "sections", "terms", "text", "document"},
    "summary": {"describe", "text"},
    "terminal": {"document", "text", "widgets"},
    "markdown": {"document", "text"},
    "signature": {"widgets", "text"},
    "progress": set(),
}


def test_imports_inside_the_package_point_one_way():
    problems = []
    for path in sorted(PACKAGE.rglob("*.py")):
        module = _module_name(path)
        part = module.split(".")[2]
        if part == "__init__":
            continue  # the package itself wires the parts together
        for name in _imports(path, module):
            if not name.startswith("audit."):
                if part not in ("widgets", "terminal", "signature", "progress") and name.startswith("rich"):
                    problems.append(f"{module} imports {name}: only renderers use rich")
                continue
            if name.startswith("audit.results") or not name.startswith("audit.report."):
                if not name.startswith(("audit.results", "audit.version")) and name != "audit.report":
                    problems.append(f"{module} imports {name}")
                continue
            target = name.split(".")[2]
            if target in LAYERS and target not in LAYERS[part] | {part}:
                problems.append(f"{module} imports {name}")
    assert not problems


def test_matplotlib_is_imported_only_when_a_chart_is_drawn():
    code = (
        "import sys, audit, audit.report, audit.report.html, audit.report.charts; "
        "sys.exit(1 if 'matplotlib' in sys.modules else 0)"
    )
    assert subprocess.run([sys.executable, "-c", code], check=False).returncode == 0
