"""Pre-integration candidates (audit.studies.advise.candidates): which inputs to integrate out, and ranking."""

import math

import numpy as np
import pytest

from audit.models.python import PythonModel
from audit.results import Candidate, Estimate, FeatureEstimate, OutputResult, VarianceIdentity
from audit.studies import prepare_advice
from audit.studies.advise.candidates import choose_candidates, rank_key

NAMES = ["x0", "x1", "x2", "x3"]


def _e(value, half=0.01):
    return Estimate(value, value - half, value + half, half / 2)


def _audit(totals, halves=None):
    halves = halves or [0.01] * len(totals)
    features = [FeatureEstimate(n, _e(t, h)) for n, t, h in zip(NAMES, totals, halves, strict=True)]
    return OutputResult("y", _e(0.0), _e(1.0), _e(1.5), features)


def _plan(**kw):
    return prepare_advice(PythonModel(lambda x: x.sum(axis=1), 4, source="sum"), "normal", seed=1, **kw)


def test_the_top_inputs_of_each_output_are_tried_rank_by_rank():
    audits = [_audit([0.5, 0.3, 0.0, 0.2], [0.01, 0.01, 0.0004, 0.01]), _audit([0.1, 0.2, 0.6, 0.0])]
    tops, union, notices = choose_candidates(_plan(top=2), audits, [0, 1])
    assert tops == {0: [0, 1], 1: [2, 1]}
    assert union == [0, 2, 1] and notices == []  # rank 0 of every output first, then rank 1


def test_negligible_inputs_are_never_candidates():
    # the upper end of x2's interval is below the freeze threshold (1e-3): it is a freezing candidate instead
    audits = [_audit([0.5, 0.3, 0.0002, 0.2], [0.01, 0.01, 0.0005, 0.01])]
    tops, union, _ = choose_candidates(_plan(top=4), audits, [0])
    assert tops == {0: [0, 1, 3]} and 2 not in union


def test_max_candidates_caps_the_inputs_integrated_out_and_says_which_were_not_tried():
    audits = [_audit([0.5, 0.3, 0.0, 0.2]), _audit([0.1, 0.2, 0.6, 0.0])]
    tops, union, notices = choose_candidates(_plan(top=2, max_candidates=2), audits, [0, 1])
    assert union == [0, 2] and tops == {0: [0], 1: [2]}
    assert notices == ["Only 2 inputs were integrated out (max_candidates); not tried: x1."]


def test_outputs_that_are_not_live_get_no_candidates():
    audits = [_audit([0.5, 0.3, 0.1, 0.2]), _audit([0.1, 0.2, 0.6, 0.0])]
    tops, union, _ = choose_candidates(_plan(top=1), audits, [1])
    assert tops == {1: [2]} and union == [2]


def _candidate(nu):
    v = _e(1.0)
    return Candidate("x0", v, None if nu is None else _e(nu), v, VarianceIdentity(v, v, _e(0.0), True), 8, 0.0)


def test_candidates_rank_constant_results_first_then_lowest_mean_dimension_and_undefined_last():
    ranked = sorted([_candidate(1.4), _candidate(math.nan), _candidate(1.1), _candidate(None)], key=rank_key)
    keys = [c.mean_dimension_after for c in ranked]
    assert keys[0] is None and [k.estimate for k in keys[1:3]] == [1.1, 1.4] and np.isnan(keys[3].estimate)


@pytest.mark.parametrize("top", [0, 1, 3])
def test_a_single_input_model_has_no_candidates(top):
    plan = prepare_advice(PythonModel(lambda x: x[:, 0], 1, source="one"), "normal", seed=1, top=top)
    one = OutputResult("y", _e(0.0), _e(1.0), _e(1.0), [FeatureEstimate("x0", _e(1.0))])
    tops, union, _ = choose_candidates(plan, [one], [0])
    assert tops == {0: []} and union == []
