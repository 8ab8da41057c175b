"""Inert and unreliable units (audit.estimators.inert): the rule follows the precision of the values.

References: machine epsilons are numpy.finfo's; an affine term plus x2·x3 with standard normal
inputs has ANOVA variances 1 (x1) and 1 (the pair x2x3), so ν = (1·1 + 2·1) / 2 = 1.5 (common
practice, no source).
"""

import estimator_checks as checks
import numpy as np
import pytest

from audit import audit_function
from audit.estimators import is_inert
from audit.estimators.inert import INERT_ROUNDINGS, NOISE_ROUNDINGS, inert_rule, machine_eps, unreliable
from model_zoo import functions as fz

LAWS = checks.LAWS
EPS32, EPS64 = float(np.finfo(np.float32).eps), float(np.finfo(np.float64).eps)


def test_threshold_is_relative_to_the_mean_in_the_values_precision():
    mean = np.array([1.0, 1.0, 1e6, 1e6])
    limit = INERT_ROUNDINGS * EPS32
    sd = np.array([0.5, 2.0, 0.5, 2.0]) * limit * np.abs(mean)
    np.testing.assert_array_equal(is_inert(mean, sd**2, EPS32), [True, False, True, False])
    # the same spread is no longer constant for float64 values
    assert not is_inert(np.array([1.0]), np.array([(0.5 * limit) ** 2]), EPS64)[0]
    # a unit constant at 0: only the dtype's smallest normal number decides
    assert is_inert(np.array([0.0]), np.array([0.0]), EPS32)[0]
    assert not is_inert(np.array([0.0]), np.array([1e-30]), EPS32)[0]
    # per-unit precisions broadcast
    np.testing.assert_array_equal(is_inert(np.ones(2), np.full(2, 1e-20), np.array([EPS32, EPS64])), [True, False])


def test_machine_eps_and_rule_text():
    assert machine_eps("float32") == EPS32 and machine_eps("float64") == EPS64
    assert machine_eps("float16") == float(np.finfo(np.float16).eps)
    assert machine_eps("bfloat16") == 2.0**-7
    assert machine_eps("int64") == EPS64
    assert str(INERT_ROUNDINGS) in inert_rule(EPS32)


@pytest.mark.parametrize("offset, scale", [(1e7, 1.0), (101325.0, 0.05)])
def test_float64_function_with_a_large_offset_is_audited(offset, scale):
    r = audit_function(lambda x: offset + scale * (x[:, 0] + x[:, 1] * x[:, 2]), "normal", dim=3, points=2048, seed=2)
    out = r.outputs[0]
    assert not out.inert and out.mean_dimension.covers(1.5), out.mean_dimension


def test_the_rule_follows_the_dtype_the_model_returns():
    # 3 + 1e-9 x0: resolved in float64 values, below a float32 rounding of the mean
    def tiny(x):
        return 3.0 + 1e-9 * x[:, 0]

    from audit.models.base import TensorInfo
    from audit.models.python import PythonModel
    from audit.studies import audit_model

    as64 = audit_model(PythonModel(tiny, 2, source="tiny"), "normal", layers="none", points=256, seed=3)
    assert not as64.outputs[0].inert and as64.outputs[0].mean_dimension.covers(1.0)
    model32 = PythonModel(tiny, 2, source="tiny")
    model32.outputs = [TensorInfo("y", (), "float32")]  # as a float32 network would report it
    as32 = audit_model(model32, "normal", layers="none", points=256, seed=3)
    assert as32.outputs[0].inert and as32.outputs[0].mean_dimension is None


def test_unreliable_reasons():
    assert unreliable(1.1, 1.3, 8, 0.0, 1.0, EPS64) == ""
    assert unreliable(0.2, 0.9, 8, 0.0, 1.0, EPS64) == "too few points for this unit"
    assert unreliable(-43.0, 204.0, 64, 0.0, 1.0, EPS32) == "too few points for this unit"  # wider than [1, d]
    near = NOISE_ROUNDINGS * EPS32 * 0.5
    assert unreliable(-43.0, 204.0, 64, 1.0, near**2, EPS32) == "numerical noise of a near-constant unit"
    assert unreliable(float("nan"), 2.0, 8, 0.0, 1.0, EPS64) == ""


def test_constant_output_is_inert_not_nan():
    r = audit_function(
        lambda x: np.stack([fz.ishigami(x), np.full(len(x), 2.5)], axis=1), LAWS, points=256, replicates=4, seed=6
    )
    live, dead = r.outputs
    assert not live.inert and live.mean_dimension is not None
    assert dead.inert and dead.mean_dimension is None and dead.total_index == []
    assert dead.mean.estimate == 2.5
    d = r.to_dict()["outputs"][1]
    assert d["inert"] is True and d["mean_dimension"] is None
