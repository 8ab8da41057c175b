"""Resolving a study before any work (audit.studies.setup): inputs, outputs, layers, memory."""

from pathlib import Path

import numpy as np
import pytest
from fake_models import Layered

from audit import engine, memory
from audit.errors import UserError
from audit.inputs import InputSpec, Law
from audit.models.open import open_model
from audit.models.python import PythonModel
from audit.studies.options import DesignOptions
from audit.studies.setup import prepare, select_layers

ROOT = Path(__file__).resolve().parents[2]
ZOO = ROOT / "model_zoo"
DESIGN = DesignOptions(points=64, replicates=2, seed=1)


@pytest.mark.parametrize(
    "layers,names",
    [
        ("activations", ["act"]),
        ("all", ["pre", "act"]),
        ("none", []),
        (["pre"], ["pre"]),
        ("act, pre", ["act", "pre"]),
    ],
)
def test_layers_are_chosen_by_kind_or_name(layers, names):
    model = Layered()
    assert [x.name for x in select_layers(model, layers)] == names
    setup = prepare(model, "normal", design=DESIGN, layers=layers)
    assert [x.name for x in setup.layers] == names
    assert [g.name for g in setup.groups] == ["outputs", *("layer:" + n for n in names)]
    assert model.calls == 0  # nothing is evaluated while preparing


def test_unknown_layers_are_refused_with_a_suggestion():
    with pytest.raises(UserError, match=r"The model has no layer named 'prr'\. Did you mean 'pre'\?"):
        prepare(Layered(), "normal", design=DESIGN, layers=["prr"])
    python = PythonModel(lambda x: x.sum(axis=1), 2, source="sum")
    with pytest.raises(UserError, match="has no hidden layers to capture, so 'pre' cannot be chosen"):
        prepare(python, "normal", design=DESIGN, layers="pre")


def test_unit_detail_needs_a_captured_layer_and_sets_detail_on_it_only():
    with pytest.raises(UserError, match="`unit_detail` names layer 'pre', which is not captured; add it to `layers`"):
        prepare(Layered(), "normal", design=DESIGN, unit_detail=["pre"])
    setup = prepare(Layered(), "normal", design=DESIGN, layers="all", unit_detail=["pre"])
    assert [(g.name, g.units, g.detail) for g in setup.groups] == [
        ("outputs", 2, True), ("layer:pre", 4, True), ("layer:act", 4, False)
    ]  # fmt: skip


def test_a_run_that_would_not_fit_in_memory_is_refused_before_any_work():
    model = Layered()
    with pytest.raises(UserError, match=r"would need about .* GiB of memory but 0.0 GiB is available"):
        prepare(model, "normal", design=DESIGN, memory_limit=1000)
    assert model.calls == 0
    assert prepare(model, "normal", design=DESIGN, memory_limit=1 << 30).block >= 1


def test_the_memory_limit_sets_the_block(monkeypatch):
    monkeypatch.setattr(memory, "available_memory", lambda: 1 << 40)
    big = DesignOptions(points=2**16, replicates=2, seed=1)
    free = prepare(Layered(), "normal", design=big).block
    limited = prepare(Layered(), "normal", design=big, memory_limit=1 << 20).block
    assert limited < free
    assert limited * memory._bytes_per_point(3, 2 + 4, 5) <= (1 << 20) // 2  # half the limit for the block
    assert prepare(Layered(), "normal", design=big, block=100).block == 100


def test_names_laws_outputs_and_notices():
    spec = InputSpec(names=["p", "q", "r"], laws=[Law("uniform")] * 3, outputs=["heat", "damp"], source="s.toml")
    setup = prepare(Layered(), spec, design=DesignOptions(points=60, replicates=2, seed=1), layers="none")
    assert setup.names == ["p", "q", "r"] and setup.output_names == ["heat", "damp"]
    assert setup.laws == [Law("uniform")] * 3 and setup.design.points == 64
    assert setup.notices[0].startswith("points rounded up from 60 to 64") and "a remark of the backend" in setup.notices
    assert prepare(Layered(), "normal", design=DESIGN).names == ["a", "b", "c"]  # the model's own names
    python = PythonModel(lambda x: x.sum(axis=1), 2, source="sum")
    assert prepare(python, "normal", design=DESIGN).names == ["x0", "x1"]
    with pytest.raises(UserError, match="names 1 outputs but the model has 2 output units"):
        prepare(Layered(), InputSpec(outputs=["only"], source="s.toml"), design=DESIGN)
    with pytest.raises(UserError, match="describes 4 input features but the model takes 3"):
        prepare(Layered(), InputSpec(count=4), design=DESIGN)


def test_the_setup_makes_the_job_of_the_run():
    setup = prepare(Layered(), "uniform", design=DESIGN, layers="all")
    job = setup.job("audit")
    assert job.name == "audit" and job.groups == setup.groups and job.design is setup.design
    assert job.dtype is np.float64 and setup.evaluations == 64 * 2 * 5
    out = job.evaluator(np.zeros((3, 3)))
    assert set(out) == {"outputs", "layer:pre", "layer:act"} and out["layer:act"].shape == (3, 4)
    onnx = prepare(open_model(str(ZOO / "greenhouse_v1.onnx")), "uniform", design=DESIGN, layers="none")
    assert onnx.dtype is np.float32  # float32 networks get float32 rows
    assert prepare(Layered(), "normal", design=DESIGN, seed=99).design.seed == 99


def test_choices_beyond_the_defaults_are_kept_for_the_report():
    assert prepare(Layered(), "normal", design=DESIGN).choices == {}
    setup = prepare(Layered(), "normal", design=DESIGN, layers=["pre", "act"], unit_detail=["pre"], outputs=["y[1]"])
    assert setup.choices == {"layers": "pre,act", "unit_detail": ["pre"], "outputs": ["y[1]"]}
    assert prepare(Layered(), "normal", design=DESIGN, layers="none").choices == {"layers": "none"}


def _timed_job(per_call: float, per_row: float):
    import time

    import estimator_checks as checks

    from audit.design import Design

    def func(x):
        time.sleep(per_call + per_row * len(x))
        return checks.evaluator(x)

    return checks.job("jansen", Design(checks.LAWS, 16384, 2, 1), [engine.Group("out", 3)], func)


def test_the_time_check_times_larger_blocks_before_refusing_a_fast_model():
    """A cost per call dominates a small probe; the run's own blocks are far faster (common practice, no source)."""
    from audit.studies.setup import check_time, probe_rate

    fast = _timed_job(per_call=0.02, per_row=0.0)
    assert 2e7 / probe_rate(fast, None, 4096) > 30  # the small probe alone would refuse
    check_time(fast, 2 * 10**7, budget=30.0)  # larger blocks show the run fits
    slow = _timed_job(per_call=0.0, per_row=2e-5)  # 50 000 rows a second whatever the block
    with pytest.raises(UserError, match="beyond the time budget"):
        check_time(slow, 2 * 10**7, budget=30.0)
