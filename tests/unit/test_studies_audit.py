"""The audit workflow (audit.studies.audit): from a model or a function to an AuditResult."""

from pathlib import Path

import numpy as np
import pytest
from fake_models import Layered
from scipy import stats

from audit import audit_function, audit_model
from audit.errors import UserError
from audit.inputs import InputSpec, Law
from audit.studies import execute, function_model, prepare
from audit.studies.options import DesignOptions, RunOptions
from model_zoo import functions as fz

ZOO = Path(__file__).resolve().parents[2] / "model_zoo"
KW = dict(points=128, replicates=4, seed=2)


def test_a_function_becomes_a_model_with_its_spec():
    model, spec = function_model(fz.ishigami, InputSpec(count=3), None)
    assert model.format == "python" and model.source == "model_zoo.functions:ishigami" and spec.dim == 3
    model, _ = function_model(fz.additive, "normal", 5)
    assert model.inputs[0].shape == (5,)
    with pytest.raises(UserError, match="pass `dim` or an input spec that lists the features"):
        function_model(fz.additive, "normal", None)


def test_audit_function_measures_outputs_only_and_records_the_run():
    r = audit_function(fz.ishigami, str(ZOO / "ishigami.toml"), **KW)
    assert r.layers == [] and [o.name for o in r.outputs] == ["y"]
    assert [i["name"] for i in r.inputs] == ["x1", "x2", "x3"]
    assert r.design["evaluations"] == 128 * 4 * 5 and r.design["seed"] == 2
    assert r.model["format"] == "python"


def test_audit_model_measures_the_chosen_layers():
    r = audit_model(Layered(), "normal", layers="all", unit_detail=["act"], **KW)
    assert [x.name for x in r.layers] == ["pre", "act"]
    assert r.layers[1].units[0].total_index and not r.layers[0].units[0].total_index  # per-input detail on act
    assert "a remark of the backend" in r.notices
    # the first layer is linear in the inputs: every unit has ν = 1 (common practice, no source), within
    # Bonferroni-adjusted t intervals over its 4 units (1 % family error)
    k = stats.t.ppf(1 - 0.01 / (2 * 4), KW["replicates"] - 1)
    assert all(abs(u.mean_dimension.estimate - 1) <= k * u.mean_dimension.std_error for u in r.layers[0].units)


def test_audit_model_opens_a_path():
    r = audit_model(str(ZOO / "greenhouse_v1.onnx"), str(ZOO / "greenhouse_v1.toml"), layers="none", **KW)
    assert r.model["format"] == "onnx" and len(r.outputs) == 2 and r.design["spec"].endswith(".toml")


def test_prepare_then_execute_is_audit_model():
    setup = prepare(Layered(), [Law("uniform")] * 3, design=DesignOptions(**KW), layers="none")
    a = execute(setup)
    b = audit_model(Layered(), [Law("uniform")] * 3, layers="none", block=32, **KW)
    assert [o.mean_dimension.estimate for o in a.outputs] == pytest.approx(
        [o.mean_dimension.estimate for o in b.outputs], rel=1e-12
    )
    assert np.isfinite(a.design["seconds"]) and b.design["block"] == 32


def test_execute_honours_the_block_run_option():
    setup = prepare(Layered(), [Law("uniform")] * 3, design=DesignOptions(**KW), layers="none")
    assert setup.block != 32
    assert execute(setup, RunOptions(block=32)).design["block"] == 32
