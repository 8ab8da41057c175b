"""The input spec written beside a simplified model reads back with the kept inputs, laws and units."""

from pathlib import Path

from audit.export import make_plan
from audit.export.spec_file import spec_path, spec_text
from audit.inputs import load_spec
from audit.models.open import open_model

ZOO = Path(__file__).resolve().parents[2] / "model_zoo"


def test_spec_reads_back(tmp_path):
    spec = load_spec(ZOO / "greenhouse_v1.toml")
    model = open_model(str(ZOO / "greenhouse_v1.onnx"))
    plan = make_plan(model, spec.names, spec.laws, integrate={1: 4}, freeze={7: 6.0})
    path = spec_path(tmp_path / "g.onnx")
    path.write_text(spec_text(plan, spec.title, spec.units, spec.outputs, spec.output_units), encoding="utf-8")
    back = load_spec(path)
    assert path.name == "g.toml" and back.names == plan.kept_names and back.laws == plan.kept_laws
    assert back.units == [spec.units[j] for j in plan.kept] and back.outputs == spec.outputs
    assert back.title == spec.title


def test_empirical_and_discrete_laws_read_back_in_full(tmp_path):
    """A spec made from data (quantile knots, discrete levels) survives the simplified model's spec exactly."""
    import numpy as np

    from audit.inputs import Law
    from audit.models.python import PythonModel

    laws = [Law("empirical", {"quantiles": [0.0, 0.5, 0.7, 2.0]}), Law("discrete", {"values": [1, 2],
            "probabilities": [0.3, 0.7]}), Law("normal", {"mean": 1.0, "sd": 2.0})]  # fmt: skip
    model = PythonModel(lambda x: x.sum(axis=1), 3, source="sum")
    plan = make_plan(model, ["a", "b", "c"], laws, freeze={2: 1.0})
    path = tmp_path / "s.toml"
    path.write_text(spec_text(plan), encoding="utf-8")
    back = load_spec(path)
    assert back.names == ["a", "b"] and back.laws == laws[:2]
    assert np.allclose(back.laws[0].ppf(np.array([0.25, 0.9])), laws[0].ppf(np.array([0.25, 0.9])))
