"""Inert units (audit.estimators.inert): zero variance up to the precision of a float32 network."""

import estimator_checks as checks
import numpy as np

from audit import audit_function
from audit.estimators import is_inert
from audit.estimators.inert import INERT_ABSOLUTE_VAR, INERT_RELATIVE_SD
from model_zoo import functions as fz

LAWS = checks.LAWS


def test_threshold_is_relative_to_the_mean_with_a_tiny_floor():
    mean = np.array([0.0, 0.0, 1.0, 1.0, 1e6, 1e6])
    sd = np.array([0.0, 1e-16, 0.5e-6, 2e-6, 0.5, 2.0])
    np.testing.assert_array_equal(is_inert(mean, sd**2), [True, True, True, False, True, False])
    # the floor alone decides at mean 0
    assert is_inert(np.array([0.0]), np.array([INERT_ABSOLUTE_VAR]))[0]
    assert not is_inert(np.array([0.0]), np.array([2 * INERT_ABSOLUTE_VAR]))[0]
    # float32 resolves relative changes of about 6e-8 (machine epsilon 2^-23): the threshold leaves room
    assert np.finfo(np.float32).eps < INERT_RELATIVE_SD


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
