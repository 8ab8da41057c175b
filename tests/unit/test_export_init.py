"""write_model: the writer by format, suffixes, and files it never overwrites."""

from pathlib import Path

import numpy as np
import pytest

from audit.errors import UserError
from audit.export import default_path, make_plan, write_model
from audit.inputs import load_spec
from audit.models.open import open_model

ZOO = Path(__file__).resolve().parents[2] / "model_zoo"


@pytest.fixture(scope="module")
def greenhouse():
    spec = load_spec(ZOO / "greenhouse_v1.toml")
    model = open_model(str(ZOO / "greenhouse_v1.onnx"))
    return model, make_plan(model, spec.names, spec.laws, freeze={7: 6.0})


def test_writes_atomically_and_refuses_to_overwrite(tmp_path, greenhouse):
    model, plan = greenhouse
    out = tmp_path / "g.onnx"
    assert write_model(model, plan, out) == [] and out.stat().st_size > 0
    before = out.read_bytes()
    with pytest.raises(UserError, match="does not overwrite"):
        write_model(model, plan, out)
    write_model(model, plan, out, replace=True)
    assert out.read_bytes() == before  # the same plan writes the same bytes
    assert [p.name for p in tmp_path.iterdir()] == ["g.onnx"]  # no temporary file left


def test_suffix_source_and_precision_are_checked(tmp_path, greenhouse):
    model, plan = greenhouse
    with pytest.raises(UserError, match=r"\.onnx"):
        write_model(model, plan, tmp_path / "g.pt")
    with pytest.raises(UserError, match="source model itself"):
        write_model(model, plan, ZOO / "greenhouse_v1.onnx", replace=True)
    with pytest.raises(UserError, match="output_dtype"):
        write_model(model, plan, tmp_path / "g.onnx", output_dtype="half")


def test_default_path_follows_the_format(greenhouse):
    assert default_path(greenhouse[0]) == Path("greenhouse_v1-simplified.onnx")
    assert np.isfinite(greenhouse[1].frozen[0].value)
