"""The advise workflow (audit.studies.advise.run): every phase through one session, evaluations by phase."""

import numpy as np
import pytest
from advice_cases import render

from audit.models.python import PythonModel
from audit.studies import advise_function, advise_model


def test_single_input_and_top_zero():
    res = advise_model(PythonModel(lambda x: x[:, 0] ** 2, 1, source="square"), "normal", points=256, seed=2)
    assert res.outputs[0].preintegrate == [] and res.outputs[0].rqmc_gain is None
    assert any("single input" in n for n in res.notices)
    text = render(res)
    assert max(len(line) for line in text.splitlines()) <= 80


def _quadratic(x):
    """Two outputs of three inputs; the second does not use x0."""
    return np.stack([x[:, 0] + x[:, 0] * x[:, 1] + 0.5 * x[:, 2], np.sin(x[:, 1]) + x[:, 2] ** 2], axis=1)


KW = dict(points=128, replicates=4, seed=3, gain_points=(64, 128))


def test_every_output_gets_advice_and_the_phases_add_up():
    res = advise_function(_quadratic, "normal", dim=3, **KW)
    assert [o.name for o in res.outputs] == ["y[0]", "y[1]"]
    phases = res.design["evaluations_by_phase"]
    assert set(phases) == {"audit", "node_check", "preintegrated", "gain", "freeze_check"}
    assert res.design["evaluations"] == sum(phases.values()) and phases["audit"] == 128 * 4 * 5
    assert "own seed" in res.design["seeds"]
    for o, used in zip(res.outputs, (3, 2), strict=True):
        after = [c.mean_dimension_after.estimate for c in o.preintegrate]
        assert after == sorted(after) and len(after) == used  # the inputs it uses, best (lowest ν) first
        assert o.rqmc_gain is not None and o.rqmc_gain.feature == o.best.feature
    # x0 does not touch the second output: it is frozen, and freezing it changes nothing at all
    group = res.outputs[1].freeze_group
    assert group.features == ["x0"] and group.measured.estimate == 0.0 and group.holds
    assert res.outputs[0].freeze_group is None
    assert res.settings["gain_points"] == [64, 128]


def test_top_zero_tries_no_candidate_and_measures_no_gain():
    res = advise_function(_quadratic, "normal", dim=3, top=0, **KW)
    assert all(o.preintegrate == [] and o.rqmc_gain is None for o in res.outputs)
    phases = res.design["evaluations_by_phase"]
    assert phases["node_check"] == phases["preintegrated"] == phases["gain"] == 0


def test_max_candidates_limits_the_inputs_integrated_out():
    res = advise_function(_quadratic, "normal", dim=3, max_candidates=1, **KW)
    tried = {c.feature for o in res.outputs for c in o.preintegrate}
    assert len(tried) == 1 and any("max_candidates" in n for n in res.notices)


def test_a_resumed_advise_run_repeats_only_the_node_checks(tmp_path):
    rows = []

    def counted(x):
        rows.append(len(x))
        return _quadratic(x)

    first = advise_function(counted, "normal", dim=3, checkpoint=tmp_path / "c.npz", **KW)
    rows.clear()
    again = advise_function(counted, "normal", dim=3, checkpoint=tmp_path / "c.npz", **KW)
    # every phase that runs on the engine resumes from the checkpoint; the pilot node checks
    # evaluate the model directly (and the model is probed once on two rows when opened, and on
    # the first rows of the design for exact relations between its outputs)
    probe = min(256, again.design["points"])
    assert sum(rows) == again.design["evaluations_by_phase"]["node_check"] + 2 + probe
    a, b = first.to_dict(), again.to_dict()
    for x, y in zip(a["outputs"], b["outputs"], strict=True):
        assert x == y
    assert a["design"]["evaluations"] == b["design"]["evaluations"]


@pytest.mark.parametrize("estimator", ["jansen", "fast"])
def test_both_estimators_are_used_for_every_audit(estimator):
    res = advise_function(_quadratic, "normal", dim=3, estimator=estimator, top=1, **KW)
    assert res.design["estimator"] == estimator
    assert all(o.best is not None and o.best.mean_dimension_after is not None for o in res.outputs)


# ----------------------------------------------------------------------------- parts, budget, lines


def test_only_freezing_runs_no_pre_integration_and_says_so():
    res = advise_function(_quadratic, "normal", dim=3, only="freezing", **KW)
    phases = res.design["evaluations_by_phase"]
    assert phases["node_check"] == phases["preintegrated"] == phases["gain"] == 0 and phases["freeze_check"] > 0
    assert all(o.preintegrate == [] and o.rqmc_gain is None for o in res.outputs)
    assert set(res.skipped) == {"pre-integration", "rqmc gain"} and res.settings["only"] == "freezing"
    assert res.outputs[1].freeze_group.features == ["x0"]
    again = type(res).from_dict(res.to_dict())
    assert again.skipped == res.skipped and again.plan == res.plan


