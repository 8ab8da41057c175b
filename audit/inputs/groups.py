"""Groups of inputs: named lists, image patches, time steps, channels.

A group is perturbed as a whole: the Jansen rows A_B^{(g)} take every input of
group g from B, so each group gets a total index (everything the group does,
alone and with others) and a closed first-order index (what the group does on
its own, its inputs' interactions among themselves included), and the mean
dimension counts groups: ν_G = Σ_g total_g, between 1 and G. The groups form a
partition: inputs no list names are groups of their own. A one-hot block is one
input, so it is always in one group. Spec::

    [groups]
    by = "list"            # default: the named lists below
    [[groups.group]]
    name = "weather"
    inputs = ["outside_temperature", "solar_radiation"]

    [groups]
    by = "patch"           # image patches of the input's last two axes (all channels of each)
    patch = "2x2"          # or [2, 2]; edge patches are smaller when the size does not divide
    shape = [1, 8, 8]      # optional: the input's shape (default the spec's [model] input_shape,
                           # else the model's input tensor)

    [groups]
    by = "step"            # one group per index along `axis` (default the first axis longer than 1)
    by = "channel"         # the same; default axis 0 of a (C, H, W) shape, the last of a (T, C) one

Patterns run over the model columns in C order of ``shape``.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

from ..errors import UserError, suggest
from .variables import Variables

__all__ = ["PATTERNS", "GroupSpec", "InputGroup", "parse_groups", "resolve_groups"]

#: Valid values of ``by``.
PATTERNS = ("list", "patch", "step", "channel")
_KEYS = ("by", "group", "patch", "axis", "shape")
_GROUP_KEYS = ("name", "inputs", "note")


@dataclass(frozen=True)
class GroupSpec:
    """How a spec groups its inputs (``[groups]``)."""

    by: str = "list"
    lists: list[tuple[str, tuple[str, ...]]] = field(default_factory=list)
    patch: tuple[int, int] | None = None
    axis: int | None = None
    shape: tuple[int, ...] | None = None


@dataclass(frozen=True)
class InputGroup:
    """A group: its name and the inputs in it (0-based positions among the inputs)."""

    name: str
    members: tuple[int, ...]


def _patch(value: Any, where: str) -> tuple[int, int]:
    if isinstance(value, str):
        m = re.fullmatch(r"\s*(\d+)\s*[xX×]\s*(\d+)\s*", value)
        value = [int(m.group(1)), int(m.group(2))] if m else None
    ok = (
        isinstance(value, list)
        and len(value) == 2
        and all(isinstance(v, int) and not isinstance(v, bool) for v in value)
    )
    if not ok or min(value) < 1:
        raise UserError(f'{where}: `patch` must be HxW in pixels, e.g. patch = "2x2" or patch = [2, 2].')
    return value[0], value[1]


def parse_groups(table: Any, where: str) -> GroupSpec:
    """The ``[groups]`` table of a spec, checked (names are resolved later, against the model)."""
    if not isinstance(table, dict):
        raise UserError(f"{where}: [groups] must be a table.")
    for key in table:
        if key not in _KEYS:
            raise UserError(
                f"{where}: unknown key '{key}'." + suggest(key, _KEYS) + f" Valid keys: {', '.join(_KEYS)}."
            )
    by = table.get("by", "list")
    if by not in PATTERNS:
        raise UserError(
            f"{where}: unknown `by` {by!r}; valid choices: {', '.join(PATTERNS)}." + suggest(str(by), PATTERNS)
        )
    entries = table.get("group", [])
    if not isinstance(entries, list) or not all(isinstance(e, dict) for e in entries):
        raise UserError(f"{where}: named groups must be given as [[groups.group]] tables.")
    if by == "list" and not entries:
        raise UserError(f'{where}: list the groups as [[groups.group]] tables (name, inputs), or set by = "patch".')
    if by != "list" and entries:
        raise UserError(f'{where}: [[groups.group]] lists go with by = "list", not with by = "{by}".')
    lists = []
    for i, e in enumerate(entries):
        here = f"{where}, group #{i + 1}"
        for key in e:
            if key not in _GROUP_KEYS:
                raise UserError(f"{here}: unknown key '{key}'." + suggest(key, _GROUP_KEYS))
        name, members = e.get("name"), e.get("inputs")
        if not isinstance(name, str) or not name:
            raise UserError(f"{here}: every [[groups.group]] needs a `name`.")
        if not isinstance(members, list) or not members or not all(isinstance(m, str) and m for m in members):
            raise UserError(f'{where}, group \'{name}\': `inputs` must list input names, e.g. inputs = ["a", "b"].')
        lists.append((name, tuple(members)))
    patch = None
    if by == "patch":
        if "patch" not in table:
            raise UserError(f'{where}: by = "patch" needs the patch size, e.g. patch = "2x2".')
        patch = _patch(table["patch"], where)
    axis = table.get("axis")
    if axis is not None and (isinstance(axis, bool) or not isinstance(axis, int) or axis < 0):
        raise UserError(f"{where}: `axis` must be a whole number ≥ 0 (an axis of the input's shape, batch left out).")
    shape = table.get("shape")
    if shape is not None:
        if not isinstance(shape, list) or not shape or not all(isinstance(v, int) and v >= 1 for v in shape):
            raise UserError(f"{where}: `shape` must list the input's dimensions, e.g. shape = [1, 8, 8].")
        shape = tuple(shape)
    return GroupSpec(by, lists, patch, axis, shape)


def _column_groups(spec: GroupSpec, shape: tuple[int, ...], where: str) -> list[tuple[str, list[int]]]:
    """Pattern groups as (name, model columns)."""
    import numpy as np

    coords = np.unravel_index(np.arange(math.prod(shape)), shape)
    if spec.by == "patch":
        if len(shape) < 2:
            raise UserError(f"{where}: image patches need a shape of at least 2 axes (H, W), got {list(shape)}.")
        ph, pw = spec.patch or (1, 1)
        h, w = shape[-2], shape[-1]
        label = (coords[-2] // ph) * (-(-w // pw)) + coords[-1] // pw
        order = np.argsort(label, kind="stable")
        cuts = np.searchsorted(label[order], np.arange(1, (-(-h // ph)) * (-(-w // pw))))
        out = []
        for k, cols in enumerate(np.split(order, cuts)):
            r, c = divmod(k, -(-w // pw))
            r0, c0 = r * ph, c * pw
            out.append((f"rows{r0}-{min(r0 + ph, h) - 1}_cols{c0}-{min(c0 + pw, w) - 1}", cols.tolist()))
        return out
    axis = spec.axis
    if axis is None:
        if spec.by == "channel":
            axis = 0 if len(shape) >= 3 else len(shape) - 1
        else:
            axis = next((k for k, n in enumerate(shape) if n > 1), 0)
    if axis >= len(shape):
        raise UserError(f"{where}: `axis` {axis} is not an axis of the shape {list(shape)} (0..{len(shape) - 1}).")
    word = "step" if spec.by == "step" else "channel"
    return [(f"{word}_{t}", np.flatnonzero(coords[axis] == t).tolist()) for t in range(shape[axis])]


def resolve_groups(
    spec: GroupSpec, variables: Variables, shape: Sequence[int] | None = None, where: str = "The input spec, [groups]"
) -> list[InputGroup]:
    """The groups of ``variables``: a partition of the inputs, in order of their first input.

    Parameters
    ----------
    spec : GroupSpec
    variables : Variables
        The model's inputs.
    shape : sequence of int, optional
        The input's non-batch shape, for patterns (``spec.shape`` wins when given).

    Raises
    ------
    UserError
        A name that is no input, an input in two groups, a pattern splitting a
        one-hot block, or a shape that does not match the model's columns.

    Examples
    --------
    >>> from audit.inputs import Law
    >>> from audit.inputs.groups import GroupSpec, resolve_groups
    >>> from audit.inputs.variables import build_variables
    >>> v = build_variables(["a", "b", "c"], [Law("normal")] * 3, [""] * 3)
    >>> [(g.name, g.members) for g in resolve_groups(GroupSpec("list", [("ab", ("a", "b"))]), v)]
    [('ab', (0, 1)), ('c', (2,))]
    """
    owner = {c: i for i, cols in enumerate(variables.columns) for c in cols}
    named: list[tuple[str, list[int]]] = []
    if spec.by == "list":
        for name, members in spec.lists:
            idx = []
            for m in members:
                if m not in variables.names:
                    raise UserError(
                        f"{where}, group '{name}': no input is named '{m}'."
                        + suggest(m, variables.names)
                        + (" A one-hot block is named by its own `name`." if variables.one_hot else "")
                    )
                idx.append(variables.names.index(m))
            named.append((name, sorted(set(idx))))
    else:
        shp = tuple(spec.shape or shape or ())
        if not shp or math.prod(shp) != variables.d:
            raise UserError(
                f'{where}: by = "{spec.by}" needs the input\'s shape, and {list(shp) or "none"} does not hold the '
                f"model's {variables.d} columns. Set `shape` under [groups] (e.g. shape = [1, 8, 8])."
            )
        for name, cols in _column_groups(spec, shp, where):
            inputs = sorted({owner[c] for c in cols})
            for i in inputs:
                if not set(variables.columns[i]) <= set(cols):
                    raise UserError(
                        f"{where}: the one-hot block '{variables.names[i]}' falls in two groups; list groups by name."
                    )
            named.append((name, inputs))
    seen: dict[int, str] = {}
    for name, idx in named:
        for i in idx:
            if i in seen:
                raise UserError(
                    f"{where}: input '{variables.names[i]}' is in two groups ('{seen[i]}' and '{name}'); "
                    "groups must not overlap."
                )
            seen[i] = name
    names = [n for n, _ in named]
    if len(set(names)) != len(names):
        dup = next(n for n in names if names.count(n) > 1)
        raise UserError(f"{where}: two groups are named '{dup}'.")
    groups = [InputGroup(n, tuple(idx)) for n, idx in named if idx]
    groups += [InputGroup(variables.names[i], (i,)) for i in range(len(variables.names)) if i not in seen]
    clash = {g.name for g in groups if len(g.members) > 1} & {
        variables.names[i] for i in range(len(variables.names)) if i not in seen
    }
    if clash:
        raise UserError(
            f"{where}: the group name '{sorted(clash)[0]}' is also the name of an input outside every group."
        )
    groups.sort(key=lambda g: g.members[0])
    return groups
