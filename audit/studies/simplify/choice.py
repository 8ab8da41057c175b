"""What to simplify: the inputs to integrate out and to freeze, by name, from the caller or an advice report.

``integrate`` takes input names (``"solar_irradiance"``, or ``"solar_irradiance:16"`` for a given node
count) or a mapping name -> nodes (``None``: chosen by the node check). ``freeze`` takes names with an
optional value (``"wind_speed"``, ``"wind_speed=6"``, ``"wind_speed=median"``, ``"wind_speed=best"``)
or a mapping name -> value, ``"median"`` or ``"best"``. An advice report gives its best pre-integration
candidate (with its node count) and the inputs every advised output can freeze.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

from ...errors import UserError, suggest
from ...results import AdviceResult, result_from_dict

__all__ = ["FREEZE_CHOICES", "from_advice", "load_advice", "parse_freeze", "parse_integrate"]

#: Ways to choose a frozen input's value besides giving it.
FREEZE_CHOICES = ("median", "best")


def _index(name: str, names: Sequence[str], what: str) -> int:
    if name not in names:
        shown = ", ".join(names[:12]) + (" ..." if len(names) > 12 else "")
        raise UserError(f"`{what}` names the input '{name}', which the model does not have." + suggest(name, names)
                        + f" Its inputs are {shown}.")  # fmt: skip
    return list(names).index(name)


def _items(value: Any) -> list[tuple[str, Any]]:
    if value is None:
        return []
    if isinstance(value, str):
        value = [v for v in value.split(",") if v.strip()]
    if isinstance(value, Mapping):
        return [(str(k).strip(), v) for k, v in value.items()]
    return [(str(v).strip(), None) for v in value]


def parse_integrate(integrate: Any, names: Sequence[str]) -> dict[int, int | None]:
    """Input position -> nodes (``None``: to be chosen) from names, ``NAME:NODES`` or a mapping."""
    out: dict[int, int | None] = {}
    for name, nodes in _items(integrate):
        if nodes is None and ":" in name:
            name, _, text = name.partition(":")
            try:
                nodes = int(text)
            except ValueError:
                raise UserError(
                    f"`integrate` takes NAME or NAME:NODES with a whole number of Gauss nodes, got '{name}:{text}'."
                ) from None
        if nodes is not None and (isinstance(nodes, bool) or not isinstance(nodes, int) or not 1 <= nodes <= 256):
            raise UserError(
                f"The Gauss nodes for {name} (`integrate`) must be a whole number in 1..256, got {nodes!r}."
            )
        out[_index(name.strip(), names, "integrate")] = nodes
    return out


def parse_freeze(freeze: Any, names: Sequence[str]) -> dict[int, float | str]:
    """Input position -> value, ``"median"`` or ``"best"`` from names, ``NAME=VALUE`` or a mapping."""
    out: dict[int, float | str] = {}
    for name, value in _items(freeze):
        if value is None:
            name, _, text = name.partition("=")
            value = text.strip() or "median"
        if isinstance(value, str) and value not in FREEZE_CHOICES:
            try:
                value = float(value)
            except ValueError:
                raise UserError(
                    f"`freeze` takes NAME, NAME=VALUE, NAME=median or NAME=best; got '{name}={value}'."
                ) from None
        if not isinstance(value, str):
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
                raise UserError(f"The value to freeze {name} at (`freeze`) must be a finite number, got {value!r}.")
            value = float(value)
        out[_index(name.strip(), names, "freeze")] = value
    return out


def load_advice(advice: AdviceResult | str | Path) -> AdviceResult:
    """An advice result, read from its JSON report when given a path."""
    if isinstance(advice, AdviceResult):
        return advice
    path = Path(advice)
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
        result = result_from_dict(data)
    except OSError as exc:
        raise UserError(f"The advice report '{advice}' (`advice`) cannot be read: {exc.strerror or exc}.") from exc
    except (json.JSONDecodeError, UnicodeDecodeError, ValueError) as exc:
        raise UserError(f"'{advice}' (`advice`) is not a netdim report this version can read: {exc}.") from exc
    if not isinstance(result, AdviceResult):
        raise UserError(
            f"'{advice}' (`advice`) is a {result.kind} report; give the JSON report of `netdim advise` instead."
        )
    return result


def from_advice(
    advice: AdviceResult, names: Sequence[str]
) -> tuple[dict[int, int | None], dict[int, float | str], dict[int, tuple[float, bool]]]:
    """The advice's best candidate (nodes), the inputs every output can freeze, and the candidate's node check.

    The candidate is the best one of the first output that has one. An input is
    frozen only when it lies in the frozen group of every output the advice
    measured (an input negligible for one output may matter for another);
    its value is the law's median.
    """
    given = [i.get("name") for i in advice.inputs]
    if list(given) != list(names):
        raise UserError(
            f"The advice report (`advice`) was made for the inputs {', '.join(map(str, given[:8]))}, not for "
            f"this model's {', '.join(names[:8])}: run `netdim advise` on this model with the same input spec."
        )
    live = [o for o in advice.outputs if not o.audit.inert and o.audit.total_index]
    integrate: dict[int, int | None] = {}
    errors: dict[int, tuple[float, bool]] = {}
    best = next((o.best for o in live if o.best is not None), None)
    if best is not None:
        j = _index(best.feature, names, "advice")
        integrate[j] = best.nodes
        errors[j] = (best.quadrature_error, best.converged)
    groups = [set(o.freeze_group.features) if o.freeze_group is not None else set() for o in live]
    common = set.intersection(*groups) if groups else set()
    freeze: dict[int, float | str] = {_index(n, names, "advice"): "median" for n in sorted(common, key=names.index)}
    freeze = {j: v for j, v in freeze.items() if j not in integrate}
    return integrate, freeze, errors
