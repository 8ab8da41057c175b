"""Integer-typed model inputs get the laws of their rounded values (audit.studies.integers)."""

from types import SimpleNamespace

import numpy as np
from scipy import stats

from audit.inputs import Law, build_variables
from audit.models.base import TensorInfo
from audit.studies.integers import integer_laws


def test_continuous_laws_on_integer_columns_become_the_laws_of_their_rounded_values():
    model = SimpleNamespace(inputs=[TensorInfo("x", (2,), "float32"), TensorInfo("k", (1,), "int64")])
    laws = [Law("normal"), Law("normal"), Law("normal", {"mean": 2.0, "sd": 1.5})]
    v, notice = integer_laws(model, build_variables(["a", "b", "c"], laws, [""] * 3))
    assert v.laws[:2] == laws[:2] and v.laws[2].integer and "c feeds an integer-typed model input" in notice
    p = v.laws[2].params
    values = np.array(p["values"])
    # P(round(X) = v) = Φ((v + ½ − 2)/1.5) − Φ((v − ½ − 2)/1.5) inside (scipy.stats.norm), tails at the ends
    inner = stats.norm.cdf(values[1:-1] + 0.5, 2, 1.5) - stats.norm.cdf(values[1:-1] - 0.5, 2, 1.5)
    np.testing.assert_allclose(p["probabilities"][1:-1], inner, rtol=1e-9)
    # the design's uniforms give the very values the backend's rounding would
    u = np.linspace(1e-6, 1 - 1e-6, 5001)
    np.testing.assert_array_equal(v.laws[2].ppf(u), np.rint(laws[2].ppf(u)))
    same, none = integer_laws(model, build_variables(["a", "b", "c"], [*laws[:2], v.laws[2]], [""] * 3))
    assert none == "" and same.laws[2] == v.laws[2]


def test_a_law_that_rounds_to_one_whole_number_is_refused():
    """Standardised features (sd 0.05) fed to an int64 input: the model would see 0 only."""
    import pytest

    from audit.errors import UserError

    model = SimpleNamespace(inputs=[TensorInfo("k", (2,), "int64")])
    laws = [Law("normal", {"mean": 0.0, "sd": 0.05}), Law("normal", {"mean": 3.0, "sd": 2.0})]
    with pytest.raises(UserError, match=r"'a' feeds an integer-typed model input.*single value 0: the model would"):
        integer_laws(model, build_variables(["a", "b"], laws, [""] * 2))
