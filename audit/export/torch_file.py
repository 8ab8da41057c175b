"""The simplified model as a Torch file: a module wrapping the source network.

:class:`Simplified` repeats each row over the M points of the rule, puts the
integrated inputs' nodes and the frozen values in their columns
(``torch.cat`` and ``index_select``: copies only), runs the source network on
the batch and sums each output over the rule with the weights in float64.

* A TorchScript source gives a TorchScript archive (``torch.jit.script`` of the
  wrapper around the loaded script module).
* A ``torch.export`` program (``.pt2``) gives a ``.pt2`` program
  (``torch.export.export`` of the wrapper, the batch axis dynamic).
* A network rebuilt from a state dict (or a trusted pickle) gives a
  TorchScript archive: the network is scripted, or traced on a probe batch
  when it cannot be scripted.

The source must take one input tensor and return one floating tensor, rows
first. The archive records the plan in its extra file ``netdim.json``
(``{"input_shape": [...], "simplified": {...}}``), which netdim reads back
for the input shape.

References
----------
.. [1] TorchScript and ``torch.export`` documentation, the PyTorch project,
   https://pytorch.org/docs/stable/.
"""

from __future__ import annotations

import json
import warnings
from pathlib import Path
from typing import Any

import numpy as np
import torch

from ..errors import UserError
from .plan import ExportPlan

__all__ = ["EXTRA_FILE", "Simplified", "simplified_module", "write_torch"]

#: The archive's extra file that holds the input shape and the plan.
EXTRA_FILE = "netdim.json"


class Simplified(torch.nn.Module):
    """The source network ``inner`` with inputs integrated out or frozen, as one module.

    Parameters
    ----------
    inner : torch.nn.Module
        The source network: one input tensor of shape (n, *shape), one output tensor (n, *out_shape).
    shape, out_shape : list of int
        Non-batch shapes of the source's input and output.
    kept : int
        Input elements the wrapper takes, as an (n, kept) tensor.
    perm : Tensor of int64
        Column of [kept, nodes, frozen] that fills each of the source's input elements.
    grid : Tensor (M, r)
        Nodes of the integrated inputs, in the input's dtype.
    frozen : Tensor (f,)
        Frozen values, in the input's dtype.
    weights : Tensor (M,) float64
        Weights of the rule (``None`` leaves outputs as the source computes them: nothing integrated).
    out_dtype : torch.dtype
        Type of the returned output.
    """

    def __init__(
        self,
        inner: torch.nn.Module,
        shape: list[int],
        out_shape: list[int],
        kept: int,
        perm: torch.Tensor,
        grid: torch.Tensor,
        frozen: torch.Tensor,
        weights: torch.Tensor | None,
        out_dtype: torch.dtype,
    ) -> None:
        super().__init__()
        self.inner = inner
        self.shape = list(shape)
        self.out_shape = list(out_shape)
        self.kept = int(kept)
        self.integrate = weights is not None
        self.out_dtype = out_dtype
        self.register_buffer("perm", perm)
        self.register_buffer("grid", grid)
        self.register_buffer("frozen", frozen)
        self.register_buffer("weights", weights if weights is not None else torch.ones(1, dtype=torch.float64))

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        n = x.shape[0]
        m = self.grid.shape[0]
        rows = x.reshape(n, 1, self.kept).expand(n, m, self.kept).reshape(n * m, self.kept)
        nodes = self.grid.unsqueeze(0).expand(n, m, self.grid.shape[1]).reshape(n * m, self.grid.shape[1])
        fixed = self.frozen.unsqueeze(0).expand(n * m, self.frozen.shape[0])
        full = torch.cat([rows, nodes, fixed], 1).index_select(1, self.perm)
        y = self.inner(full.reshape([n * m] + self.shape))  # noqa: RUF005 (TorchScript has no starred lists)
        if not self.integrate:
            return y
        mean = torch.matmul(self.weights, y.reshape(n, m, -1).to(torch.float64))
        return mean.reshape([n] + self.out_shape).to(self.out_dtype)  # noqa: RUF005


