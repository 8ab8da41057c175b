"""Integer-typed model inputs get integer laws: the law of the value the model is actually fed.

The backends round the columns of an integer (or boolean) input tensor to the
nearest whole number (:mod:`audit.models.tensors`), so a continuous law there
is not what the model sees. :func:`integer_laws` replaces such a column's law by
the discrete law of its rounded value (:func:`audit.inputs.discrete.rounded_parameters`):
the same design points give the same rounded values (up to ties of
probability 0), the report shows the law really fed, and pre-integration sums
exactly over the whole numbers. Laws that are already on whole numbers stay.
"""

from __future__ import annotations

import dataclasses

from ..design import EPS
from ..errors import UserError
from ..inputs import Law, Variables
from ..inputs.discrete import rounded_parameters
from ..models.base import Model

__all__ = ["integer_laws"]


def integer_laws(model: Model, variables: Variables) -> tuple[Variables, str]:
    """``variables`` with integer laws on integer-typed columns, and a notice ("" when nothing changed)."""
    integer_cols: set[int] = set()
    start = 0
    for t in getattr(model, "inputs", []) or []:
        if str(t.dtype).startswith(("int", "uint", "bool")):
            integer_cols.update(range(start, start + t.units))
        start += t.units
    if not integer_cols:
        return variables, ""
    laws = list(variables.laws)
    changed = []
    for i, (law, cols) in enumerate(zip(variables.laws, variables.columns, strict=True)):
        if len(cols) != 1 or cols[0] not in integer_cols or law.integer:
            continue
        params = rounded_parameters(law.ppf, law.cdf, EPS)
        if params is not None and len(params["values"]) < 2:
            raise UserError(
                f"The input '{variables.names[i]}' feeds an integer-typed model input, which takes whole numbers, "
                f"and its law {law.describe()} rounds to the single value {int(params['values'][0])}: the model would "
                "see a constant. Give it a law over several whole numbers (the values the model was trained on, "
                "unscaled), or export the model with a float input."
            )
        if params is not None:
            laws[i] = Law("discrete", params)
            changed.append(variables.names[i])
    if not changed:
        return variables, ""
    shown = ", ".join(changed[:5]) + (f" and {len(changed) - 5} more" if len(changed) > 5 else "")
    notice = (
        f"{shown} {'feeds' if len(changed) == 1 else 'feed'} an integer-typed model input, which takes whole "
        "numbers: their laws are the discrete laws of their values rounded to the nearest whole number."
    )
    return dataclasses.replace(variables, laws=laws), notice
