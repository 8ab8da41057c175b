"""Planning an advise run (audit.studies.advise.plan): settings checked and the cost estimated before any work."""

import pytest
from advice_cases import phi_ridge

from audit.errors import UserError
from audit.models.python import PythonModel
from audit.studies import prepare_advice
from audit.studies.advise import (
    ADVICE_SETTINGS,
    DEFAULT_GAIN_POINTS,
    FREEZE_BUDGET,
    FREEZE_THRESHOLD,
    default_gain_points,
    fit_plan,
)
from audit.studies.options import DesignOptions


def test_settings_are_checked():
    model = PythonModel(phi_ridge, 6, source="ridge")
    for options, words in [
        ({"gain_points": (300, 1024)}, "powers of two"),
        ({"gain_points": (1024,)}, "two point counts"),
        ({"top": -1}, "`top`"),
        ({"nodes": 0}, "`nodes`"),
        ({"nodes": 64, "node_cap": 32}, "node cap"),
        ({"freeze_budget": 0}, "`freeze_budget`"),
        ({"tolerance": "x"}, "`tolerance`"),
    ]:
        with pytest.raises(UserError, match=words):
            prepare_advice(model, "normal", **options)
    plan = prepare_advice(model, "normal", points=1000, seed=1)
    assert plan.setup.design.points == 1024 and plan.evaluations > plan.setup.evaluations


@pytest.mark.parametrize(
    "options,words",
    [
        ({"node_cap": 1}, "`node_cap` must be a whole number 2..256"),
        ({"node_floor": 0}, "`node_floor`"),
        ({"pilot": 1}, "`pilot` must be a whole number ≥ 2"),
        ({"tolerance": 2.0}, "`tolerance` must be a number in (0, 1]"),
        ({"freeze_threshold": 0}, "`freeze_threshold`"),
        ({"freeze_budget": 3}, "`freeze_budget` must be a number in (0, 2]"),
        ({"max_candidates": -1}, "`max_candidates`"),
        ({"gain_points": (1024, 256)}, "increasing powers of two"),
    ],
)
def test_more_settings_are_checked_and_named(options, words):
    with pytest.raises(UserError) as e:
        prepare_advice(PythonModel(phi_ridge, 6, source="ridge"), "normal", **options)
    assert words in e.value.message


def test_the_design_is_given_one_way_only():
    model = PythonModel(phi_ridge, 6, source="ridge")
    with pytest.raises(UserError, match="either as `design` or as keywords, not both"):
        prepare_advice(model, "normal", design=DesignOptions(seed=1), points=256)
    plan = prepare_advice(model, "normal", design=DesignOptions(points=256, replicates=4, seed=1))
    assert plan.setup.design.points == 256 and plan.setup.design.replicates == 4
    assert plan.setup.layers == []  # advise measures the outputs only


def test_settings_are_recorded_with_their_defaults():
    plan = prepare_advice(PythonModel(phi_ridge, 6, source="ridge"), "normal", seed=1, gain_points=())
    settings = plan.settings()
    assert tuple(settings) == ADVICE_SETTINGS
    assert settings["gain_points"] == [] and plan.gain_points == ()
    assert settings["freeze_threshold"] == FREEZE_THRESHOLD == 1e-3 and settings["freeze_budget"] == FREEZE_BUDGET
    assert tuple(2**p for p in range(8, 15)) == DEFAULT_GAIN_POINTS


def test_the_cost_estimate_grows_with_what_is_asked_for():
    model = PythonModel(phi_ridge, 6, source="ridge")

    def cost(**kw):
        return prepare_advice(model, "normal", points=256, replicates=4, seed=1, **kw).evaluations

    base = cost()
    assert cost(top=1) < base < cost(top=5)
    assert cost(nodes=8) < base
    assert cost(gain_points=()) < base < cost(gain_points=(256, 32768))
    one = prepare_advice(PythonModel(lambda x: x[:, 0], 1, source="one"), "normal", points=256, seed=1)
    assert one.evaluations == one.setup.evaluations  # a single input: the audit alone


# ----------------------------------------------------------------------------- parts and budget

RIDGE = PythonModel(phi_ridge, 6, source="ridge")


def test_only_chooses_one_part_and_the_plan_costs_only_it():
    full = prepare_advice(RIDGE, "normal", points=256, replicates=4, seed=1)
    freezing = prepare_advice(RIDGE, "normal", points=256, replicates=4, seed=1, only="freezing")
    pre = prepare_advice(RIDGE, "normal", points=256, replicates=4, seed=1, only="pre-integration")
    assert freezing.skipped.keys() == {"pre-integration", "rqmc gain"} and freezing.candidates == 0
    assert pre.skipped.keys() == {"freezing"} and pre.candidates == full.candidates == 3
    f, p, a = freezing.phases, pre.phases, full.phases
    assert f == {**a, "node_check": 0, "preintegrated": 0, "gain": 0}
    assert p == {**a, "freeze_check": 0}
    assert freezing.evaluations + pre.evaluations == full.evaluations + full.setup.evaluations  # the audit twice
    assert freezing.settings()["only"] == "freezing" and full.settings()["only"] is None
    with pytest.raises(UserError) as e:
        prepare_advice(RIDGE, "normal", only="freeze")
    assert "valid choices: freezing, pre-integration" in e.value.message and "`only`" in e.value.message


def test_a_plan_that_fits_its_budget_is_not_cut():
    plan = prepare_advice(RIDGE, "normal", points=256, replicates=4, seed=1)
    fitted = prepare_advice(RIDGE, "normal", points=256, replicates=4, seed=1, max_evaluations=plan.evaluations)
    assert fitted.evaluations == plan.evaluations and fitted.cuts == [] and fitted.max_evaluations == plan.evaluations
    assert fitted.record()["total"] == plan.evaluations and fitted.record()["cuts"] == []


