"""Settings of every workflow (audit.studies.options): validation, the rounding notice, sorting keywords."""

import numpy as np
import pytest

from audit import advise_model, audit_function, audit_model, compare_models
from audit.errors import UserError
from audit.models.python import PythonModel
from audit.studies.options import DESIGN_OPTIONS, RUN_OPTIONS, DesignOptions, RunOptions, split_options


def test_design_defaults_and_a_recorded_seed():
    d = DesignOptions()
    assert (d.points, d.replicates, d.sampler, d.estimator) == (1024, 8, "sobol", "jansen")
    assert isinstance(d.seed, int) and 0 <= d.seed < 2**63 and d.notices == []
    assert DesignOptions(seed=np.random.default_rng(4)).seed == DesignOptions(seed=np.random.default_rng(4)).seed
    assert DesignOptions(seed=np.int64(3)).seed == 3


def test_points_are_rounded_up_for_scrambled_sobol_points_with_a_notice():
    d = DesignOptions(points=1000, seed=1)
    assert d.points == 1024
    assert d.notices == ["points rounded up from 1000 to 1024, a power of two, as scrambled Sobol' points need."]
    assert DesignOptions(points=1024, seed=1).notices == []
    mc = DesignOptions(points=1000, seed=1, sampler="mc")
    assert mc.points == 1000 and mc.notices == []  # plain Monte Carlo takes any N
    # notices do not make two settings different
    assert DesignOptions(points=1000, seed=1) == DesignOptions(points=1024, seed=1)


@pytest.mark.parametrize(
    "kw,needle",
    [
        ({"points": 0}, "`points` must be a whole number ≥ 1, got 0. (a power of two is best)"),
        ({"points": True}, "`points` must be a whole number"),
        ({"points": 2.5}, "`points` must be a whole number"),
        ({"replicates": 1}, "At least 2 replicates (independent randomizations) are needed"),
        ({"replicates": 0}, "`replicates` must be a whole number ≥ 1"),
        ({"seed": -1}, "`seed` must be a whole number ≥ 0 or a numpy Generator, got -1."),
        ({"seed": 1.5}, "`seed` must be a whole number ≥ 0"),
        ({"sampler": "halton"}, "Unknown `sampler` 'halton'; valid choices: sobol, mc."),
        (
            {"estimator": "jansn"},
            "valid choices: jansen, fast, stairs, separate, superset. Did you mean 'jansen'?",
        ),
    ],
)
def test_design_options_refuse_and_name_the_setting(kw, needle):
    with pytest.raises(UserError) as e:
        DesignOptions(**kw)
    assert needle in e.value.message


def test_run_options_defaults_and_conversions():
    r = RunOptions()
    assert (r.progress, r.checkpoint, r.checkpoint_seconds, r.cluster, r.memory_limit, r.block) == (
        None, None, 30.0, None, None, None
    )  # fmt: skip
    assert RunOptions(memory_limit=2.5e9).memory_limit == 2_500_000_000
    assert RunOptions(block=np.int64(64), checkpoint_seconds=0).block == 64


@pytest.mark.parametrize(
    "kw,needle",
    [
        ({"checkpoint_seconds": -1}, "`checkpoint_seconds` must be a number ≥ 0"),
        ({"checkpoint_seconds": True}, "`checkpoint_seconds` must be a number ≥ 0"),
        ({"memory_limit": 0}, "`memory_limit` must be a number > 0, got 0. (bytes)"),
        ({"block": 0}, "`block` must be a whole number ≥ 1"),
        ({"progress": "yes"}, "`progress` must be callable as progress(evaluations, phase)"),
    ],
)
def test_run_options_refuse_and_name_the_setting(kw, needle):
    with pytest.raises(UserError) as e:
        RunOptions(**kw)
    assert needle in e.value.message


def test_a_checkpoint_interval_given_as_text_is_used_or_refused(tmp_path):
    try:
        audit_function(
            lambda x: x.sum(axis=1), "uniform", dim=2, points=64, replicates=2, seed=1,
            checkpoint=tmp_path / "c.npz", checkpoint_seconds="5",
        )  # fmt: skip
    except UserError as e:
        assert "`checkpoint_seconds`" in e.message


def test_split_options_sorts_keywords_and_leaves_allowed_ones():
    options = {"points": 512, "seed": 3, "block": 64, "top": 2, "checkpoint_seconds": 5}
    design, run = split_options(options, allowed=("top",))
    assert (design.points, design.seed) == (512, 3)
    assert (run.block, run.checkpoint_seconds) == (64, 5)
    assert options == {"top": 2}  # the design and run options were taken out
    assert set(DESIGN_OPTIONS) == {"points", "replicates", "seed", "sampler", "estimator", "view"}
    assert set(RUN_OPTIONS) == {
        "progress",
        "checkpoint",
        "checkpoint_seconds",
        "cluster",
        "memory_limit",
        "block",
        "time_budget",
    }


def test_split_options_refuses_unknown_names_with_a_suggestion_and_the_list():
    with pytest.raises(UserError) as e:
        split_options({"pionts": 512})
    message = e.value.message
    assert message.startswith("Unknown setting `pionts`. Did you mean 'points'?")
    assert "Valid settings: points, replicates, seed, sampler, estimator, view, progress, checkpoint" in message
    with pytest.raises(UserError, match="Did you mean 'top'"):
        split_options({"tpo": 1}, allowed=("top",))
    with pytest.raises(UserError, match="Unknown setting `top`"):
        split_options({"top": 1})


def test_the_python_api_refuses_unknown_settings_before_any_work():
    calls = []
    model = PythonModel(lambda x: calls.append(len(x)) or x.sum(axis=1), 2, source="sum")
    calls.clear()  # opening the model probes it once
    for workflow in (audit_model, advise_model):
        with pytest.raises(UserError, match="Did you mean 'replicates'"):
            workflow(model, "normal", replicate=4)
    with pytest.raises(UserError, match="Did you mean 'replicates'"):
        compare_models(model, model, "normal", replicate=4)
    assert calls == []


def test_replicates_default_to_the_estimators_own():
    # 8 randomizations for most estimators, 32 for the fast one (its intervals need them)
    assert DesignOptions().replicates == 8
    assert DesignOptions(estimator="fast").replicates == 32
    assert DesignOptions(estimator="fast", replicates=4).replicates == 4
