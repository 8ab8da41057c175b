"""The simplify result: JSON round trip and its kind."""

import json

import pytest

from audit.results import Estimate, OutputResult, OutputShift, SimplifiedResult, VarianceIdentity, result_from_dict

E = Estimate(1.0, 0.5, 1.5, 0.2)


def result():
    out = OutputResult("y", E, E, E)
    shift = OutputShift("y", out, out, Estimate(0.0, -0.1, 0.1, 0.05), 0.01, True, VarianceIdentity(E, E, E, True),
                        E, None)  # fmt: skip
    written = {"path": "m.onnx", "format": "onnx", "sha256": "0" * 64, "inputs": ["a"], "evaluations_per_row": 4,
               "metadata": {"integrated": [{"feature": "b", "nodes": 4}], "frozen": []}}  # fmt: skip
    return SimplifiedResult({"source": "m.onnx", "format": "onnx"}, [{"name": "a"}, {"name": "b"}], {"points": 8},
                            written, [shift], ["note"])  # fmt: skip


def test_round_trip_through_json():
    r = result()
    back = result_from_dict(json.loads(json.dumps(r.to_dict())))
    assert isinstance(back, SimplifiedResult) and back.to_dict() == r.to_dict()
    assert back.integrated == [{"feature": "b", "nodes": 4}] and back.output("y").mean_agrees
    with pytest.raises(KeyError):
        back.output("z")


def test_other_kinds_are_refused():
    data = result().to_dict()
    data["kind"] = "advice"
    with pytest.raises(ValueError, match="simplify"):
        SimplifiedResult.from_dict(data)
