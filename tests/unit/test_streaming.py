"""A task summed call by call (audit.streaming, ``JansenSums.add_rows``) gives the sums of the whole task.

References: the same sums formed on the whole block at once (``JansenSums.add``), and the
same audit run with every block evaluated whole (common practice, no source); the
mean dimension of every unit lies in [1, d] (its definition: a sum of total indices, each
at most 1, that is at least the sum of first-order indices, which is 1 for a unit with
variance).
"""

from __future__ import annotations

import itertools
import warnings

import estimator_checks as checks
import netbuild
import numpy as np
import pytest
import torch
from hypothesis import given, settings
from hypothesis import strategies as st

import audit
from audit.design import Design
from audit.engine import Group, NonFiniteError, Task, run_task
from audit.estimators.jansen import Jansen, JansenSums
from audit.models.onnx import OnnxModel

pytestmark = pytest.mark.filterwarnings(checks.ANY_BLOCK)


@st.composite
def _parts(draw):
    """A block (points n, inputs g, units k, float type) and cuts of its n (g + 2) rows into parts."""
    n, g, k = draw(st.integers(1, 30)), draw(st.integers(1, 5)), draw(st.integers(1, 4))
    rows = n * (g + 2)
    cuts = sorted(draw(st.sets(st.integers(1, rows - 1), max_size=12)) | {0, rows}) if rows > 1 else [0, 1]
    return n, g, k, draw(st.sampled_from([np.float32, np.float64])), cuts, draw(st.integers(0, 2**31))


@settings(max_examples=150, deadline=None)
@given(_parts())
def test_a_block_in_any_parts_has_the_sums_of_the_whole(case) -> None:
    n, g, k, dtype, cuts, seed = case
    y = np.random.default_rng(seed).normal(1.0, 2.0, size=(n * (g + 2), k)).astype(dtype)
    whole, parts = JansenSums(k, g, detail=False), JansenSums(k, g, detail=False)
    whole.add(y)
    for a, b in itertools.pairwise(cuts):
        parts.add_rows(y[a:b], a, n)
    checks.assert_same(checks.finished(whole), checks.finished(parts))
    assert parts.rows == whole.rows == n
    assert parts.state().keys() == whole.state().keys()  # nothing of the block is kept once it is summed


def test_parts_are_refused_with_detail_or_out_of_order() -> None:
    y = np.ones((8, 1))
    with pytest.raises(ValueError, match="without per-input detail"):
        JansenSums(1, 2, detail=True).add_rows(y, 0, 2)
    assert JansenSums(1, 2, detail=False).streams and not JansenSums(1, 2, detail=True).streams
    with pytest.raises(ValueError, match="in order"):
        JansenSums(1, 2, detail=False).add_rows(y[:2], 4, 2)  # a block must start at its row 0
    with pytest.raises(ValueError, match="in order"):
        JansenSums(1, 2, detail=False).add_rows(np.ones((9, 1)), 0, 2)  # more rows than the block has


class _Layered:
    """Ishigami's three outputs and a 'hidden layer' of 6 units; ``call_rows`` set, calls counted."""

    def __init__(self, call_rows: int | None, bad_row: int | None = None) -> None:
        self.call_rows, self.bad_row, self.calls = call_rows, bad_row, []

    def __call__(self, x: np.ndarray) -> dict[str, np.ndarray]:
        self.calls.append(len(x))
        out = checks.evaluator(x)["out"]
        hidden = np.tanh(np.concatenate([x, x * x[:, ::-1]], axis=1)).astype(np.float32)
        if self.bad_row is not None and self.bad_row < len(x):
            hidden[self.bad_row, 2] = np.nan
        return {"out": out, "layer": hidden}


def _job(evaluator):
    design = Design(checks.LAWS, 64, 1, 3, "sobol")
    return checks.job(Jansen(3), design, [Group("out", 3, True), Group("layer", 6, False)], evaluator)