@pytest.mark.parametrize(("points", "top"), [(16, 4096), (256, 4096), (512, 8192), (1024, 16384), (65536, 16384)])
def test_the_default_gain_counts_follow_the_audits_points(points, top):
    """256, 512, ... up to 16 N, never fewer than five counts (to 4096) nor beyond 16384."""
    want = tuple(n for n in DEFAULT_GAIN_POINTS if n <= top)
    assert default_gain_points(points) == want
    assert prepare_advice(RIDGE, "normal", points=points, replicates=4, seed=1).gain_points == want


def test_the_gain_point_counts_go_first_and_only_as_far_as_needed():
    plan = prepare_advice(RIDGE, "normal", points=256, replicates=4, seed=1, gain_points=DEFAULT_GAIN_POINTS)
    r, nodes = 4, plan.nodes
    # dropping 16384 alone saves 8192 * r * (1 + nodes) evaluations: a budget just below the full plan needs one cut
    limit = plan.evaluations - 1
    fitted = fit_plan(plan, limit)
    assert fitted.gain_points == plan.gain_points[:-1] and fitted.nodes == nodes
    assert fitted.evaluations == plan.evaluations - (16384 - 8192) * r * (1 + nodes) <= limit
    kept, given = "256, 512, 1024, 2048, 4096, 8192", "256, 512, 1024, 2048, 4096, 8192, 16384"
    assert fitted.cuts == [f"RQMC gain point counts cut to {kept} (from {given})"]


def test_then_the_nodes_then_the_candidates_then_the_gain():
    plan = prepare_advice(RIDGE, "normal", points=256, replicates=4, seed=1, gain_points=DEFAULT_GAIN_POINTS)
    s = plan.setup
    n, r, d = 256, 4, 6
    audit, freeze = s.evaluations, n * r * 2

    def pre(cands: int, nodes: int) -> int:  # node checks (pilot, 3m rows a point) and Jansen audits of d - 1 inputs
        return cands * (plan.pilot * 3 * nodes + n * r * (d + 1) * nodes)

    gain2 = 512 * r  # two gain counts left (256, 512): the model's prefix means at n = 512, per node
    # nodes halved to the floor (4) with 3 candidates and the two smallest gain counts
    at_floor = audit + pre(3, 4) + gain2 * (1 + 4) + freeze
    fitted = fit_plan(plan, at_floor)
    assert fitted.evaluations == at_floor and fitted.nodes == 4 and fitted.candidates == 3
    assert fitted.gain_points == (256, 512)
    one = audit + pre(1, 4) + gain2 * 5 + freeze
    fitted = fit_plan(plan, one)
    assert fitted.candidates == 1 and fitted.evaluations == one and not fitted.skipped
    smallest = audit + pre(1, 4) + freeze
    fitted = fit_plan(plan, smallest)
    assert fitted.evaluations == smallest and "rqmc gain" in fitted.skipped
    assert [c.split(" cut")[0] for c in fitted.cuts] == [
        "RQMC gain point counts", "starting Gauss nodes", "inputs integrated out", "RQMC gain left out",
    ]  # fmt: skip
    assert fitted.notices == plan.notices  # the cuts are in the plan (and the report's "left out"), not notices
    with pytest.raises(UserError) as e:
        fit_plan(plan, smallest - 1)
    assert f"needs about {smallest:,} model evaluations" in e.value.message and "`max_evaluations`" in e.value.message


def test_the_smallest_plan_of_one_part_is_that_part_alone():
    plan = prepare_advice(RIDGE, "normal", points=256, replicates=4, seed=1, only="freezing")
    with pytest.raises(UserError, match=f"needs about {plan.evaluations:,} model evaluations"):
        fit_plan(plan, plan.evaluations - 1)
    with pytest.raises(UserError, match="`max_evaluations` must be a whole number"):
        fit_plan(plan, 0)


def test_candidates_use_the_fast_estimator_from_32_inputs():
    # below FAST_CANDIDATES_FROM inputs left: the audit's own design; from it: fast, 4R randomizations of
    # (d + 1) N / 32 points (a power of two), at most a quarter of the Jansen estimator's evaluations
    small = prepare_advice(PythonModel(phi_ridge, 6, source="ridge"), "normal", points=256, replicates=4, seed=1)
    assert small.candidate_design() == ("jansen", 256, 4)
    wide = prepare_advice(PythonModel(lambda x: x.sum(axis=1), 40, source="sum"), "normal", points=256, seed=1)
    assert wide.candidate_design() == ("fast", 256, 32)  # 41 * 256 / 32 = 328 -> 256; 4 * 8 randomizations
    jansen = 256 * 8 * (39 + 2) * wide.nodes
    assert wide.preintegrated_cost(wide.nodes) == 256 * 32 * 2 * wide.nodes <= jansen / 4
    assert any("fast estimator (32 randomizations of 256 points)" in n for n in wide.notices)
    # too few points for the fast estimator's one run per input: the audit's own design
    few = prepare_advice(PythonModel(lambda x: x.sum(axis=1), 40, source="sum"), "normal", points=16, seed=1)
    assert few.candidate_design() == ("jansen", 16, 8) and not any("fast estimator" in n for n in few.notices)
    # a tiny design (no points to share): the audit's own
    model = PythonModel(lambda x: x.sum(axis=1), 3, source="sum")
    tiny = prepare_advice(model, "normal", points=2, replicates=2, seed=1)
    assert tiny.candidate_design() == ("jansen", 2, 2)
