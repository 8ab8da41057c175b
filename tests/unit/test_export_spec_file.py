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
