"""A saved audit report as the old side of a comparison (audit.studies.baseline, audit.studies.compare)."""

import json

import clifuncs
import numpy as np
import pytest

from audit import audit_model, compare_models
from audit.errors import UserError
from audit.inputs import Law
from audit.models.python import PythonModel

KW = dict(points=128, replicates=4, seed=3, layers="none")


@pytest.fixture()
def report(tmp_path):
    r = audit_model(PythonModel(clifuncs.additive6, 6, source="additive6"), "normal", **KW)
    path = tmp_path / "released.json"
    path.write_text(json.dumps(r.to_dict()))
    return path


def _new():
    return PythonModel(clifuncs.additive6_plus_product, 6, source="new")


def test_the_baseline_design_and_laws_are_used(report):
    r = compare_models(str(report), _new(), layers="none")
    assert (r.design["points"], r.design["replicates"], r.design["seed"]) == (128, 4, 3)
    # additive6 + a three-way term of variance 4 on 28: ν rises from 1 to (28 + 3·4)/32 = 1.25 (clifuncs)
    assert r.design["baseline"] is True and r.outputs[0].mean_dimension_change.covers(0.25)


def test_a_different_design_is_refused_naming_it(report):
    with pytest.raises(UserError, match=r"`points` 256 here, 128 in the baseline"):
        compare_models(str(report), _new(), points=256, layers="none")
    with pytest.raises(UserError, match=r"`seed` 4 here, 3 in the baseline"):
        compare_models(str(report), _new(), seed=4, layers="none")


def test_different_laws_are_refused_naming_the_input(report):
    with pytest.raises(UserError, match=r"x0: uniform\(0, 1\) here, normal\(0, 1\) in the baseline"):
        compare_models(str(report), _new(), "uniform", layers="none")
    laws = [Law("normal")] * 6
    assert compare_models(str(report), _new(), laws, layers="none").design["baseline"]


def test_reports_that_cannot_be_a_baseline_are_refused(report, tmp_path):
    data = json.loads(report.read_text())
    data.pop("replicates")
    old = tmp_path / "old.json"
    old.write_text(json.dumps(data))
    with pytest.raises(UserError, match="keeps no per-randomization values"):
        compare_models(str(old), _new(), layers="none")
    with pytest.raises(UserError, match="does not exist"):
        compare_models(str(tmp_path / "missing.json"), _new())
    bad = tmp_path / "bad.json"
    bad.write_text("{")
    with pytest.raises(UserError, match="not a netdim report"):
        compare_models(str(bad), _new())
    with pytest.raises(UserError, match="`paired`"):
        compare_models(str(report), _new(), paired=False)


def test_in_memory_torch_and_onnx_models():
    import onnx
    import torch

    net = torch.nn.Sequential(torch.nn.Linear(3, 4), torch.nn.Tanh(), torch.nn.Linear(4, 1)).eval()
    r = compare_models(net, net, "normal", points=128, replicates=4, seed=1)
    assert r.passed and r.old_model["format"] == "torch-module"
    proto = onnx.load(str(clifuncs.__file__).replace("tests/clifuncs.py", "model_zoo/additive.onnx"))
    a = audit_model(proto, "normal", points=256, replicates=4, seed=1)
    assert a.model["format"] == "onnx" and a.outputs[0].mean_dimension.covers(1.0)
    assert np.isfinite(a.outputs[0].variance.estimate)


def test_a_baseline_of_empirical_laws_needs_and_checks_the_spec(tmp_path):
    """A report records an empirical law by a digest of its knots: the same laws given again are checked and used."""
    knots = np.sort(np.random.default_rng(5).normal(size=(6, 40)), axis=1)
    laws = [Law("empirical", {"quantiles": list(map(float, q))}) for q in knots]
    r = audit_model(PythonModel(clifuncs.additive6, 6, source="additive6"), laws, **KW)
    path = tmp_path / "released.json"
    path.write_text(json.dumps(r.to_dict()))
    with pytest.raises(UserError, match=r"only by a digest of its knots.*Give the input spec"):
        compare_models(str(path), _new(), layers="none")
    other = [*laws[:5], Law("empirical", {"quantiles": list(map(float, knots[5] + 0.5))})]
    with pytest.raises(UserError, match=r"x5: empirical\(40 knots.*an empirical law of digest"):
        compare_models(str(path), _new(), other, layers="none")
    c = compare_models(str(path), _new(), laws, layers="none")
    assert c.design["baseline"] is True and c.design["points"] == 128
    assert np.isclose(c.outputs[0].old.mean_dimension.estimate, r.outputs[0].mean_dimension.estimate, rtol=1e-12)
