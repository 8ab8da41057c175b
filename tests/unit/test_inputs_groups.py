"""Groups of inputs (audit.inputs.groups) and one-hot inputs (audit.inputs.variables)."""

import pytest

from audit.errors import UserError
from audit.inputs import GroupSpec, Law, OneHot, build_variables, resolve_groups


def _variables(names, blocks=()):
    return build_variables(names, [Law("normal")] * len(names), [""] * len(names), blocks)


def test_patches_steps_and_channels_cover_every_column_once():
    v = _variables([f"p{i}" for i in range(2 * 4 * 6)])
    patches = resolve_groups(GroupSpec("patch", patch=(2, 3)), v, (2, 4, 6))
    assert len(patches) == 4 and all(len(g.members) == 2 * 2 * 3 for g in patches)  # both channels in each
    assert patches[0].name == "rows0-1_cols0-2" and patches[0].members[:3] == (0, 1, 2)
    for spec, count in (
        (GroupSpec("channel"), 2),
        (GroupSpec("step", axis=1), 4),
        (GroupSpec("patch", patch=(3, 4)), 4),
    ):
        groups = resolve_groups(spec, v, (2, 4, 6))
        assert len(groups) == count
        assert sorted(i for g in groups for i in g.members) == list(range(48))
    seq = _variables([f"s{i}" for i in range(15)])
    assert [len(g.members) for g in resolve_groups(GroupSpec("channel"), seq, (5, 3))] == [5, 5, 5]  # (T, C)


def test_named_lists_leave_other_inputs_alone_and_one_hot_blocks_whole():
    v = _variables(["a", "red", "blue", "b", "c"], [OneHot("colour", ("red", "blue"))])
    groups = resolve_groups(GroupSpec("list", [("g", ("colour", "c"))]), v)
    assert [(g.name, g.members) for g in groups] == [("a", (0,)), ("g", (1, 3)), ("b", (2,))]
    with pytest.raises(UserError, match=r"no input is named 'red'.*one-hot block is named by its own"):
        resolve_groups(GroupSpec("list", [("g", ("red",))]), v)
    with pytest.raises(UserError, match="in two groups"):
        resolve_groups(GroupSpec("list", [("g", ("a",)), ("h", ("a", "b"))]), v)
    with pytest.raises(UserError, match="falls in two groups"):
        resolve_groups(GroupSpec("step"), v, (5,))
    with pytest.raises(UserError, match="does not hold"):
        resolve_groups(GroupSpec("patch", patch=(2, 2)), v, (2, 2))


def test_one_hot_blocks_are_checked():
    with pytest.raises(UserError, match="no column 'green'"):
        _variables(["red", "blue"], [OneHot("c", ("red", "green"))])
    with pytest.raises(UserError, match="in two one-hot blocks"):
        _variables(["a", "b", "c"], [OneHot("x", ("a", "b")), OneHot("y", ("b", "c"))])
    with pytest.raises(UserError, match="two inputs are named 'a'"):
        _variables(["a", "b", "c"], [OneHot("a", ("b", "c"))])
    v = _variables(["t", "red", "blue"], [OneHot("colour", ("blue", "red"), (0.3, 0.7))])
    assert v.columns[1] == (2, 1) and v.laws[1].params["labels"] == ("blue", "red") and v.spans is not None
