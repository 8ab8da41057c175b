"""Gradients of a Torch model's outputs and hidden units by autograd.

One forward pass with autograd on, then one reverse pass per unit
differentiated: the rows of a batch are independent (the backend refuses models
whose rows depend on the batch), so the gradient of the *sum over rows* of unit
u with respect to the inputs holds, row by row, the gradient of u at each row.
Outputs and captured tensors are read rows first exactly as
:meth:`TorchModel.evaluate` reads them (the probe's batch axis), and the
batches keep within the model's batch bounds.

A request the backend cannot differentiate -- integer input tensors, a hidden
tensor that its format hands over detached -- raises
:class:`~audit.models.gradients.AutogradUnavailableError`, and callers fall back to
central differences.

References
----------
.. [1] Reverse-mode differentiation, one reverse sweep per dependent variable:
   "Evaluating Derivatives", SIAM, 2008.

Examples
--------
>>> import numpy as np, torch
>>> from audit.models.torch.module import ModuleModel
>>> from pathlib import Path
>>> net = torch.nn.Sequential(torch.nn.Linear(3, 1, bias=False))
>>> with torch.no_grad():
...     net[0].weight.copy_(torch.tensor([[1.0, -2.0, 0.5]]))
>>> m = ModuleModel(net, Path("net"), "torch-module")
>>> np.round(m.gradients(np.zeros((2, 3), np.float32)).jacobian[0, 0], 6).tolist()
[1.0, -2.0, 0.5]
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import torch

from ..base import check_rows, feature_count
from ..batch import BatchAxis
from ..gradients import AutogradUnavailableError, Gradients

#: A :class:`~audit.models.torch.common.TorchModel` (not imported: common imports this module).
TorchModel = Any

__all__ = ["autograd_gradients", "torch_rows"]


def torch_rows(axis: BatchAxis, value: torch.Tensor, n: int) -> torch.Tensor:
    """``value`` as (n, units), rows first, as :meth:`BatchAxis.rows` reads a numpy array."""
    a, ax = value, axis.axis
    if axis.factor > 1:
        split = (axis.factor, n) if axis.minor else (n, axis.factor)
        a = a.reshape(*a.shape[:ax], *split, *a.shape[ax + 1 :])
        ax += 1 if axis.minor else 0
    if ax:
        a = a.movedim(ax, 0)
    return a.reshape(n, -1)


def autograd_gradients(model: TorchModel, x: np.ndarray, capture: Sequence[str] = ()) -> Gradients:
    """Values and gradients of every kept output (and captured layer) of ``model`` at rows ``x``.

    Parameters
    ----------
    model : TorchModel
    x : ndarray, shape (n, d)
    capture : sequence of str
        Hidden layers (from ``model.layers()``) to differentiate as well.

    Returns
    -------
    Gradients
        In the model's input coordinates, float64.

    Raises
    ------
    AutogradUnavailableError
        For integer input tensors, or a hidden tensor that carries no gradient.
    """
    x = check_rows(x, feature_count(model))
    bad = [t.name for t in model.inputs if not getattr(torch, t.dtype).is_floating_point]
    if bad:
        raise AutogradUnavailableError(f"integer input tensors ({', '.join(bad)}) have no gradient")
    capture = tuple(dict.fromkeys(capture))
    if capture:
        model._check_capture(capture)
    keys = tuple(model._found[name][0] for name in capture)
    axes = [*model._output_axes, *(model._found[name][1] for name in capture)]
    n = len(x)
    low, high = model._min_batch, model._max_batch
    size = n if n >= low and (high is None or n <= high) else (high or max(n, low))
    parts = [_chunk(model, x[s : s + size], keys, axes) for s in range(0, n, size)]
    k = len(model.outputs) and sum(t.units for t in model.outputs)
    values = [np.concatenate([p[0][i] for p in parts]) for i in range(len(axes))]
    jacs = [np.concatenate([p[1][i] for p in parts]) for i in range(len(axes))]
    kept = len(model._output_axes)
    out_values = np.concatenate(values[:kept], axis=1) if kept else np.empty((n, 0))
    out_jac = np.concatenate(jacs[:kept], axis=1) if kept else np.empty((n, 0, x.shape[1]))
    if out_values.shape[1] != k:
        raise AutogradUnavailableError("the outputs came out with another width than on the probe")
    hidden = {name: (values[kept + i], jacs[kept + i]) for i, name in enumerate(capture)}
    return Gradients(out_values, out_jac, hidden)


def _chunk(
    model: TorchModel, chunk: np.ndarray, keys: tuple[str, ...], axes: list[BatchAxis]
) -> tuple[list[np.ndarray], list[np.ndarray]]:
    real = len(chunk)
    if real < model._min_batch:
        chunk = np.concatenate([chunk, np.repeat(chunk[-1:], model._min_batch - real, axis=0)])
    m = len(chunk)
    xs = [t.detach().clone().requires_grad_(True) for t in model._tensors(chunk)]
    try:
        with torch.enable_grad():
            outs, hidden = model._forward(xs, keys)
    except AutogradUnavailableError:
        raise
    except Exception as exc:
        raise model._failure(exc, m) from exc
    tensors = [outs[i] for i in model._keep] + list(hidden)
    values, jacs = [], []
    for axis, tensor in zip(axes, tensors, strict=True):
        rows = torch_rows(axis, tensor, m)
        if not rows.requires_grad:
            raise AutogradUnavailableError("a captured tensor carries no gradient in this format")
        jac = _jacobian(rows, xs)
        values.append(rows.detach().to(torch.float64).numpy()[:real])
        jacs.append(jac[:real])
    return values, jacs


def _jacobian(rows: torch.Tensor, xs: list[torch.Tensor]) -> np.ndarray:
    """``∂ rows[i, u] / ∂ x_i`` as (m, units, d): all units in one batched reverse pass where Torch can,
    else one reverse pass per unit."""
    m, units = rows.shape
    try:
        basis = torch.eye(units, dtype=rows.dtype).unsqueeze(1).expand(units, m, units)
        grads = torch.autograd.grad(rows, xs, basis, retain_graph=True, allow_unused=True, is_grads_batched=True)
        parts = [
            torch.zeros(units, m, t.numel() // m, dtype=torch.float64) if g is None
            else g.detach().to(torch.float64).reshape(units, m, -1)
            for g, t in zip(grads, xs, strict=True)
        ]  # fmt: skip
        return torch.cat(parts, dim=2).permute(1, 0, 2).numpy()
    except RuntimeError:
        pass  # an operation without a batching rule
    jac = np.zeros((m, units, sum(t.numel() // m for t in xs)))
    for u in range(units):
        grads = torch.autograd.grad(rows[:, u].sum(), xs, retain_graph=True, allow_unused=True)
        flat = [
            torch.zeros(m, t.numel() // m) if g is None else g.detach().to(torch.float64).reshape(m, -1)
            for g, t in zip(grads, xs, strict=True)
        ]
        jac[:, u, :] = torch.cat(flat, dim=1).numpy()
    return jac
