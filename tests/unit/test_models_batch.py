"""Finding the axis that holds the rows of a tensor from two probe batches (audit.models.batch).

References: each tensor is built here from known rows with numpy, so the right answer is
known by construction (common practice, no source).
"""

from __future__ import annotations

import numpy as np
import pytest

from audit.models.batch import PROBE_LARGE, PROBE_SMALL, BatchAxis, Refusal, establish, make_probe, same_values

D = 4
W = np.random.default_rng(3).normal(size=(D, 3))


def _per_row(x: np.ndarray) -> np.ndarray:
    """(n, 3): one row of values per input row."""
    return np.tanh(x @ W)


def test_probe_batches_share_rows() -> None:
    probe = make_probe(D)
    assert (len(probe.small), len(probe.large)) == (PROBE_SMALL, PROBE_LARGE) == (2, 5)
    assert not probe.fixed
    np.testing.assert_array_equal(probe.small, probe.large[probe.pick])
    assert len(np.unique(probe.large, axis=0)) == len(probe.large)  # distinct rows
    fixed = make_probe(D, 4, 4)
    assert fixed.fixed and len(fixed.small) == len(fixed.large) == 4
    np.testing.assert_array_equal(fixed.small[: len(fixed.pick)], fixed.large[fixed.pick])
    assert make_probe(D, 1, 1).fixed and len(make_probe(D, 1, 1).large) == 1
    assert (len(make_probe(D, 2, 3).small), len(make_probe(D, 2, 3).large)) == (2, 3)  # a bounded range


@pytest.mark.parametrize(
    ("make", "expected"),
    [
        (lambda y: y, BatchAxis(0)),
        (lambda y: y.T, BatchAxis(1)),  # (3, n): rows last
        (lambda y: np.stack([y, 2 * y], axis=1).transpose(2, 0, 1), BatchAxis(1)),  # (3, n, 2)
        # (n * 2, 3): the batch merged with a factor of 2, rows slowest (attention heads)
        (lambda y: np.stack([y, -y], axis=1).reshape(-1, 3), BatchAxis(0, 2)),
        # (2 * n, 3): rows fastest
        (lambda y: np.concatenate([y, -y]), BatchAxis(0, 2, minor=True)),
    ],
)
def test_rows_are_found_wherever_they_are(make, expected) -> None:
    probe = make_probe(D)
    small, large = make(_per_row(probe.small)), make(_per_row(probe.large))
    axis = establish(small, large, probe, make(_per_row(probe.large)))
    assert axis == expected
    # read rows first, they are the per-row values again (up to the other factor's layout)
    rows = axis.rows(large, len(probe.large))
    assert rows.shape[0] == len(probe.large)
    np.testing.assert_allclose(axis.rows(make(_per_row(probe.large[[2]])), 1), rows[[2]])


def test_one_value_per_batch_and_constants() -> None:
    probe = make_probe(D)
    mean = establish(_per_row(probe.small).mean(0), _per_row(probe.large).mean(0), probe)
    assert isinstance(mean, Refusal) and mean.kind == "per-batch"
    const = establish(np.ones(3), np.ones(3), probe)
    assert isinstance(const, Refusal) and const.kind == "constant"


def test_width_changing_with_the_batch_is_refused() -> None:
    probe = make_probe(D)
    pair = establish(np.zeros((2, 2)), np.zeros((5, 5)), probe)  # (n, n): two axes follow the rows
    assert isinstance(pair, Refusal) and pair.kind == "shape"
    skew = establish(np.zeros((2 * 3, 3)), np.zeros((5 * 3 + 1, 3)), probe)  # not in proportion
    assert isinstance(skew, Refusal) and skew.kind == "shape"


def test_batch_dependence_and_randomness_are_told_apart() -> None:
    probe = make_probe(D)

    def normed(x: np.ndarray) -> np.ndarray:  # a normalisation across the batch
        y = _per_row(x)
        return (y - y.mean(0)) / y.std(0)

    rows = establish(normed(probe.small), normed(probe.large), probe, normed(probe.large))
    assert isinstance(rows, Refusal) and rows.kind == "rows"
    noise = np.random.default_rng(0).normal(size=(5, 3))
    random = establish(_per_row(probe.small), _per_row(probe.large), probe, _per_row(probe.large) + noise)
    assert isinstance(random, Refusal) and random.kind == "random"


def test_scrambled_rows_are_not_taken_for_rows() -> None:
    # (n, 3) reshaped to (3, n) without a transpose: the size follows the rows, the values do not
    probe = make_probe(D)
    small, large = _per_row(probe.small).reshape(3, -1), _per_row(probe.large).reshape(3, -1)
    assert isinstance(establish(small, large, probe), Refusal)


def test_fixed_batch_size() -> None:
    probe = make_probe(D, 4, 4)
    axis = establish(_per_row(probe.small).T, _per_row(probe.large).T, probe)
    assert axis == BatchAxis(1)
    y_small = _per_row(probe.small)
    y_small = y_small - y_small.mean(0)
    y_large = _per_row(probe.large)
    assert isinstance(establish(y_small, y_large - y_large.mean(0), probe), Refusal)


def test_float_precision_is_not_a_difference() -> None:
    a = np.linspace(-3, 3, 50, dtype=np.float32)
    assert same_values(a + np.float32(1e-6) * a, a)[0]  # a few float32 units
    assert not same_values(a + 1e-2, a)[0]
    assert same_values(np.array([np.nan, 1.0]), np.array([np.nan, 1.0]))[0]
    assert not same_values(np.array([np.nan, 1.0]), np.array([0.0, 1.0]))[0]