def _check(model: Any) -> None:
    if len(model.inputs) != 1:
        raise UserError(
            f"The Torch model '{model.source}' takes {len(model.inputs)} input tensors; netdim writes simplified "
            "Torch models of one input tensor. Export the model to ONNX and simplify that file instead."
        )
    if len(model.outputs) != 1 or len(getattr(model, "_keep", [0])) != 1:
        raise UserError(
            f"The Torch model '{model.source}' returns {len(model.outputs)} tensors; netdim writes simplified "
            "Torch models of one output tensor. Export the model to ONNX and simplify that file instead."
        )
    axes = getattr(model, "_output_axes", [])
    if axes and axes[0].moved:
        raise UserError(
            f"The output of '{model.source}' holds its rows along another axis than the first; netdim sums over "
            "rows first. Return the output with the batch axis first."
        )


def simplified_module(model: Any, plan: ExportPlan, output_dtype: str = "source") -> Simplified:
    """The :class:`Simplified` wrapper of an opened Torch model (not scripted)."""
    _check(model)
    t, out = model.inputs[0], model.outputs[0]
    dtype = getattr(torch, t.dtype)
    if not dtype.is_floating_point:
        raise UserError(f"The input of '{model.source}' holds {t.dtype} values; netdim changes real inputs only.")
    grid, weights = plan.grid()
    kept = plan.kept
    mine = [i.index for i in plan.integrated]
    fixed = [f.index for f in plan.frozen]
    order = [*kept, *mine, *fixed]
    perm = torch.tensor([order.index(j) for j in range(plan.d)], dtype=torch.int64)
    frozen = torch.tensor([f.value for f in plan.frozen], dtype=torch.float64).to(dtype)
    out_dtype = torch.float64 if output_dtype == "float64" else getattr(torch, out.dtype)
    return Simplified(
        model.module,
        list(t.shape),
        list(out.shape),
        len(kept),
        perm,
        torch.from_numpy(np.ascontiguousarray(grid)).to(dtype),
        frozen,
        torch.from_numpy(weights.astype(np.float64)) if plan.integrated else None,
        out_dtype,
    )


def _example(model: Any, plan: ExportPlan, n: int = 4) -> torch.Tensor:
    dtype = getattr(torch, model.inputs[0].dtype)
    rows = np.stack([law.ppf(np.linspace(0.2, 0.8, n)) for law in plan.kept_laws], axis=1)
    return torch.from_numpy(rows).to(dtype)


def _scripted(model: Any, wrapper: Simplified, plan: ExportPlan, notices: list[str]) -> torch.jit.ScriptModule:
    if not isinstance(wrapper.inner, torch.jit.ScriptModule):
        try:
            wrapper.inner = torch.jit.script(wrapper.inner)
        except Exception:  # not scriptable: trace it on rows of the source's shape
            full = torch.from_numpy(plan.full_rows(_example(model, plan).double().numpy()))
            example = full.to(getattr(torch, model.inputs[0].dtype)).reshape([len(full), *model.inputs[0].shape])
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                wrapper.inner = torch.jit.trace(wrapper.inner, example)
            notices.append(
                f"The network of '{model.source}' could not be scripted, so it was traced on a probe batch: "
                "branches that depend on the input values are fixed as that batch took them."
            )
    return torch.jit.script(wrapper)


def write_torch(model: Any, plan: ExportPlan, path: str | Path, output_dtype: str = "source") -> list[str]:
    """Write the simplified Torch model to ``path``; return the notices.

    Parameters
    ----------
    model : TorchModel
        The source, opened by :func:`audit.models.torch.open_torch`.
    plan : ExportPlan
    path : str or Path
        ``.pt2`` for a ``torch.export`` source, a TorchScript archive (``.pt``) otherwise.
    output_dtype : {"source", "float64"}

    Returns
    -------
    list of str
    """
    notices: list[str] = []
    wrapper = simplified_module(model, plan, output_dtype)
    wrapper.training = False  # the source is in evaluation mode already (a program refuses train())
    extra = json.dumps({"input_shape": [len(plan.kept)], "simplified": plan.metadata()}, default=float)
    if model.format == "torch-export":
        batch = torch.export.Dim("batch", min=1)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            program = torch.export.export(wrapper, (_example(model, plan),), dynamic_shapes=({0: batch},))
            torch.export.save(program, str(path), extra_files={EXTRA_FILE: extra})
        return notices
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # torch's notes on TorchScript's future are not the user's business
        script = _scripted(model, wrapper, plan, notices)
        torch.jit.save(script, str(path), _extra_files={EXTRA_FILE: extra})
    return notices
