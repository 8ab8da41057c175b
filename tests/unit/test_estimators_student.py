"""Student-t quantiles for whole degrees of freedom (audit/estimators/student.py).

References: scipy's ``special.stdtrit`` (the Student-t inverse distribution function scipy ships);
the closed forms for one degree of freedom, t = tan(π(p - 1/2)) (the Cauchy law), and for two,
t = (2p - 1) / sqrt(2p(1 - p)), from "Handbook of Mathematical Functions", National Bureau of
Standards, 1964, 26.7 (from memory).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import special

from audit.estimators.student import P_MAX, WHOLE_DF_MAX, t_quantile

PROBS = st.floats(0.5, P_MAX, exclude_min=True)


@settings(max_examples=200, deadline=None)
@given(p=PROBS, df=st.integers(1, WHOLE_DF_MAX))
def test_whole_df_quantiles_equal_scipys(p: float, df: int) -> None:
    assert t_quantile(p, df) == pytest.approx(float(special.stdtrit(df, p)), rel=1e-12)


@pytest.mark.parametrize("df", [1, 2, 3, 4, 7, 9, 15, 31, 63, 127])
def test_the_intervals_quantile_is_scipys_to_the_last_bits_for_usual_randomizations(df: int) -> None:
    """t_{0.975, R-1} for R up to 128 randomizations, the figure behind every interval (1e-14)."""
    assert t_quantile(0.975, df) == pytest.approx(float(special.stdtrit(df, 0.975)), rel=1e-14)


@settings(max_examples=50, deadline=None)
@given(p=PROBS)
def test_closed_forms_for_one_and_two_degrees_of_freedom(p: float) -> None:
    assert t_quantile(p, 1) == pytest.approx(math.tan(math.pi * (p - 0.5)), rel=1e-12)
    assert t_quantile(p, 2) == pytest.approx((2 * p - 1) / math.sqrt(2 * p * (1 - p)), rel=1e-12)


@pytest.mark.parametrize(("p", "df"), [(0.975, 2.5), (0.975, WHOLE_DF_MAX + 1), (0.9999, 7), (0.6, 0.3)])
def test_other_cases_are_scipys(p: float, df: float) -> None:
    assert t_quantile(p, df) == float(special.stdtrit(df, p))


@pytest.mark.parametrize(("p", "df"), [(0.5, 3), (1.0, 3), (0.2, 3), (0.975, 0), (0.975, -1), (0.975, np.nan)])
def test_values_outside_the_domain_are_refused_with_the_valid_range(p: float, df: float) -> None:
    with pytest.raises(ValueError, match=r"needs 0.5 < p < 1 and df > 0"):
        t_quantile(p, df)


@settings(max_examples=50, deadline=None)
@given(df=st.integers(1, 200), p=st.floats(0.55, 0.99))
def test_quantiles_grow_with_p_and_shrink_with_df(df: int, p: float) -> None:
    assert t_quantile(p, df) < t_quantile(min(p + 0.005, P_MAX), df)
    assert t_quantile(p, df + 1) < t_quantile(p, df)
