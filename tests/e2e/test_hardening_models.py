"""Loading a model never runs code from the file, never exhausts memory, and never ends in a traceback.

Each bad file is built here (common practice, no source). A malicious file carries a
pickle payload, or a shape expression, that creates a marker file when Torch's own
loader reads it; the control checks show that the payload is live (plain
``torch.export.load`` does create the marker), then every command of netdim must exit
with code 2, a one-paragraph message and no traceback, and the marker must never appear.
"""

from __future__ import annotations

import io
import json
import sys
import warnings
import zipfile
from pathlib import Path

import netbuild
import numpy as np
import pytest
import torch

from audit.cli import main
from audit.errors import UserError
from audit.models import open_model

COMMANDS = ("audit", "layers", "compare", "advise")


class _Payload:
    """Unpickling this opens (creates) the file ``marker``: code run from a model file."""

    def __init__(self, marker: Path) -> None:
        self.marker = str(marker)

    def __reduce__(self):
        return (open, (self.marker, "w"))


def _args(command: str, model: Path, other: Path) -> list[str]:
    if command == "compare":
        return [command, str(other), str(model), "--points", "64", "--replicates", "2", "--quiet", "--no-save"]
    if command == "layers":
        return [command, str(model)]
    return [command, str(model), "--points", "64", "--replicates", "2", "--quiet", "--no-save"]


def _exits_2(capsys, args: list[str], words: str) -> str:
    code = main(args)
    err = capsys.readouterr().err
    assert code == 2, err
    assert words in err, err
    assert "Traceback" not in err and "unexpected failure" not in err, err
    assert err.startswith("netdim: error: ") and err.count("\n") == 1, err  # one paragraph
    return err


