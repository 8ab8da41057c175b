"""User errors and the validation helpers (audit.errors): bounds, booleans, messages, suggestions."""

import math

import numpy as np
import pytest

from audit.errors import UserError, check_choice, check_int, check_number, suggest


def test_user_error_carries_its_message_and_exit_code():
    e = UserError("Something is wrong: fix it.")
    assert str(e) == e.message == "Something is wrong: fix it."
    assert e.exit_code == 2 and isinstance(e, Exception)


def test_suggest_the_nearest_choice_or_nothing():
    assert suggest("pionts", ["points", "replicates"]) == " Did you mean 'points'?"
    assert suggest("zzz", ["points", "replicates"]) == ""
    assert suggest(3, [1, 3]) == " Did you mean '3'?"  # non-strings are compared as text


@pytest.mark.parametrize("value,low,high", [(1, 1, None), (5, 1, 5), (0, 0, 0), (2**40, 1, None)])
def test_check_int_accepts_whole_numbers_in_range(value, low, high):
    out = check_int(value, "points", low, high)
    assert out == value and type(out) is int


def test_check_int_accepts_integer_like_objects():
    assert check_int(np.int64(8), "points", 1) == 8
    assert type(check_int(np.uint16(8), "points", 1)) is int


@pytest.mark.parametrize("value", [0, -3, 6, True, False, np.bool_(True), 2.5, "4", None, [4], math.nan])
def test_check_int_refuses_and_names_the_parameter_in_backticks(value):
    with pytest.raises(UserError) as e:
        check_int(value, "points", 1, 5)
    assert e.value.message.startswith("`points` must be a whole number 1..5, got ")
    assert repr(value) in e.value.message


def test_check_int_accepts_a_whole_float_as_documented():
    assert check_int(4.0, "points", 1, 5) == 4


def test_check_int_message_without_upper_bound_and_with_a_reason():
    with pytest.raises(UserError, match=r"^`points` must be a whole number ≥ 1, got 0\. \(a power of two is best\)$"):
        check_int(0, "points", 1, why="(a power of two is best)")


@pytest.mark.parametrize("value", [0.0, 0.5, 1, 2.0, np.float32(1.5), np.int64(2)])
def test_check_number_accepts_finite_numbers_in_range(value):
    out = check_number(value, "tolerance", 0.0, 2.0)
    assert out == float(value) and type(out) is float


@pytest.mark.parametrize(
    "value,kw,span",
    [
        (-0.1, {"low": 0.0}, "≥ 0"),
        (0.0, {"low": 0.0, "low_open": True}, "> 0"),
        (3.0, {"high": 2.0}, "≤ 2"),
        (2.5, {"low": 0.0, "high": 2.0}, "in [0, 2]"),
        (0.0, {"low": 0.0, "high": 1.0, "low_open": True}, "in (0, 1]"),
        (math.inf, {}, "finite"),
        (math.nan, {"low": 0.0}, "≥ 0"),
        (True, {"low": 0.0}, "≥ 0"),
        ("x", {"low": 0.0}, "≥ 0"),
        (None, {"low": 0.0}, "≥ 0"),
    ],
)
def test_check_number_refuses_and_names_the_parameter_and_its_range(value, kw, span):
    with pytest.raises(UserError) as e:
        check_number(value, "freeze_budget", **kw)
    assert e.value.message.startswith(f"`freeze_budget` must be a number {span}, got {value!r}.")


def test_check_number_adds_the_reason():
    with pytest.raises(UserError, match=r"\(bytes\)$"):
        check_number(0, "memory_limit", 0.0, low_open=True, why="(bytes)")


def test_check_choice_lists_the_choices_and_suggests_the_nearest():
    assert check_choice("sobol", "sampler", ("sobol", "mc")) == "sobol"
    with pytest.raises(UserError) as e:
        check_choice("sobl", "sampler", ("sobol", "mc"), what="(point sets)")
    assert e.value.message == "Unknown `sampler` 'sobl'; valid choices: sobol, mc. (point sets) Did you mean 'sobol'?"
    for bad in (None, 3, ["sobol"]):  # only strings are choices
        with pytest.raises(UserError, match="valid choices: sobol, mc"):
            check_choice(bad, "sampler", ("sobol", "mc"))
