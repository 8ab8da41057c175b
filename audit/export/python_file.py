"""The simplified model of a Python function, written out as a small module.

The module holds data only (the kept columns, the Gauss nodes and weights, the
frozen values, as Python literals that read back exactly) and imports the
source function by reference, ``from package.module import function``. Its
function ``simplified(x)`` takes (n, kept) rows and returns what the source
returns for n rows: the weighted sum over the rule, with the frozen inputs at
their values. Nothing else runs when it is imported. The reference must be an
importable ``package.module:function`` (what ``netdim audit`` takes).

References
----------
.. [1] Python's ``repr`` of a float reads back as the same float (the
   language reference, "Floating point arithmetic"); common practice, no source.
"""

from __future__ import annotations

import json
import keyword
from pathlib import Path
from typing import Any

from ..errors import UserError
from .plan import ExportPlan

__all__ = ["FUNCTION", "python_source", "source_reference", "write_python"]

#: Name of the function in the written module.
FUNCTION = "simplified"

_TEMPLATE = '''"""netdim simplified model: {summary}

Written by netdim {version} from {reference}; the plan (laws, nodes, values,
the source's hash) is in PLAN. Data and one import only.
"""

import json

import numpy as np

from {module} import {attr} as _source

#: Inputs of the source function; this function takes the KEPT columns, in order.
FEATURES = {features}
KEPT = {kept}
#: Columns of the integrated inputs, the tensor-product Gauss nodes (M rows) and weights.
NODE_COLUMNS = {node_columns}
NODES = np.array({nodes}, dtype=np.float64).reshape({m}, {r})
WEIGHTS = np.array({weights}, dtype=np.float64)
#: Frozen inputs: column -> value.
FIXED = {fixed}
#: Source rows per call of the source function.
CHUNK = 65536

PLAN = json.loads({plan!r})


def {function}(x):
    """The source's outputs averaged over the Gauss nodes, frozen inputs fixed, for (n, {k}) rows."""
    x = np.asarray(x, dtype=np.float64)
    if x.ndim != 2 or x.shape[1] != len(KEPT):
        raise ValueError(f"expected an (n, {{len(KEPT)}}) array, got shape {{x.shape}}.")
    m = len(WEIGHTS)
    per = max(1, CHUNK // m)
    parts = []
    for start in range(0, len(x), per):
        part = x[start : start + per]
        n = len(part)
        rows = np.empty((n * m, FEATURES))
        rows[:, KEPT] = np.repeat(part, m, axis=0)
        rows[:, NODE_COLUMNS] = np.tile(NODES, (n, 1))
        for column, value in FIXED.items():
            rows[:, column] = value
        y = np.asarray(_source(rows), dtype=np.float64)
        y = y.reshape(n, m, *y.shape[1:])
        parts.append(y[:, 0] if m == 1 else np.einsum("m,nm...->n...", WEIGHTS, y))
    if not parts:
        return np.asarray(_source(np.zeros((0, FEATURES))), dtype=np.float64)
    return np.concatenate(parts)
'''


def _identifiers(text: str) -> bool:
    return bool(text) and all(p.isidentifier() and not keyword.iskeyword(p) for p in text.split("."))


def source_reference(model: Any) -> tuple[str, str]:
    """(module, function) of a Python model opened from ``package.module:function``.

    Raises
    ------
    UserError
        When the model's source is not such a reference (a lambda, a nested function).
    """
    ref = str(getattr(model, "source", ""))
    module, _, attr = ref.partition(":")
    if not (_identifiers(module) and attr.isidentifier() and not keyword.iskeyword(attr)):
        raise UserError(
            f"The Python model '{ref}' is not a module-level function netdim can import by reference, so a "
            "simplified module cannot name it. Define it as a function at the top level of a module and give "
            "it as 'package.module:function'."
        )
    return module, attr


def _floats(values: Any) -> str:
    """A list literal of floats that reads back exactly."""
    return "[" + ", ".join(repr(float(v)) for v in values) + "]"


def python_source(model: Any, plan: ExportPlan) -> str:
    """The text of the simplified module (see the module docstring)."""
    module, attr = source_reference(model)
    nodes, weights = plan.grid()
    meta = plan.metadata()
    summary = "; ".join(
        [f"{i.feature} integrated out ({i.count} Gauss nodes)" for i in plan.integrated]
        + [f"{f.feature} frozen at {f.value!r}" for f in plan.frozen]
    )
    text = _TEMPLATE.format(
        summary=summary.replace('"', "'"),
        version=meta["version"],
        reference=f"{module}:{attr}",
        module=module,
        attr=attr,
        features=plan.d,
        kept=repr(plan.kept),
        node_columns=repr([i.index for i in plan.integrated]),
        nodes=_floats(nodes.reshape(-1)),
        m=nodes.shape[0],
        r=nodes.shape[1],
        weights=_floats(weights),
        fixed="{" + ", ".join(f"{f.index}: {float(f.value)!r}" for f in plan.frozen) + "}",
        plan=json.dumps(meta, default=float),
        function=FUNCTION,
        k=len(plan.kept),
    )
    compile(text, "<simplified>", "exec")  # a syntax error here is netdim's bug, never the user's
    return text


def write_python(model: Any, plan: ExportPlan, path: str | Path, output_dtype: str = "source") -> list[str]:
    """Write the simplified module to ``path`` (``.py``); return the notices (none)."""
    Path(path).write_text(python_source(model, plan), encoding="utf-8")
    return []
