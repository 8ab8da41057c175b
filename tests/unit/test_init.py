"""The public Python API (audit/__init__.py): names loaded on first use, so `import audit` stays light."""

import subprocess
import sys

import pytest

import audit

HEAVY = ("scipy", "onnx", "onnxruntime", "torch")


def _loaded_after(statement: str) -> list[str]:
    code = f"import sys\n{statement}\nprint(' '.join(m for m in {HEAVY!r} if m in sys.modules))"
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.split()


def test_import_audit_loads_no_scipy_onnx_or_torch():
    assert _loaded_after("import audit") == []
    assert _loaded_after("import audit.cli") == []  # the command line starts fast too


def test_every_public_name_resolves_from_its_module():
    assert audit.__all__ == sorted(audit._EXPORTS)
    for name, module in audit._EXPORTS.items():
        value = getattr(audit, name)
        assert value is getattr(sys.modules[module], name), name
    assert set(audit.__all__) <= set(dir(audit))
    with pytest.raises(AttributeError, match="module 'audit' has no attribute 'nothing'"):
        audit.nothing  # noqa: B018


def test_results_render_through_the_report_layer_once_audit_is_imported():
    from audit.results import Estimate, OutputResult
    from audit.results.base import _RENDERER

    assert _RENDERER is not None
    e = Estimate(1.0, 0.9, 1.1, 0.05)
    result = audit.AuditResult({"source": "m", "format": "onnx"}, [], {"points": 8}, [OutputResult("y", e, e, e)])
    assert result.__rich__() is not None and not isinstance(result.__rich__(), str)


def _modules_after_cli(args: list[str], cwd, watch=("onnx", "torch", "matplotlib", "dask", "scipy.stats")) -> list[str]:
    code = (
        f"import sys\nfrom audit.cli import main\nmain({args!r})\n"
        f"print(' '.join(m for m in {tuple(watch)!r} if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True, cwd=cwd).stdout
    return out.splitlines()[-1].split()  # the last line: after any report the command printed


def test_an_audit_loads_only_what_its_model_needs(tmp_path):
    """An ONNX model audited for its outputs alone needs no onnx (its graph is read for layers only);
    a Python function needs neither ONNX nor Torch; no audit loads matplotlib or dask unasked, nor
    scipy.stats for laws with their own inverse CDF (about a second of start-up)."""
    from pathlib import Path

    root = Path(__file__).resolve().parents[2]
    common = ["--points", "16", "--replicates", "2", "--no-save", "-q"]
    onnx_args = ["audit", str(root / "model_zoo/additive.onnx"), "--law", "normal", "--layers", "none", *common]
    assert _modules_after_cli(onnx_args, tmp_path) == []
    func_args = ["audit", "model_zoo.functions:ishigami", "--inputs", "model_zoo/ishigami.toml", *common]
    assert _modules_after_cli(func_args, root) == []


def test_an_audit_of_uniform_inputs_loads_no_scipy(tmp_path):
    """Uniform laws map without an inverse CDF and the intervals' t quantiles for whole degrees of
    freedom come from audit/estimators/student.py: such an audit never imports scipy (a quarter of a
    second of start-up); a normal law's inverse CDF does."""
    from pathlib import Path

    root = Path(__file__).resolve().parents[2]
    common = ["--points", "16", "--replicates", "2", "--no-save", "-q"]
    zoo = root / "model_zoo"
    onnx_args = ["audit", str(zoo / "greenhouse_v1.onnx"), "--inputs", str(zoo / "greenhouse_v1.toml")]
    onnx_args += ["--layers", "none", *common]
    assert _modules_after_cli(onnx_args, tmp_path, watch=("scipy",)) == []
    func_args = ["audit", "model_zoo.functions:ishigami", "--inputs", "model_zoo/ishigami.toml", *common]
    assert _modules_after_cli(func_args, root, watch=("scipy",)) == []
    normal = ["audit", str(root / "model_zoo/additive.onnx"), "--law", "normal", "--layers", "none", *common]
    assert _modules_after_cli(normal, tmp_path, watch=("scipy.special",)) == ["scipy.special"]


def test_a_quiet_audit_loads_no_terminal_renderer(tmp_path):
    """A quiet run (pipelines) prints nothing, so it never imports the report layer or rich (about
    0.06 s of start-up); the same audit without -q draws through them."""
    from pathlib import Path

    root = Path(__file__).resolve().parents[2]
    args = ["audit", str(root / "model_zoo/additive.onnx"), "--law", "normal", "--points", "16", "--replicates", "2"]
    args += ["--layers", "none", "--no-save"]
    watch = ("audit.report", "rich")
    assert _modules_after_cli([*args, "-q"], tmp_path, watch=watch) == []
    shown = _modules_after_cli(args, tmp_path, watch=watch)
    assert set(shown) == set(watch)


def test_notebooks_get_the_html_report_and_repr_a_summary_once_audit_is_imported():
    from htmlcheck import read_page

    from audit.report.charts.indices import indices_title
    from audit.results import Estimate, FeatureEstimate, OutputResult

    e = Estimate(1.0, 0.9, 1.1, 0.05)
    output = OutputResult("y", e, e, e, [FeatureEstimate("x0", Estimate(0.6, 0.5, 0.7, 0.05))])
    result = audit.AuditResult({"source": "m", "format": "onnx"}, [{"name": "x0", "law": "normal"}],
                               {"points": 8}, [output])  # fmt: skip
    html = result._repr_html_()
    assert html.startswith('<div class="netdim"')
    assert read_page(html).titles() == [indices_title("y", first_order=False)]  # no first-order indices given
    assert repr(result).startswith("AuditResult of m (onnx): 1 inputs, 1 outputs") and len(repr(result)) < 500
