"""What a torch.export archive may hold before netdim lets Torch load it; sizes of zip members.

References: the targets and expressions accepted are those torch.export writes (read
from exported files here); the refused ones are built here to call arbitrary code
(common practice, no source).
"""

from __future__ import annotations

import json
import zipfile
from pathlib import Path

import netbuild
import pytest
import torch

from audit.errors import UserError
from audit.models.torch.archive import _expr_ok, _target_ok, check_sizes, read_program, size_limit

ACCEPTED = [
    "torch.ops.aten.linear.default", "torch.ops.aten.add.Tensor", "torch.ops.higher_order.cond", "_operator.getitem",
    "_operator.mul", "math.sqrt", "torch.sym_max", "torch._check_is_size",
]  # fmt: skip
REFUSED = [
    "torch.hub.load", "torch.load", "torch.ops.load_library", "torch.ops.import_module.x.y", "builtins.exec",
    "_operator.attrgetter", "torch.ops.aten.__class__.__init__", "os.system", "#some_extension",
]  # fmt: skip


@pytest.mark.parametrize("target", ACCEPTED)
def test_torch_operators_are_accepted(target: str) -> None:
    assert _target_ok(target)


@pytest.mark.parametrize("target", REFUSED)
def test_other_callables_are_refused(target: str) -> None:
    assert not _target_ok(target)


def test_shape_expressions() -> None:
    assert _expr_ok("Mul(Integer(12), Symbol('s77', positive=True, integer=True))")
    assert _expr_ok("Min(Integer(4), FloorDiv(Symbol('s0', integer=True), Integer(2)))")
    assert not _expr_ok("__import__('os').system('x')")
    assert not _expr_ok("Symbol('s0').__class__")
    assert not _expr_ok("Symbol('a; import os')")
    assert not _expr_ok("[x for x in ()]")


def test_graph_with_an_operator_argument_that_is_no_operator(tmp_path: Path) -> None:
    net = netbuild.seeded(netbuild.TinyMLP)
    paths = netbuild.export_all(net, torch.zeros(2, 3), tmp_path, "mlp")

    def change(name: str, data: bytes) -> bytes:
        if not name.endswith("models/model.json"):
            return data
        document = json.loads(data)
        node = document["graph_module"]["graph"]["nodes"][0]
        node["inputs"].append({"name": "fn", "arg": {"as_operator": "torch.hub.load"}, "kind": 1})
        return json.dumps(document).encode()

    target = tmp_path / "op_arg.pt2"
    with zipfile.ZipFile(paths["pt2"]) as zin, zipfile.ZipFile(target, "w") as zout:
        for info in zin.infolist():
            zout.writestr(info, change(info.filename, zin.read(info.filename)))
    with pytest.raises(UserError, match=r"calls 'torch.hub.load', which is not a Torch operator.*`trust`"):
        read_program(target)
    assert read_program(paths["pt2"]).getbuffer().nbytes == paths["pt2"].stat().st_size  # a plain program passes


def test_size_limit_and_honest_archives(tmp_path: Path) -> None:
    assert size_limit(10 * 2**20, None) == (160 + 64) * 2**20
    assert size_limit(10 * 2**20, 100 * 2**20) == 50 * 2**20  # half the memory available
    net = netbuild.seeded(netbuild.TinyMLP)
    for path in netbuild.export_all(net, torch.zeros(2, 3), tmp_path, "mlp").values():
        check_sizes(path)  # every format Torch writes passes
