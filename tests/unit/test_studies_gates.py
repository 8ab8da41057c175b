"""Pipeline gates of a comparison (audit.studies.gates): tolerances, the one rule, gate files, output maps.

The rule under test: a change counts only when its interval lies wholly beyond the tolerance
(it excludes 0 and exceeds the minimum size even at its end nearest 0); agreements fail only when
their interval lies wholly below the limit. Judging a limit on the end of a paired interval
nearest zero is common practice, no source.
"""

import math

import pytest

from audit.errors import UserError
from audit.results import Estimate
from audit.studies import Gates, parse_output_map
from audit.studies.gates import DEFAULTS, beyond, check_change, check_least, load_gates


def _iv(lo, hi):
    return Estimate((lo + hi) / 2, lo, hi, (hi - lo) / 4)


def test_defaults_are_on_and_stated():
    d = DEFAULTS.settings()
    assert d["mean_dimension"] == 0.05 and d["total_index"] == 0.05 and d["ranking"] == 0.9
    assert d["dimension_rise"] is None and d["matter"] == 0.01 and d["top_k"] == 3


@pytest.mark.parametrize("kw,needle", [({"ranking": 1.5}, "`ranking`"), ({"mean_dimension": -1}, "`mean_dimension`"),
                                       ({"top_k": 0}, "`top_k`"), ({"variance": "x"}, "`variance`")])  # fmt: skip
def test_gate_values_are_checked(kw, needle):
    with pytest.raises(UserError, match=needle):
        Gates(**kw)


def test_beyond_is_zero_unless_the_whole_interval_is_past_the_tolerance():
    assert beyond(0.02, 0.3, 0.05) == 0.0  # contains values within the tolerance
    assert beyond(0.07, 0.3, 0.05) == pytest.approx(0.02)
    assert beyond(-0.3, -0.08, 0.05) == pytest.approx(0.03)
    assert beyond(-0.01, 0.01, 0.0) == 0.0 and beyond(math.nan, 1.0, 0.0) == 0.0


def test_a_change_fails_only_beyond_the_tolerance_even_at_its_near_end():
    changes = [("u", _iv(0.02, 0.3)), ("v", _iv(-0.3, -0.1))]
    check = check_change("mean_dimension", 0.05, changes, "outputs' ν", 0.0)
    assert not check.passed and "v" in check.detail.split("near end:")[1] and "u" not in check.detail.split(":")[-1]
    assert check.value == pytest.approx(0.3)
    assert check_change("mean_dimension", 0.1, changes, "outputs' ν", 0.0).passed
    assert check_change("x", None, changes, "y", 0.0) is None  # off
    # a rise-only gate ignores falls
    assert check_change("dimension_rise", 0.05, changes, "ν", 0.0, rise_only=True).passed
    # rounding: a tolerance of 0 still ignores changes within the rounding floor
    tiny = [("x2", _iv(-2e-8, -1e-8))]
    assert check_change("total_index", 0.0, tiny, "indices", 7.6e-6).passed
    assert not check_change("total_index", 0.0, tiny, "indices", 0.0).passed


def test_agreements_fail_only_when_wholly_below_the_limit():
    values = [("u", _iv(0.85, 0.95)), ("v", _iv(0.6, 0.8))]
    check = check_least("ranking", 0.9, values, "rankings")
    assert not check.passed and check.value == pytest.approx(0.7) and "v" in check.detail
    assert check_least("ranking", 0.8, values, "rankings").passed


def test_gate_files(tmp_path):
    f = tmp_path / "gates.toml"
    f.write_text("[gates]\nmean_dimension = 0.1\ntotal_index = false\ntop_k = 5\n")
    g = load_gates(f)
    assert g.mean_dimension == 0.1 and g.total_index is None and g.top_k == 5 and g.ranking == 0.9
    f.write_text("[gates]\nmean_dimensoin = 0.1\n")
    with pytest.raises(UserError, match="Did you mean 'mean_dimension'"):
        load_gates(f)
    f.write_text("[other]\nx = 1\n")
    with pytest.raises(UserError, match="one \\[gates\\] table"):
        load_gates(f)
    with pytest.raises(UserError, match="does not exist"):
        load_gates(tmp_path / "none.toml")


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
