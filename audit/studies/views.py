"""What the indices of a run are about: each input, or each group of inputs.

``view`` (a design option) is one of :data:`VIEWS`:

``"inputs"``
    A total and first-order index per input and ν over inputs. An input is a
    model column, or a one-hot block of columns swapped as a whole.
``"groups"``
    The spec's groups (:mod:`audit.inputs.groups`): a total and closed
    first-order index per group and ν counted in groups (1 ≤ ν_G ≤ G), from
    N(G + 2) evaluations per randomization instead of N(d + 2).
``"both"``
    Both views, as two jobs on the same points: the inputs view is the result,
    the groups view its ``by_group``. The two jobs share the design, so their
    rows A and B -- and the variance -- are the same; the price is 2N
    evaluations more than one layout serving both would cost. Two jobs keep
    every job the plain Jansen estimator, with its hidden-layer sums,
    checkpoints and memory plan unchanged, and keep ν of each view a sum over
    that view alone.

The default (``None``) is ``"groups"`` when the spec declares groups, else ``"inputs"``.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..errors import UserError
from ..inputs import InputSpec
from ..inputs.groups import InputGroup, resolve_groups
from ..inputs.variables import Variables

__all__ = ["VIEWS", "View", "group_view", "input_view", "resolve_view"]

#: Valid values of ``view``.
VIEWS = ("inputs", "groups", "both")


@dataclass(frozen=True)
class View:
    """The units that get indices: their names and the model columns each one swaps.

    Attributes
    ----------
    kind : {"inputs", "groups"}
    names : list of str
        One per unit (an input, or a group).
    columns : list of list of int or None
        Model columns of each unit, for the estimator's ``groups``; ``None`` when
        every unit is one column, in order.
    groups : list of InputGroup
        The groups (``kind == "groups"``), else empty.
    """

    kind: str
    names: list[str]
    columns: list[list[int]] | None
    groups: list[InputGroup]

    def describe(self, variables: Variables) -> list[dict[str, object]]:
        """The groups as a report lists them: name and the names of their inputs."""
        return [{"name": g.name, "inputs": [variables.names[i] for i in g.members]} for g in self.groups]


def resolve_view(view: str | None, spec: InputSpec) -> str:
    """``view``, or the default for ``spec``; refuses a grouped view without groups."""
    chosen = view or ("groups" if spec.groups is not None else "inputs")
    if chosen != "inputs" and spec.groups is None:
        raise UserError(
            f"`view` {chosen} needs groups of inputs, and the input spec declares none. Add a [groups] table "
            '(named lists, or by = "patch" with patch = "2x2", "step", "channel") to the spec.'
        )
    return chosen


def input_view(variables: Variables) -> View:
    """One unit per input."""
    spans = variables.spans
    return View("inputs", list(variables.names), None if spans is None else [list(s) for s in spans], [])


def group_view(variables: Variables, spec: InputSpec, shape: tuple[int, ...] | None) -> View:
    """One unit per group of the spec (inputs outside every listed group are groups of their own)."""
    assert spec.groups is not None
    where = f"The input spec {spec.source}, [groups]" if spec.source else "The input spec, [groups]"
    groups = resolve_groups(spec.groups, variables, shape, where)
    columns = [sorted(c for i in g.members for c in variables.columns[i]) for g in groups]
    return View("groups", [g.name for g in groups], columns, groups)
