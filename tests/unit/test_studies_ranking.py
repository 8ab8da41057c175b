"""Interval-aware rank agreement and the leading set kept (audit.studies.ranking).

The rule under test (ours, documented in the module): a pair of inputs that matter counts as swapped
only when both models separate it (non-overlapping intervals) in opposite orders.
"""

import numpy as np
import pytest

from audit.results import Estimate
from audit.studies.ranking import rank_agreement, top_k_kept


def _e(v, h=0.01):
    return Estimate(v, v - h, v + h, h / 2)


def test_identical_rankings_agree_fully():
    old = [_e(0.5), _e(0.3), _e(0.1), _e(0.001)]
    reps = np.tile([0.5, 0.3, 0.1, 0.001], (6, 1))
    agreement, inputs, swapped = rank_agreement(old, old, reps, reps, 0.01)
    assert agreement.estimate == 1.0 and inputs == 3 and swapped == 0  # x3 is below the floor in both


def test_overlapping_intervals_are_not_swaps():
    old, new = [_e(0.30, 0.05), _e(0.28, 0.05)], [_e(0.28, 0.05), _e(0.30, 0.05)]
    reps_old = np.array([[0.30, 0.28]] * 5)
    reps_new = np.array([[0.28, 0.30]] * 5)
    agreement, _, swapped = rank_agreement(old, new, reps_old, reps_new, 0.01)
    assert swapped == 0 and agreement.estimate == 1.0


def test_separated_pairs_in_opposite_orders_are_swaps():
    old, new = [_e(0.5), _e(0.2), _e(0.1)], [_e(0.2), _e(0.5), _e(0.1)]
    reps_old = np.array([[0.5, 0.2, 0.1]] * 4)
    reps_new = np.array([[0.2, 0.5, 0.1]] * 4)
    agreement, inputs, swapped = rank_agreement(old, new, reps_old, reps_new, 0.01)
    assert (inputs, swapped) == (3, 1) and agreement.estimate == pytest.approx(1 - 1 / 3)


def test_fewer_than_two_inputs_that_matter_give_no_agreement():
    assert rank_agreement([_e(0.5), _e(0.0)], [_e(0.5), _e(0.0)], np.zeros((3, 2)), np.zeros((3, 2)), 0.01)[0] is None


def test_top_k_kept_counts_only_inputs_clearly_out():
    old = [_e(0.5), _e(0.3), _e(0.2), _e(0.1)]
    assert top_k_kept(old, old, 2) == (1.0, 2)
    new = [_e(0.5), _e(0.05), _e(0.3), _e(0.2)]  # x1 falls clearly below the new second input
    assert top_k_kept(old, new, 2) == (0.5, 2)
    close = [_e(0.5), _e(0.29, 0.02), _e(0.3, 0.02), _e(0.1)]  # x1 just behind, within the intervals
    assert top_k_kept(old, close, 2) == (1.0, 2)
