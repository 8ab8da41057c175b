"""Pipeline gates of a comparison (audit.studies.gates): limits, rank agreement, output maps.

References: Kendall's τ is scipy.stats.kendalltau; a limit judged on the end of a paired
interval nearest zero is common practice, no source.
"""

import math

import pytest
from scipy import stats

from audit.errors import UserError
from audit.results import Estimate, FeatureEstimate, OutputChange, OutputResult
from audit.studies import Gates, parse_output_map
from audit.studies.gates import judge, rank_agreement

E = Estimate(1.0, 0.9, 1.1, 0.05)


def _iv(lo, hi):
    return Estimate((lo + hi) / 2, lo, hi, (hi - lo) / 4)


def _output(totals, inert=False):
    feats = [FeatureEstimate(f"x{j}", _iv(t, t)) for j, t in enumerate(totals)]
    return OutputResult("y", E, E, None if inert else E, [] if inert else feats, inert=inert)


def _change(name, dnu, shifts, tau):
    feats = [FeatureEstimate(f"x{j}", _iv(*s)) for j, s in enumerate(shifts)]
    return OutputChange(name, _output([0.5, 0.3]), _output([0.5, 0.3]), dnu, feats, [], tau, 2, 1.0)


OUTPUTS = [
    _change("u", _iv(0.02, 0.3), [(-0.01, 0.02), (0.05, 0.2)], 0.8),
    _change("v", _iv(-0.1, 0.05), [(-0.3, -0.1), (-0.02, 0.01)], 0.4),
    _change("w", None, [], math.nan),  # an inert output: nothing to judge
]


def test_no_gate_set_means_no_check():
    assert judge(OUTPUTS, Gates()) == []


def test_the_dimension_rise_is_judged_on_the_largest_lower_end():
    (check,) = judge(OUTPUTS, Gates(max_dimension_rise=0.05))
    assert check.name == "max_dimension_rise" and check.value == 0.02 and check.passed
    assert check.detail == "largest lower end of a ν change: 0.02 (u)"
    assert not judge(OUTPUTS, Gates(max_dimension_rise=0.01))[0].passed
    (none,) = judge([OUTPUTS[2]], Gates(max_dimension_rise=0.0))
    assert none.passed and none.value == -math.inf and none.detail == "no comparable outputs"


def test_the_rank_agreement_is_judged_on_the_lowest_tau():
    (check,) = judge(OUTPUTS, Gates(min_rank_agreement=0.5))
    assert check.value == 0.4 and not check.passed and "(v)" in check.detail
    assert judge(OUTPUTS, Gates(min_rank_agreement=0.4))[0].passed
    (none,) = judge([OUTPUTS[2]], Gates(min_rank_agreement=0.0))
    assert not none.passed and none.detail == "no rankings"  # nothing ranked cannot pass a ranking gate


def test_an_index_shift_is_its_interval_end_nearest_zero():
    (check,) = judge(OUTPUTS, Gates(max_index_shift=0.06))
    # u: x0 contains 0 (shift 0), x1 is (0.05, 0.2): 0.05; v: x0 is (-0.3, -0.1): 0.1; v x1 contains 0
    assert check.value == pytest.approx(0.1) and not check.passed and "(x0 in v)" in check.detail
    assert judge(OUTPUTS, Gates(max_index_shift=0.1))[0].passed
    (zero,) = judge([OUTPUTS[2]], Gates(max_index_shift=0.0))
    assert zero.value == 0.0 and zero.passed


def test_all_three_gates_in_order():
    checks = judge(OUTPUTS, Gates(1.0, 0.0, 1.0))
    assert [c.name for c in checks] == ["max_dimension_rise", "min_rank_agreement", "max_index_shift"]
    assert all(c.passed for c in checks)


def test_rank_agreement_is_kendalls_tau_and_the_top_k_overlap():
    a, b = _output([0.5, 0.3, 0.1, 0.05]), _output([0.3, 0.5, 0.05, 0.1])
    tau, overlap, k = rank_agreement(a, b, top_k=2)
    assert tau == pytest.approx(stats.kendalltau([0.5, 0.3, 0.1, 0.05], [0.3, 0.5, 0.05, 0.1]).statistic)
    assert (overlap, k) == (1.0, 2)  # the same two leading inputs, in another order
    assert rank_agreement(a, b, top_k=3)[1] == pytest.approx(2 / 3)
    assert rank_agreement(a, a, top_k=9) == (1.0, 1.0, 4)  # k is capped at the number of inputs
    assert rank_agreement(_output([0.5]), _output([0.7]), 3) == (1.0, 1.0, 1)
    tau, overlap, k = rank_agreement(a, _output([], inert=True), 3)
    assert math.isnan(tau) and math.isnan(overlap) and k == 0


def test_output_maps_take_names_or_indices():
    old, new = ["temp", "hum"], ["hum", "temp", "co2"]
    assert parse_output_map("temp=temp,hum=0", old, new) == [(0, 1), (1, 0)]
    assert parse_output_map(" 1 = 2 ", old, new) == [(1, 2)]


@pytest.mark.parametrize(
    "text,needle",
    [
        ("temp", "takes OLD=NEW pairs separated by commas"),
        ("temp=rain", "'rain' is not an output of the new model; its outputs are hum, temp, co2 (or indices 0..2)"),
        ("5=0", "'5' is not an output of the old model"),
        ("-1=0", "'-1' is not an output of the old model"),
    ],
)
def test_bad_output_maps_are_refused(text, needle):
    with pytest.raises(UserError) as e:
        parse_output_map(text, ["temp", "hum"], ["hum", "temp", "co2"])
    assert needle in e.value.message and "`output_map`" in e.value.message
