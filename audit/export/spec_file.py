"""The input spec of a simplified model: its kept inputs with their laws, as a TOML file beside it.

So that the written model can be audited at once (``netdim audit FILE --inputs FILE.toml``), the
spec lists the kept inputs with the source spec's laws (every parameter in full: an empirical law's
knots, a discrete law's values and probabilities) and units, and the outputs' names and units,
written by the spec writer of :mod:`audit.inputs.tomlwrite`.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from ..inputs.tomlwrite import TomlWriter
from .plan import ExportPlan

__all__ = ["spec_path", "spec_text"]


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
    w = TomlWriter()
    w.comment(f"netdim input spec of a simplified model ({what}).")
    w.key("title", title or what)
    w.blank()
    w.table("inputs")
    w.key("count", len(plan.kept))
    w.blank()
    for j in plan.kept:
        law = plan.laws[j]
        w.array_table("inputs.feature")
        w.key("name", plan.names[j])
        w.key("law", law.kind)
        for key, value in law.params.items():
            w.key(key, list(value) if isinstance(value, tuple) else value)
        if units[j]:
            w.key("unit", units[j])
        w.blank()
    if outputs:
        w.table("outputs")
        w.key("names", list(outputs))
        if output_units:
            w.key("units", list(output_units))
    return w.text()