@pytest.fixture(scope="module")
def good(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    net = netbuild.seeded(netbuild.TinyMLP, seed=0)
    return netbuild.export_all(net, torch.zeros(2, 3), tmp_path_factory.mktemp("good"), "mlp")


def _rewrite(source: Path, target: Path, change) -> Path:
    """A copy of the zip ``source`` with each member's bytes passed through ``change(name, data)``."""
    with zipfile.ZipFile(source) as zin, zipfile.ZipFile(target, "w") as zout:
        for info in zin.infolist():
            zout.writestr(info, change(info.filename, zin.read(info.filename)))
    return target


def _pickled_sample_inputs(good: dict[str, Path], target: Path, marker: Path) -> Path:
    buffer = io.BytesIO()
    torch.save(_Payload(marker), buffer)
    payload = buffer.getvalue()
    inputs = "sample_inputs/model.pt"
    return _rewrite(good["pt2"], target, lambda name, data: payload if name.endswith(inputs) else data)


def _expression(good: dict[str, Path], target: Path, marker: Path) -> Path:
    code = f"__import__('builtins').open({str(marker)!r}, 'w')"

    def change(name: str, data: bytes) -> bytes:
        if not name.endswith("models/model.json"):
            return data
        document = json.loads(data)
        stack = [document]
        while stack:  # every shape expression evaluates the payload
            item = stack.pop()
            if isinstance(item, dict):
                for key, value in item.items():
                    if key == "expr_str":
                        item[key] = f"{value} + 0 * len(str({code}))"
                    else:
                        stack.append(value)
            elif isinstance(item, list):
                stack.extend(item)
        return json.dumps(document).encode()

    return _rewrite(good["pt2"], target, change)


MALICIOUS = {
    "pt2 with pickled sample inputs": lambda g, t, m: _pickled_sample_inputs(g, t / "evil.pt2", m),
    "pt2 with code in a shape expression": lambda g, t, m: _expression(g, t / "expr.pt2", m),
    "pt holding such an export archive": lambda g, t, m: _pickled_sample_inputs(g, t / "evil_export.pt", m),
}


@pytest.mark.parametrize("case", list(MALICIOUS))
def test_malicious_export_archive_never_runs(case, good, tmp_path, capsys) -> None:
    marker = tmp_path / "marker"
    path = MALICIOUS[case](good, tmp_path, marker)
    # control: Torch's own loader runs the payload
    with warnings.catch_warnings(), pytest.raises(Exception):  # noqa: B017 - whatever it fails with after
        warnings.simplefilter("ignore")
        torch.export.load(str(path))
    assert marker.exists(), "the payload is not live: the test would prove nothing"
    marker.unlink()
    capsys.readouterr()  # what Torch's loader printed
    for command in COMMANDS:
        _exits_2(capsys, _args(command, path, good["onnx"]), "could run code stored in the file")
        assert not marker.exists(), command


def test_malicious_pickle_never_runs(good, tmp_path, capsys) -> None:
    marker = tmp_path / "marker"
    path = tmp_path / "evil.pt"
    torch.save(_Payload(marker), path)
    for command in COMMANDS:
        _exits_2(capsys, _args(command, path, good["onnx"]), "arbitrary code")
        assert not marker.exists(), command


def test_export_archives_of_plain_tensors_still_open(good) -> None:
    assert open_model(str(good["pt2"])).format == "torch-export"
    copy = good["pt2"].with_name("program_as.pt")  # a .pt holding an export archive takes the same path
    copy.write_bytes(good["pt2"].read_bytes())
    assert open_model(str(copy)).format == "torch-export"


@pytest.fixture(scope="module")
def bomb(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A 1.5 MB torch.save-looking zip whose one member unpacks to 1.5 GiB of zeros."""
    path = tmp_path_factory.mktemp("bomb") / "bomb.pt"
    chunk = bytes(1 << 24)
    with zipfile.ZipFile(path, "w") as archive:
        archive.writestr("bomb/data.pkl", b"\x80\x02}q\x00.")
        info = zipfile.ZipInfo("bomb/data/0")
        info.compress_type = zipfile.ZIP_DEFLATED
        with archive.open(info, "w", force_zip64=True) as member:
            for _ in range(96):
                member.write(chunk)
    assert path.stat().st_size < 2_000_000
    return path


def test_zip_bomb_refused_before_unpacking(bomb, good, capsys, monkeypatch) -> None:
    def never(*_args, **_kwargs):
        raise AssertionError("a member was read")

    monkeypatch.setattr(zipfile.ZipFile, "open", never)  # reading any member fails the test
    monkeypatch.setattr(torch, "load", never)
    for command in ("audit", "layers"):
        err = _exits_2(capsys, _args(command, bomb, good["onnx"]), "declare")
        assert "1,536 MiB" in err and "before unpacking anything" in err


# -- exit 2 with one paragraph ----------------------------------------------------------------


def _spec(tmp: Path, text: str) -> str:
    path = tmp / "spec.toml"
    path.write_text(text, encoding="utf-8")
    return str(path)


CASES = {
    "ONNX output of one value per batch": (
        lambda t, g: ["audit", str(netbuild.batch_mean_graph(t / "mean.onnx"))],
        "one value per batch",
    ),
    "input with a 0-sized dimension": (
        lambda t, g: ["audit", str(netbuild.empty_input_graph(t / "empty.onnx"))],
        "dimension of size 0",
    ),
    "output width that changes with the batch size": (
        lambda t, g: ["audit", str(netbuild.pairwise_graph(t / "pairs.onnx"))],
        "changes its width with the batch size",
    ),
    "forward that needs autograd": (
        lambda t, g: ["audit", str(g["state_dict"]), "--torch-class", "netbuild:GradientInside"],
        "needs gradients",
    ),
    "[model] class that is not a string": (
        lambda t, g: ["audit", str(g["state_dict"]), "--inputs", _spec(t, "[model]\nclass = 5\n")],
        "--torch-class must be a string",
    ),
    "[model] input_shape of fractions": (
        lambda t, g: ["audit", str(g["torchscript"]), "--inputs", _spec(t, "[model]\ninput_shape = [1.5]\n")],
        "not a list of positive whole numbers",
    ),
    "[model] input_shape as text": (
        lambda t, g: ["audit", str(g["torchscript"]), "--inputs", _spec(t, '[model]\ninput_shape = "3"\n')],
        "must be a list of positive whole numbers",
    ),
}


@pytest.mark.parametrize("case", list(CASES))
def test_user_error_exits_2(case, good, tmp_path, capsys) -> None:
    make, words = CASES[case]
    args = make(tmp_path, good)
    _exits_2(capsys, [*args, "--points", "64", "--replicates", "2", "--quiet", "--no-save"], words)


def test_bad_argument_types_reaching_open_model(good) -> None:
    for kwargs, words in (
        ({"input_shape": 5}, "`input_shape` must be a list"),
        ({"input_shape": {"x": "ab"}}, "not a list of positive whole numbers"),
        ({"torch_class": "netbuild:TinyMLP", "torch_arguments": [1, 2]}, "`torch_arguments`"),
        ({"trust": "yes"}, "`trust` must be true or false"),
        ({"dim": 2.5}, "`dim` must be a whole number"),
    ):
        with pytest.raises(UserError, match=words):
            open_model(str(good["state_dict"]), **kwargs)


def test_any_backend_failure_is_a_user_error(good, capsys, monkeypatch) -> None:
    import audit.models.onnx as onnx_backend

    def broken(*_args, **_kwargs):
        raise KeyError("missing piece")

    monkeypatch.setattr(onnx_backend, "make_session", broken)  # a failure no check foresaw
    err = _exits_2(capsys, ["layers", str(good["onnx"])], "could not be opened (KeyError: 'missing piece')")
    assert "export the model again" in err


# -- Python references do not let the working folder shadow installed packages ---------------


def test_working_folder_never_shadows_installed_packages(tmp_path, capsys, monkeypatch) -> None:
    for name in ("rich", "numpy", "colorsys"):
        marker = tmp_path / f"{name}.marker"
        (tmp_path / f"{name}.py").write_text(f"open({str(marker)!r}, 'w')\ndef f(x):\n    return x\n")
    (tmp_path / "mymodel.py").write_text("import colorsys\n\ndef f(x):\n    return x.sum(axis=1)\n")
    monkeypatch.chdir(tmp_path)
    monkeypatch.setattr(sys, "path", [p for p in sys.path if p not in ("", str(tmp_path))])
    monkeypatch.delitem(sys.modules, "colorsys", raising=False)  # imported afresh by mymodel
    monkeypatch.delitem(sys.modules, "mymodel", raising=False)
    code = main(["audit", "mymodel:f", "--dim", "2", "--points", "64", "--replicates", "2", "--quiet", "--no-save"])
    assert code == 0, capsys.readouterr().err
    assert not list(tmp_path.glob("*.marker")), [p.name for p in tmp_path.glob("*.marker")]
    assert sys.path.index(str(tmp_path)) > sys.path.index(str(Path(np.__file__).parents[1]))
    # a reference to the cwd's colorsys gets the installed one, and the message says why
    _exits_2(capsys, ["audit", "colorsys:f", "--dim", "2"], "imported the installed one")
    assert not list(tmp_path.glob("*.marker"))