def test_a_task_summed_call_by_call_equals_the_task_summed_whole() -> None:
    task = Task(0, 0, 64)  # 64 points, 5 rows each: 320 rows
    streamed, whole = _Layered(call_rows=48), _Layered(call_rows=None)
    a, b = run_task(_job(streamed), task), run_task(_job(whole), task)
    assert streamed.calls == [48] * 6 + [32] and whole.calls == [320]
    for name in ("out", "layer"):
        checks.assert_same(checks.finished(b[name]), checks.finished(a[name]))


def test_a_non_finite_hidden_value_gets_the_message_of_a_task_run_whole() -> None:
    task = Task(0, 0, 64)
    with pytest.raises(NonFiniteError) as streamed:
        run_task(_job(_Layered(call_rows=48, bad_row=5)), task)
    with pytest.raises(NonFiniteError) as whole:
        run_task(_job(_Layered(call_rows=None, bad_row=5)), task)
    assert str(streamed.value) == str(whole.value) and "layer" in str(streamed.value)


def _attention_onnx(folder, batch: int | None):
    """A transformer block (attention, residuals, LayerNorm, GELU; d = 64) exported to ONNX."""
    net = netbuild.seeded(netbuild.AttentionBlock, seed=2)
    example = torch.randn(batch or 3, 16, 4)
    path = folder / f"attention_{batch}.onnx"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        torch.onnx.export(
            net, (example,), str(path), dynamo=False, input_names=["x"], output_names=["y"],
            dynamic_axes=None if batch else {"x": {0: "batch"}, "y": {0: "batch"}}, opset_version=netbuild.OPSET,
        )  # fmt: skip
    return path


@pytest.mark.parametrize("batch", [None, 7])
def test_an_onnx_audit_summed_call_by_call_equals_the_audit_of_whole_blocks(tmp_path, monkeypatch, batch) -> None:
    """Every layer of a transformer block, a dynamic and a fixed batch size (7 rows a call, padded)."""
    path = _attention_onnx(tmp_path, batch)
    monkeypatch.setattr("audit.models.onnx.CALL_ROWS", 100)
    model = OnnxModel(path)
    assert model.call_rows == (98 if batch else 100)
    kwargs = dict(points=64, replicates=2, seed=5, layers="all", block=16)
    streamed = audit.audit_model(model, "uniform", **kwargs).to_dict()
    monkeypatch.setattr(OnnxModel, "call_rows", None)
    whole = audit.audit_model(OnnxModel(path), "uniform", **kwargs).to_dict()
    assert streamed["layers"] and [la["name"] for la in streamed["layers"]] == [la["name"] for la in whole["layers"]]
    assert streamed["outputs"] == whole["outputs"]  # the outputs are summed whole either way
    for a, b in zip(streamed["layers"], whole["layers"], strict=True):
        for ua, ub in zip(a["units"], b["units"], strict=True):
            for key in ("mean_dimension", "variance"):  # only the order of float64 additions differs
                if isinstance(ub.get(key), dict):
                    assert ua[key]["estimate"] == pytest.approx(ub[key]["estimate"], rel=1e-9, abs=1e-12), a["name"]
            nu = ua.get("mean_dimension")
            if isinstance(nu, dict) and not ua["inert"] and not ua.get("unreliable"):
                assert nu["ci_low"] <= 64 and nu["ci_high"] >= 1, (a["name"], nu)  # 64 inputs


def test_calls_are_halved_until_their_values_fit_the_budget() -> None:
    from audit.streaming import MIN_CALL_ROWS, STREAM_BYTES, call_size

    assert call_size(1024, 4 * 640) == 1024  # the digits CNN's activation layers: 2.5 KiB a row
    assert call_size(1024, 4 * 1546) == 512  # its every layer and outputs: 6 KiB a row
    assert call_size(1024, STREAM_BYTES) == MIN_CALL_ROWS  # never below the floor
    assert call_size(98, 4 * 10**6) == 98  # a model's own smaller size is kept
