"""The compiled sum of squared differences (audit/estimators/kernels.py) against its definition.

Reference: the definition itself in float64 numpy (the Jansen total's numerator, "Variance based
sensitivity analysis of model output. Design and estimator for the total sensitivity index",
Computer Physics Communications, 2010); where the loop was not built the numpy form of jansen.py is used and
must stay within its documented 1e-6.
"""

from __future__ import annotations

import shutil
import sysconfig

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from audit.estimators import kernels
from audit.estimators.jansen import JansenSums

HAVE_KERNEL = kernels.available()


def _definition(yA, yAB):
    d = yAB.astype(np.float64) - yA.astype(np.float64)[None]
    return np.einsum("gnk,gnk->k", d, d)


def _rows(g, n, k, seed):
    rng = np.random.default_rng(seed)
    y = rng.standard_normal(((g + 2) * n, k)) * rng.uniform(0.1, 10, k) + rng.uniform(-5, 5, k)
    return y.astype(np.float32)


@pytest.mark.skipif(not HAVE_KERNEL, reason="the compiled loop was not built here")
@settings(max_examples=25, deadline=None)
@given(g=st.integers(1, 9), n=st.integers(1, 300), k=st.integers(1, 40), seed=st.integers(0, 2**16))
def test_kernel_equals_the_float64_definition(g, n, k, seed):
    y = _rows(g, n, k, seed)
    yA, yAB = y[:n], y[2 * n :].reshape(g, n, k)
    np.testing.assert_allclose(kernels.squared_differences(yA, yAB), _definition(yA, yAB), rtol=1e-12)


@pytest.mark.skipif(not HAVE_KERNEL, reason="the compiled loop was not built here")
def test_kernel_propagates_nan_and_infinity_as_float64_does():
    y = _rows(3, 8, 4, 0)
    y[2 * 8 + 5, 1], y[2 * 8 + 9, 2] = np.nan, np.inf
    yA, yAB = y[:8], y[16:].reshape(3, 8, 4)
    got, want = kernels.squared_differences(yA, yAB), _definition(yA, yAB)
    np.testing.assert_array_equal(np.isnan(got), np.isnan(want))
    np.testing.assert_array_equal(np.isinf(got), np.isinf(want))
    assert np.isnan(got[1]) and np.isinf(got[2])


def test_other_layouts_and_types_are_left_to_numpy():
    y = _rows(2, 6, 5, 1)
    yA, yAB = y[:6], y[12:].reshape(2, 6, 5)
    assert kernels.squared_differences(yA.astype(np.float64), yAB.astype(np.float64)) is None
    assert kernels.squared_differences(yA[:, ::2], yAB[:, :, ::2]) is None  # not contiguous
    assert kernels.squared_differences(yA[:3], yAB) is None  # shapes that do not match


@pytest.mark.parametrize("compiled", [True, False])
def test_hidden_sums_are_within_1e_6_of_float64_with_or_without_the_loop(compiled, monkeypatch):
    if compiled and not HAVE_KERNEL:
        pytest.skip("the compiled loop was not built here")
    if not compiled:
        monkeypatch.setattr(kernels, "_sum_squares", None)
    g, n, k = 7, 300, 33
    y = _rows(g, n, k, 2)
    s = JansenSums(k, g, detail=False)
    s.add(y)
    want = _definition(y[:n], y[2 * n :].reshape(g, n, k))
    np.testing.assert_allclose(s.tot_sum, want, rtol=1e-12 if compiled else 1e-6)


def test_an_install_with_a_c_compiler_builds_the_loop():
    """The extension is optional so that an install without a compiler goes on; where the interpreter's
    compiler is present (as on CI), a missing loop means the build broke, and that must not pass quietly."""
    compiler = (sysconfig.get_config_var("CC") or "").split()
    if not compiler or shutil.which(compiler[0]) is None:
        pytest.skip("no C compiler here: the numpy sums are used")
    assert kernels.available()
