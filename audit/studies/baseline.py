"""A saved audit report as the old side of a comparison: its design and laws, checked against what is asked.

Pairing with a baseline needs the new model audited on exactly the baseline's
points: the same laws, points, replicates, seed, point set and estimator. The
design and laws are taken from the report; options given explicitly must agree
with it, or the comparison is refused naming each difference.
"""

from __future__ import annotations

from typing import Any

from ..errors import UserError
from ..inputs import InputSpec, law_from_dict
from ..results import AuditResult
from .options import DesignOptions
from .setup import inputs_spec

__all__ = ["baseline_design", "baseline_spec", "with_output_names"]

_DESIGN_KEYS = ("points", "replicates", "seed", "sampler", "estimator")


def baseline_design(report: AuditResult, given: dict[str, Any]) -> DesignOptions:
    """The baseline's design; ``given`` options must agree with it.

    Raises
    ------
    UserError
        Naming every option that differs from the baseline's.
    """
    saved = {k: report.design.get(k) for k in _DESIGN_KEYS}
    if None in saved.values():
        missing = [k for k, v in saved.items() if v is None]
        raise UserError(f"The baseline report does not record its {', '.join(missing)}; it cannot be paired.")
    wanted = DesignOptions(**{**saved, **{k: v for k, v in given.items() if v is not None}})
    differ = [f"`{k}` {getattr(wanted, k)!r} here, {saved[k]!r} in the baseline" for k in _DESIGN_KEYS
              if getattr(wanted, k) != saved[k]]  # fmt: skip
    if differ:
        raise UserError(
            "The new model must be audited on the baseline's points, but " + "; ".join(differ) + ". Leave these "
            "options out (the baseline's are used), or audit the released model again with them."
        )
    return wanted


def baseline_spec(report: AuditResult, inputs: Any) -> InputSpec:
    """The baseline's input laws (and names, units); laws given as ``inputs`` must be the same."""
    names = [str(i["name"]) for i in report.inputs]
    laws = [_saved_law(i) for i in report.inputs]
    units = [str(i.get("unit", "")) for i in report.inputs]
    unknown = [n for n, law in zip(names, laws, strict=True) if law is None]
    if inputs is None:
        if unknown:
            raise UserError(
                f"The baseline report records the empirical law of {_listed(unknown)} only by a digest of its "
                "knots, so the laws cannot be rebuilt from it. Give the input spec it was audited with "
                "(`inputs`, the TOML file): its laws are checked against the digests and used."
            )
        # output names: set by the comparison when the new model has as many outputs (see with_output_names)
        return InputSpec(
            names=names, laws=laws, units=units, outputs=None, output_units=report.model.get("output_units"),
            source="the baseline report", title=str(report.model.get("title", "")),
        )  # fmt: skip
    asked = inputs_spec(inputs)
    if asked.laws is None and asked.dim is None:  # one law for every input, from `law`
        asked_laws = [asked.default] * len(laws)
    else:
        _, asked_laws = asked.resolve(len(laws), names)
    differ = []
    for k, (n, a, b) in enumerate(zip(names, laws, asked_laws, strict=True)):
        if a is None:  # an empirical law known by its digest: the asked law must record the same
            saved = report.inputs[k]
            if any(saved.get(key) != value for key, value in b.to_dict().items()):
                differ.append(f"{n}: {b.describe()} here, an empirical law of digest {saved.get('digest')} in the "
                              "baseline")  # fmt: skip
            laws[k] = b
        elif a != b:
            differ.append(f"{n}: {b.describe()} here, {a.describe()} in the baseline")
    if differ:
        shown = "; ".join(differ[:4]) + (f"; and {len(differ) - 4} more" if len(differ) > 4 else "")
        raise UserError(
            f"The input laws differ from the baseline's ({shown}). Indices are defined for a law of the inputs: "
            "compare under the baseline's laws (leave `inputs` out), or audit the released model again."
        )
    output_units = report.model.get("output_units")
    return InputSpec(
        names=names, laws=laws, units=units, outputs=asked.outputs,
        output_units=asked.output_units or output_units,
        model=asked.model, source=asked.source, title=asked.title or str(report.model.get("title", "")),
    )  # fmt: skip


def _saved_law(entry: dict[str, Any]) -> Any:
    """The law an input of a report records, or None for an empirical law recorded by a digest only."""
    if entry.get("law") == "empirical" and "quantiles" not in entry and "digest" in entry:
        return None
    return law_from_dict(entry, f"the baseline's input '{entry['name']}': ")


def _listed(names: list[str]) -> str:
    shown = ", ".join(f"'{n}'" for n in names[:4]) + (f" and {len(names) - 4} more" if len(names) > 4 else "")
    return ("input " if len(names) == 1 else "inputs ") + shown


def with_output_names(spec: InputSpec, report: AuditResult, units: int) -> InputSpec:
    """The spec naming the new model's outputs as the baseline's, when it has as many and none are named."""
    if spec.outputs is not None or units != len(report.outputs):
        return spec
    from dataclasses import replace

    return replace(spec, outputs=[o.name for o in report.outputs])
