"""The input spec of a simplified model: its kept inputs with their laws, as a TOML file beside it.

So that the written model can be audited at once (``netdim audit FILE --inputs FILE.toml``), the
spec lists the kept inputs with the source spec's laws and units, and the outputs' names and units.
Strings are written as TOML basic strings (JSON escaping is valid TOML), numbers with ``repr``.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from pathlib import Path

from .plan import ExportPlan

__all__ = ["spec_path", "spec_text"]


def _quote(value: object) -> str:
    return json.dumps(value, ensure_ascii=False)


def spec_path(model_path: str | Path) -> Path:
    """``FILE.toml`` beside ``FILE.onnx`` (or ``.pt``, ``.pt2``, ``.py``)."""
    return Path(model_path).with_suffix(".toml")


def spec_text(
    plan: ExportPlan,
    title: str = "",
    units: Sequence[str] = (),
    outputs: Sequence[str] | None = None,
    output_units: Sequence[str] | None = None,
) -> str:
    """The TOML text of the simplified model's input spec."""
    units = list(units) or [""] * plan.d
    what = "; ".join([f"{i.feature} integrated out" for i in plan.integrated]
                     + [f"{f.feature} frozen at {f.value:.9g}" for f in plan.frozen])  # fmt: skip
    lines = [f"# netdim input spec of a simplified model ({what}).", f"title = {_quote(title or what)}", ""]
    lines += ["[inputs]", f"count = {len(plan.kept)}", ""]
    for j in plan.kept:
        lines += ["[[inputs.feature]]", f"name = {_quote(plan.names[j])}"]
        for key, value in plan.laws[j].to_dict().items():
            lines.append(f"{key} = {_quote(value) if isinstance(value, str) else repr(float(value))}")
        if units[j]:
            lines.append(f"unit = {_quote(units[j])}")
        lines.append("")
    if outputs:
        lines += ["[outputs]", f"names = {_quote(list(outputs))}"]
        if output_units:
            lines.append(f"units = {_quote(list(output_units))}")
    return "\n".join(lines) + "\n"
