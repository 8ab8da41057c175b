"""Planning an advise run (audit.studies.advise.plan): settings checked and the cost estimated before any work."""

import pytest
from advice_cases import phi_ridge

from audit.errors import UserError
from audit.models.python import PythonModel
from audit.studies import prepare_advice
from audit.studies.advise import ADVICE_SETTINGS, DEFAULT_GAIN_POINTS, FREEZE_BUDGET, FREEZE_THRESHOLD
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
