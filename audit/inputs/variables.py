"""The inputs of a model: each is one model column, or a block of one-hot columns.

A model takes d columns. Most columns are an input each, with its own law. A
*one-hot block* -- k columns that hold one category, as a 1 in the column of
that category and 0 in the others -- is ONE input: a discrete law over its k
categories (codes 0..k−1, named by ``labels``), written by the design as a
one-hot vector (:mod:`audit.design.design`). So a sampled row is always a valid
one-hot vector, and the pick-freeze rows swap the block as a whole: its indices
are those of the category. Spec::

    [[inputs.one_hot]]
    name = "soil"
    columns = ["soil_clay", "soil_loam", "soil_sand"]   # model columns, by name
    probabilities = [0.2, 0.5, 0.3]                     # optional, default equal
    labels = ["clay", "loam", "sand"]                   # optional, default the column names

:class:`Variables` lists the inputs in the order of their first column: names,
laws, units and the model columns of each.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from ..errors import UserError, suggest
from .laws import Law

__all__ = ["OneHot", "Variables", "build_variables", "parse_one_hot"]

_KEYS = ("name", "columns", "probabilities", "labels", "note")


@dataclass(frozen=True)
class OneHot:
    """A block of one-hot columns declared in a spec (names of the model columns)."""

    name: str
    columns: tuple[str, ...]
    probabilities: tuple[float, ...] | None = None
    labels: tuple[str, ...] | None = None


@dataclass(frozen=True)
class Variables:
    """The inputs of a model and the model columns each one writes.

    Attributes
    ----------
    names, laws, units : list
        One per input.
    columns : list of tuple of int
        The model columns of each input: one, or the k columns of a one-hot block
        (in category order).
    column_names : list of str
        One per model column.
    """

    names: list[str]
    laws: list[Law]
    units: list[str]
    columns: list[tuple[int, ...]]
    column_names: list[str]

    @property
    def d(self) -> int:
        """Model columns."""
        return len(self.column_names)

    @property
    def spans(self) -> list[tuple[int, ...]] | None:
        """The columns of every input, or ``None`` when every input is its own column, in order."""
        trivial = all(c == (j,) for j, c in enumerate(self.columns)) and len(self.columns) == self.d
        return None if trivial else list(self.columns)

    @property
    def one_hot(self) -> list[int]:
        """Inputs that are one-hot blocks."""
        return [i for i, c in enumerate(self.columns) if len(c) > 1]


def parse_one_hot(entries: Any, where: str) -> list[OneHot]:
    """The ``[[inputs.one_hot]]`` tables of a spec, checked."""
    if not isinstance(entries, list) or not all(isinstance(e, dict) for e in entries):
        raise UserError(f"{where}: one-hot blocks must be given as [[inputs.one_hot]] tables.")
    out = []
    for i, e in enumerate(entries):
        here = f"{where}, one-hot block #{i + 1}"
        for key in e:
            if key not in _KEYS:
                raise UserError(
                    f"{here}: unknown key '{key}'." + suggest(key, _KEYS) + f" Valid keys: {', '.join(_KEYS)}."
                )
        name = e.get("name")
        if not isinstance(name, str) or not name:
            raise UserError(f"{here}: every [[inputs.one_hot]] needs a `name` (the category's).")
        here = f"{where}, one-hot block '{name}'"
        cols = e.get("columns")
        if not isinstance(cols, list) or len(cols) < 2 or not all(isinstance(c, str) and c for c in cols):
            raise UserError(f'{here}: `columns` must list at least 2 model columns by name, e.g. ["a_x", "a_y"].')
        if len(set(cols)) != len(cols):
            raise UserError(f"{here}: a column is listed twice in `columns`.")
        probs, labels = e.get("probabilities"), e.get("labels")
        if probs is not None and (
            not isinstance(probs, list)
            or not all(isinstance(p, int | float) and not isinstance(p, bool) for p in probs)
        ):
            raise UserError(f"{here}: `probabilities` must be a list of numbers, one per column.")
        if labels is not None and (not isinstance(labels, list) or not all(isinstance(s, str) and s for s in labels)):
            raise UserError(f"{here}: `labels` must be a list of names, one per column.")
        out.append(
            OneHot(
                name, tuple(cols), None if probs is None else tuple(probs), None if labels is None else tuple(labels)
            )
        )
    return out


def _one_hot_law(block: OneHot, where: str) -> Law:
    params: dict[str, Any] = {
        "values": list(range(len(block.columns))),
        "labels": list(block.labels or block.columns),
    }
    if block.probabilities is not None:
        params["probabilities"] = list(block.probabilities)
    try:
        return Law("discrete", params)
    except ValueError as exc:
        raise UserError(f"{where}, one-hot block '{block.name}': {exc}") from exc


def build_variables(
    column_names: Sequence[str],
    column_laws: Sequence[Law],
    units: Sequence[str],
    blocks: Sequence[OneHot] = (),
    where: str = "The input spec",
) -> Variables:
    """The inputs of a model whose d columns have these names and laws, with ``blocks`` one-hot.

    Raises
    ------
    UserError
        A block naming a column the model does not have, two blocks sharing a
        column, or a block named like another input.

    Examples
    --------
    >>> from audit.inputs import Law
    >>> from audit.inputs.variables import OneHot, build_variables
    >>> v = build_variables(["t", "red", "blue"], [Law("normal")] * 3, [""] * 3, [OneHot("colour", ("red", "blue"))])
    >>> v.names, v.columns
    (['t', 'colour'], [(0,), (1, 2)])
    """
    column_names = list(column_names)
    owner: dict[int, int] = {}
    for b, block in enumerate(blocks):
        for c in block.columns:
            if c not in column_names:
                raise UserError(
                    f"{where}, one-hot block '{block.name}': the model has no column '{c}'."
                    + suggest(c, column_names)
                    + " Name the columns as the spec's `names` or [[inputs.feature]] entries do."
                )
            j = column_names.index(c)
            if j in owner:
                raise UserError(
                    f"{where}: column '{c}' is in two one-hot blocks ('{blocks[owner[j]].name}' and '{block.name}')."
                )
            owner[j] = b
    names: list[str] = []
    laws: list[Law] = []
    unit_list: list[str] = []
    columns: list[tuple[int, ...]] = []
    started: set[int] = set()
    for j, name in enumerate(column_names):
        if j not in owner:
            names.append(name)
            laws.append(column_laws[j])
            unit_list.append(units[j] if j < len(units) else "")
            columns.append((j,))
            continue
        b = owner[j]
        if b in started:
            continue
        started.add(b)
        block = blocks[b]
        names.append(block.name)
        laws.append(_one_hot_law(block, where))
        unit_list.append("")
        columns.append(tuple(column_names.index(c) for c in block.columns))
    if len(set(names)) != len(names):
        dup = next(n for n in names if names.count(n) > 1)
        raise UserError(f"{where}: two inputs are named '{dup}'; give the one-hot block another `name`.")
    return Variables(names, laws, unit_list, columns, column_names)
