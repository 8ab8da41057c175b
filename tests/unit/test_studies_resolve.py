"""Models and specs as a study receives them (audit.studies.resolve): opened, resolved, identified."""

import importlib
import shutil
from pathlib import Path

import pytest
from fake_models import Layered

from audit.errors import UserError
from audit.inputs import InputSpec, Law
from audit.models.open import open_model
from audit.models.python import PythonModel
from audit.quadrature import PreIntegratedModel
from audit.studies.resolve import inputs_spec, model_identity, resolve_model

ROOT = Path(__file__).resolve().parents[2]
ZOO = ROOT / "model_zoo"


def test_model_identity_changes_when_the_model_file_changes(tmp_path):
    path = tmp_path / "model.onnx"
    shutil.copy(ZOO / "greenhouse_v1.onnx", path)
    first = model_identity(open_model(str(path)))
    assert first["model_format"] == "onnx" and len(first["model_sha256"]) == 64
    assert model_identity(open_model(str(path))) == first  # the same file, the same identity
    shutil.copy(ZOO / "greenhouse_v2.onnx", path)
    assert model_identity(open_model(str(path)))["model_sha256"] != first["model_sha256"]


def test_model_identity_of_a_function_follows_its_module_source(tmp_path, monkeypatch):
    module = tmp_path / "identity_probe.py"
    module.write_text("def f(x):\n    return x.sum(axis=1)\n")
    monkeypatch.syspath_prepend(str(tmp_path))
    probe = importlib.import_module("identity_probe")
    first = model_identity(PythonModel(probe.f, 2, source="identity_probe:f"))
    assert first["model"] == "identity_probe:f" and len(first["model_sha256"]) == 64
    module.write_text("def f(x):\n    return 2 * x.sum(axis=1)  # retrained\n")
    assert model_identity(PythonModel(probe.f, 2, source="identity_probe:f"))["model_sha256"] != first["model_sha256"]


def test_model_identity_of_a_preintegrated_model_adds_the_input_and_the_rule():
    model = PythonModel(lambda x: x.sum(axis=1), 3, source="sum")
    pm = PreIntegratedModel(model, [Law("normal")] * 3, 1, nodes=8)
    identity = model_identity(pm)
    assert identity["integrated"] == [1, pm.cost]
    assert {k: v for k, v in identity.items() if k != "integrated"} == model_identity(model)
    assert model_identity(object()) == {"model": "object"}


def test_inputs_and_models_are_resolved_from_what_the_user_gives():
    assert inputs_spec(None).default == Law("normal")
    assert inputs_spec("uniform").default == Law("uniform")
    assert inputs_spec(str(ZOO / "ishigami.toml")).dim == 3
    assert inputs_spec(ZOO / "ishigami.toml").dim == 3
    spec = InputSpec(count=3)
    assert inputs_spec(spec) is spec
    assert inputs_spec([Law("normal")] * 2).laws == [Law("normal")] * 2
    with pytest.raises(UserError, match="`inputs` must be an InputSpec"):
        inputs_spec([1, 2])
    model = Layered()
    assert resolve_model(model, spec) is model
    opened = resolve_model("model_zoo.functions:ishigami", InputSpec(count=3))
    assert opened.format == "python" and opened.inputs[0].shape == (3,)
