"""One part of advise alone gives the same advice as the whole run on the same seed.

Every phase of advise draws its points from its own seed, derived from the run's seed
(audit.seeds.child_seed), so leaving a phase out must not move a number of the phases
that run: the check is exact equality, not a tolerance (common practice, no source).
The model is the bundled greenhouse surrogate (model_zoo/greenhouse_v1.onnx).
"""

from pathlib import Path

import pytest

from audit.studies import advise_model

ZOO = Path(__file__).resolve().parents[2] / "model_zoo"
KW = dict(points=256, replicates=4, seed=20, gain_points=(256, 1024))


@pytest.fixture(scope="module")
def runs():
    model, spec = str(ZOO / "greenhouse_v1.onnx"), str(ZOO / "greenhouse_v1.toml")
    return {only: advise_model(model, spec, only=only, **KW) for only in (None, "freezing", "pre-integration")}


def test_only_freezing_gives_the_same_freezing_advice(runs):
    full, alone = runs[None], runs["freezing"]
    assert any(o.freeze_group is not None for o in full.outputs)  # there is freezing advice to compare
    for a, b in zip(full.outputs, alone.outputs, strict=True):
        assert b.audit.to_dict() == a.audit.to_dict()
        assert [f.to_dict() for f in b.freeze] == [f.to_dict() for f in a.freeze]
        assert (b.freeze_group and b.freeze_group.to_dict()) == (a.freeze_group and a.freeze_group.to_dict())
    phases = full.design["evaluations_by_phase"]
    assert alone.design["evaluations"] == phases["audit"] + phases["freeze_check"]


def test_only_pre_integration_gives_the_same_candidates_and_gain(runs):
    full, alone = runs[None], runs["pre-integration"]
    for a, b in zip(full.outputs, alone.outputs, strict=True):
        assert [c.to_dict() for c in b.preintegrate] == [c.to_dict() for c in a.preintegrate]
        assert (b.rqmc_gain and b.rqmc_gain.to_dict()) == (a.rqmc_gain and a.rqmc_gain.to_dict())
        assert b.freeze == [] and b.freeze_group is None
