"""The estimator registry (audit.estimators): names, construction, evaluations per point."""

import pytest

from audit.errors import UserError
from audit.estimators import ESTIMATORS, REFERENCE_ESTIMATORS, Fast, Jansen, Split, make_estimator


def test_registry_holds_the_estimators_a_user_can_choose():
    assert list(ESTIMATORS) == ["jansen", "fast", "stairs", "separate", "superset"]
    for name, cls in {**ESTIMATORS, **REFERENCE_ESTIMATORS}.items():
        assert cls.name == name and cls.label and cls.help and cls.replicates >= 8
        assert make_estimator(name, d=4, points=64).copies >= 2  # A and B at least
    assert Jansen.first_order and not Fast.first_order and REFERENCE_ESTIMATORS["hashed"] is Fast
    assert Split.replicates == 32  # its intervals need more randomizations (test_estimator_coverage.py)


def test_make_estimator_builds_each_with_its_cost():
    jansen = make_estimator("jansen", d=6)
    assert isinstance(jansen, Jansen) and jansen.rows_per_point() == 8  # N(d + 2)
    fast = make_estimator("fast", d=6, points=64)
    assert isinstance(fast, Split) and fast.rows_per_point() == 2 and fast.points == 64  # 2N whatever d is
    grouped = make_estimator("jansen", d=6, groups=[[0, 1, 2], [3, 4, 5]])
    assert grouped.rows_per_point() == 4


def test_unknown_names_and_unsupported_groups_are_refused():
    with pytest.raises(ValueError, match="valid choices: jansen, fast"):
        make_estimator("pickfreeze", d=3)
    with pytest.raises(UserError, match="groups"):
        make_estimator("fast", d=3, points=8, groups=[[0, 1]])
