"""Every error a user can cause ends in exit code 2, a message naming the problem, and no traceback.

One row per case of the README's table "When something is wrong".
"""

import os
import tempfile
from pathlib import Path

import numpy as np
import onnx
import pytest
from onnx import TensorProto, helper

from audit.cli import main

ROOT = Path(__file__).resolve().parents[2]
ZOO = ROOT / "model_zoo"


def _argmax_model(path: Path) -> Path:
    x = helper.make_tensor_value_info("x", TensorProto.FLOAT, ["n", 3])
    y = helper.make_tensor_value_info("y", TensorProto.INT64, ["n", 1])
    node = helper.make_node("ArgMax", ["x"], ["y"], axis=1, keepdims=1)
    model = helper.make_model(helper.make_graph([node], "g", [x], [y]), opset_imports=[helper.make_opsetid("", 17)])
    onnx.save(model, path)
    return path


def _nan_model(path: Path) -> Path:
    x = helper.make_tensor_value_info("x", TensorProto.FLOAT, ["n", 2])
    y = helper.make_tensor_value_info("y", TensorProto.FLOAT, ["n", 2])
    node = helper.make_node("Log", ["x"], ["y"])
    model = helper.make_model(helper.make_graph([node], "g", [x], [y]), opset_imports=[helper.make_opsetid("", 17)])
    onnx.save(model, path)
    return path


def _write(tmp: Path, name: str, data: bytes | str) -> str:
    p = tmp / name
    p.write_bytes(data if isinstance(data, bytes) else data.encode())
    return str(p)


def _future_torchscript(path: Path) -> Path:
    """The zoo's TorchScript archive, its format version raised to one this torch cannot read."""
    import zipfile

    with zipfile.ZipFile(ZOO / "greenhouse_v1.pt") as zin, zipfile.ZipFile(path, "w") as zout:
        for name in zin.namelist():
            data = zin.read(name)
            zout.writestr(name, b"99\n" if name.endswith("/version") else data)
    return path


CASES = {
    "TorchScript from an incompatible torch": (
        lambda t: ["audit", str(_future_torchscript(t / "future.pt"))],
        "incompatible torch version",
    ),
    "missing model file": (lambda t: ["audit", str(t / "nope.onnx")], "does not exist"),
    "folder instead of file": (lambda t: ["audit", str(t)], "is a folder"),
    "empty ONNX file": (lambda t: ["audit", _write(t, "e.onnx", b"")], "empty"),
    "random bytes as ONNX": (lambda t: ["audit", _write(t, "r.onnx", os.urandom(300))], "ONNX"),
    "random bytes as Torch": (lambda t: ["audit", _write(t, "r.pt", os.urandom(300))], "Torch"),
    "integer outputs": (lambda t: ["audit", str(_argmax_model(t / "am.onnx"))], "holds integers"),
    "NaN outputs": (lambda t: ["audit", str(_nan_model(t / "log.onnx")), "--law", "normal"], "NaN or infinite"),
    "state dict without class": (lambda t: ["audit", str(ZOO / "greenhouse_v1.state.pt")], "--torch-class"),
    "wrong torch class": (
        lambda t: ["audit", str(ZOO / "greenhouse_v1.state.pt"), "--torch-class", "model_zoo.nets:DigitsCNN"],
        "DigitsCNN",
    ),
    "reference that does not import": (lambda t: ["audit", "no_such_pkg_q:f", "--dim", "2"], "could not be imported"),
    "spec syntax error": (
        lambda t: ["audit", "clifuncs:two_outputs", "--inputs", _write(t, "s.toml", "[inputs\nlaw=1")],
        "line 1, column",
    ),
    "spec unknown key": (
        lambda t: ["audit", "clifuncs:two_outputs", "--inputs", _write(t, "s.toml", '[inputs]\nlaw="normal"\ncont=2')],
        "Did you mean 'count'",
    ),
    "spec feature count differs": (
        lambda t: ["audit", str(ZOO / "greenhouse_v1.onnx"), "--inputs", _write(t, "s.toml", "[inputs]\ncount=3")],
        "describes 3 input features but the model takes 8",
    ),
    "points 0": (lambda t: ["audit", "clifuncs:two_outputs", "--dim", "2", "--points", "0"], "whole number ≥ 1"),
    "replicates 1": (lambda t: ["audit", "clifuncs:two_outputs", "--dim", "2", "--replicates", "1"], "At least 2"),
    "unknown law": (lambda t: ["audit", "clifuncs:two_outputs", "--dim", "2", "--law", "cauchy"], "valid choices"),
    "memory beyond what is available": (
        lambda t: ["audit", str(ZOO / "digits_cnn.onnx"), "--layers", "all", "--memory-limit", "0.001"],
        "would need about",
    ),
    "unknown layer": (lambda t: ["audit", str(ZOO / "greenhouse_v1.onnx"), "--layers", "nope"], "no layer named"),
    "report that is not JSON": (lambda t: ["show", _write(t, "x.json", "{")], "not a JSON file"),
}


@pytest.mark.parametrize("case", list(CASES))
def test_user_error_exits_2_without_traceback(case, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(ROOT)
    make, needle = CASES[case]
    args = make(tmp_path)
    code = main([*args, "--no-save"] if args[0] == "audit" else args)
    err = capsys.readouterr().err
    assert code == 2, err
    assert needle in err, err
    assert "Traceback" not in err
    assert err.startswith("netdim: error: ")


def test_report_kept_when_the_json_path_is_unwritable(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(ROOT)
    monkeypatch.setattr(tempfile, "tempdir", str(tmp_path))  # the kept report goes there, not into /tmp
    blocker = tmp_path / "file"
    blocker.write_text("")
    code = main(
        ["audit", "clifuncs:two_outputs", "--dim", "2", "--points", "64", "--quiet", "--json", str(blocker / "r.json")]
    )
    err = capsys.readouterr().err
    assert code == 2 and "Nothing is lost" in err
    saved = err.split("saved to '")[1].split("'")[0]
    assert Path(saved).exists() and np.isfinite(len(Path(saved).read_text()))
