"""Torch models: TorchScript archives, ``torch.export`` programs and state dicts.

:func:`open_torch` first checks the declared sizes of a zip archive's members
(:mod:`.archive`), then recognises the file by its content, never by
unpickling anything first (:mod:`.load`):

* a TorchScript archive (``torch.jit.save``) is loaded with ``torch.jit.load``
  (:mod:`.script`);
* a ``torch.export`` program (``.pt2``, ``torch.export.save``, or a ``.pt``
  holding one) with ``torch.export.load`` after checking that no member would
  run code (:mod:`.archive`, :mod:`.exported`);
* a ``torch.save`` file is read with ``torch.load(weights_only=True)``; a dict
  of tensors is a state dict, rebuilt with a user-named class
  ``package.module:Class`` and its keyword arguments (:mod:`.module`);
* a ``torch.save`` file holding other pickled objects (a whole ``nn.Module``)
  is refused unless the user trusts it, because unpickling runs code from the
  file.

Outputs and layers are learnt from a probe evaluated in two batches, which
also finds the axis that holds the rows of every tensor. Everything runs under
``torch.inference_mode()`` in the model's own precision (:mod:`.common`).
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

import torch

from ..tensors import InputShape
from .archive import check_sizes
from .common import TorchModel
from .exported import ExportedModel
from .load import check_file, load_weights, rebuild, sniff, state_dict
from .module import ACTIVATION_MODULES, ModuleModel
from .script import SHAPE_FILE, ScriptModel

__all__ = [
    "ACTIVATION_MODULES",
    "SHAPE_FILE",
    "ExportedModel",
    "ModuleModel",
    "ScriptModel",
    "TorchModel",
    "open_torch",
]


def open_torch(
    path: str | os.PathLike[str],
    *,
    torch_class: str | None = None,
    torch_arguments: dict[str, Any] | None = None,
    trust: bool = False,
    input_shape: InputShape | None = None,
) -> TorchModel:
    """Open a Torch model file.

    Parameters
    ----------
    path : str or Path
        A TorchScript archive, a ``torch.export`` program (``.pt2``) or a
        ``torch.save`` file holding a state dict.
    torch_class : str, optional
        ``package.module:Class`` that builds the network of a state dict.
    torch_arguments : dict, optional
        Keyword arguments for ``torch_class``.
    trust : bool
        Load a file holding a whole pickled ``nn.Module``, or a ``torch.export``
        program with members that could run code. Unpickling runs code from
        the file, so this is off by default.
    input_shape : tuple of int or dict of str to tuple of int, optional
        Non-batch shape of the input, or ``{argument name: shape}`` when the
        forward takes several tensors. Torch files do not store it, except
        ``.pt2`` programs (and TorchScript archives that record it in
        :data:`SHAPE_FILE`); for one input it is inferred when the network
        starts with a ``Linear`` layer.

    Returns
    -------
    TorchModel
    """
    path = Path(path)
    check_file(path)
    check_sizes(path)
    torch.set_num_threads(os.cpu_count() or 1)
    kind = sniff(path)
    if kind == "export":
        return ExportedModel(path, input_shape=input_shape, trust=trust)
    if kind == "torchscript":
        return ScriptModel(path, input_shape=input_shape)
    obj = load_weights(path, trust)
    if isinstance(obj, torch.nn.Module):
        return ModuleModel(obj, path, "torch-module", input_shape=input_shape)
    module = rebuild(state_dict(obj, path), torch_class, torch_arguments, path)
    return ModuleModel(module, path, "state-dict", input_shape=input_shape)