def test_only_pre_integration_runs_no_freeze_check():
    res = advise_function(_quadratic, "normal", dim=3, only="pre-integration", **KW)
    assert res.design["evaluations_by_phase"]["freeze_check"] == 0 and set(res.skipped) == {"freezing"}
    assert all(o.freeze == [] and o.freeze_group is None for o in res.outputs)
    assert all(o.preintegrate and o.rqmc_gain is not None for o in res.outputs)


def test_the_budget_holds_when_the_node_check_asks_for_more_nodes_than_planned():
    from advice_cases import step, step_theta

    f, d = step(step_theta(4)), 4  # a step: no Gauss rule settles, the node check goes to its cap
    full = advise_function(f, "normal", dim=d, points=128, replicates=4, seed=5, gain_points=(64, 128))
    limit = full.design["evaluations"] // 4
    res = advise_function(f, "normal", dim=d, points=128, replicates=4, seed=5, gain_points=(64, 128),
                          max_evaluations=limit)  # fmt: skip
    assert res.design["evaluations"] <= limit < full.design["evaluations"]
    assert res.plan["max_evaluations"] == limit and res.plan["total"] <= limit
    assert any(c.startswith("not integrated out, their node check asking for more") for c in res.plan["cuts"])
    kept = {c.feature for o in res.outputs for c in o.preintegrate}
    assert kept < {c.feature for o in full.outputs for c in o.preintegrate}


def test_the_time_budget_is_checked_against_the_whole_plan(monkeypatch):
    import audit.studies.setup as setup
    from audit.errors import UserError
    from audit.studies import prepare_advice

    monkeypatch.setattr(setup, "UNTIMED_EVALUATIONS", 0)
    model = PythonModel(_quadratic, 3, source="quadratic")
    plan = prepare_advice(model, "normal", **KW)
    assert plan.evaluations > 2 * plan.setup.evaluations
    with pytest.raises(UserError) as e:
        advise_model(model, "normal", time_budget=1e-9, **KW)
    assert f"({plan.evaluations:,} model evaluations at about" in e.value.message


def test_the_plan_counts_one_gain_measurement_per_outputs_best_candidate():
    """Two outputs with different best candidates: the gain is measured for both, and the plan said so."""
    from audit.studies import execute_advice, prepare_advice

    plan = prepare_advice(PythonModel(_quadratic, 3, source="quadratic"), "normal", **KW)
    res = execute_advice(plan)
    measured = {o.rqmc_gain.feature for o in res.outputs}
    assert len(measured) == plan.gain_features == 2
    n_max, r = max(KW["gain_points"]), KW["replicates"]
    assert plan.phases["gain"] == n_max * r * (1 + plan.gain_features * plan.nodes)
    # the run's gain cost: f once, and each f~ at its own node count (the node check lowered it here)
    nodes = {o.rqmc_gain.feature: o.rqmc_gain.nodes for o in res.outputs}
    assert res.design["evaluations_by_phase"]["gain"] == n_max * r * (1 + sum(nodes.values()))
    assert all(n <= plan.nodes for n in nodes.values())
    one = prepare_advice(PythonModel(lambda x: x[:, 0] * x[:, 1] + x[:, 2], 3, source="one"), "normal", **KW)
    assert one.gain_features == 1


def test_the_plan_and_phase_lines_go_to_the_callables_given():
    from audit.studies import execute_advice, prepare_advice

    plan = prepare_advice(PythonModel(_quadratic, 3, source="quadratic"), "normal", **KW)
    said, phases = [], []
    res = execute_advice(plan, log=said.append, phase_lines=phases.append)
    assert said[0].startswith("netdim advise plan: 3 inputs") and "an estimate" in said[-1]
    started = [line for line in phases if " started, " in line]
    finished = [line for line in phases if " finished, " in line]
    assert len(started) == len(finished) == 2 + len(set(c.feature for o in res.outputs for c in o.preintegrate)) + 1
    done = res.design["evaluations"]
    assert f"({done:,} of {done:,} planned done" in finished[-1]  # the planned total revised as phases ended


def test_wide_model_candidates_are_exact_after_pre_integration():
    # f = sum_j x_j + 3 x0 x1, 40 standard normal inputs: integrating x0 out leaves sum_{j != 0} x_j (E x0 = 0),
    # additive with variance 39 (exact, common practice, no source); the candidates' audits use the fast
    # estimator here (40 inputs), so their intervals must still hold these values
    def f(x):
        return x.sum(axis=1) + 3 * x[:, 0] * x[:, 1]

    res = advise_function(f, "normal", dim=40, points=256, replicates=8, seed=5, only="pre-integration",
                          gain_points=(64, 128))  # fmt: skip
    cands = {c.feature: c for c in res.outputs[0].preintegrate}
    assert {"x0", "x1"} <= set(cands)
    for name in ("x0", "x1"):
        c = cands[name]
        assert c.mean_dimension_after.ci_low <= 1.0 <= c.mean_dimension_after.ci_high, c.mean_dimension_after
        assert c.variance_after.ci_low <= 39.0 <= c.variance_after.ci_high, c.variance_after
    assert any("fast estimator" in n for n in res.notices)
