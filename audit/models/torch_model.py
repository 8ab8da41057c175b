"""Torch models: TorchScript archives, ``torch.export`` programs and state dicts.

:func:`open_torch` recognises the file by its content, never by unpickling
anything first:

* a TorchScript archive (``torch.jit.save``) is loaded with ``torch.jit.load``;
* a ``torch.export`` program (``.pt2``, ``torch.export.save``) with
  ``torch.export.load``;
* a ``torch.save`` file is read with ``torch.load(weights_only=True)``; a dict
  of tensors is a state dict, rebuilt with a user-named class
  ``package.module:Class`` and its keyword arguments;
* a ``torch.save`` file holding other pickled objects (a whole ``nn.Module``)
  is refused unless the user trusts it, because unpickling runs code from the
  file.

Hidden layers:

* eager modules (state dict, trusted pickle): forward hooks on submodules;
  a layer is named by the module's qualified name (``net.1``);
* TorchScript (which has no hooks): the forward graph is inlined and the value
  leaving each submodule is added to the graph's outputs; same names;
* ``torch.export`` programs: graph nodes (``relu``, ``linear_1``...) are added
  to the outputs of a copy of the program's graph module.

Layer shapes are learnt from one probe forward pass on a few rows. Everything
runs under ``torch.inference_mode()`` in the model's own precision.
"""

from __future__ import annotations

import contextlib
import json
import os
import pickle
import pickletools
import re
import warnings
import zipfile
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import torch
from torch.utils import _pytree as pytree

from ..errors import UserError, suggest
from .base import Evaluation, LayerInfo, TensorInfo, check_rows, index_names, integer_output_error
from .python_model import import_reference

__all__ = [
    "ACTIVATION_MODULES",
    "ACTIVATION_TARGETS",
    "ExportedModel",
    "ModuleModel",
    "ScriptModel",
    "TorchModel",
    "open_torch",
]

#: ``torch.nn`` module class names whose output counts as an activation.
ACTIVATION_MODULES = frozenset(
    {
        "ReLU", "ReLU6", "LeakyReLU", "PReLU", "RReLU", "ELU", "SELU", "CELU", "GELU", "SiLU",
        "Mish", "Tanh", "Sigmoid", "Hardtanh", "Hardsigmoid", "Hardswish", "Softplus",
        "Softsign", "Softmax", "LogSoftmax", "LogSigmoid", "Tanhshrink", "Softshrink",
        "Hardshrink", "Threshold", "GLU",
    }
)  # fmt: skip

#: ATen operator names (in ``torch.export`` graphs) whose output counts as an activation.
ACTIVATION_TARGETS = frozenset(
    {
        "relu", "relu6", "leaky_relu", "prelu", "_prelu_kernel", "rrelu", "elu", "selu",
        "celu", "gelu", "silu", "mish", "tanh", "sigmoid", "hardtanh", "hardsigmoid",
        "hardswish", "softplus", "softshrink", "hardshrink", "log_sigmoid", "softmax",
        "_softmax", "log_softmax", "_log_softmax", "erf", "glu", "threshold",
    }
)  # fmt: skip

_PROBE_ROWS = 3
_TRUST_FLAG = "--trust-pickle"
# First bytes of the legacy (pre-zip) torch.save format: a pickled magic number.
_LEGACY_MAGIC = b"\x80\x02\x8a\x0al\xfc\x9cF\xf9 j\xa8P\x19"


# -- opening -----------------------------------------------------------------------------


def _check_file(path: Path) -> None:
    if not path.exists():
        raise UserError(
            f"The Torch model file '{path}' does not exist. Check the path (and the current "
            "folder) and try again."
        )
    if path.is_dir():
        raise UserError(
            f"'{path}' is a folder, not a Torch model file. Give the path of the .pt / .pt2 "
            "file itself."
        )
    if path.stat().st_size == 0:
        raise UserError(
            f"The Torch model file '{path}' is empty (0 bytes). It was probably not written "
            "completely: save the model again."
        )


def _sniff(path: Path) -> str:
    """Kind of Torch file: ``torchscript``, ``export``, ``zip`` (torch.save), ``legacy``
    (pre-zip torch.save) or ``other``; read from the file's layout, nothing is unpickled."""
    if zipfile.is_zipfile(path):
        try:
            with zipfile.ZipFile(path) as archive:
                names = archive.namelist()
        except (zipfile.BadZipFile, OSError):
            return "other"
        tails = {name.split("/", 1)[-1] for name in names}
        if "archive_format" in tails or any(t.startswith("models/") for t in tails):
            return "export"
        if "constants.pkl" in tails or any(t.startswith("code/") for t in tails):
            return "torchscript"
        if "data.pkl" in tails:
            return "zip"
        return "other"
    with path.open("rb") as handle:
        head = handle.read(len(_LEGACY_MAGIC))
    return "legacy" if head == _LEGACY_MAGIC else "other"


def _pickled_globals(path: Path, limit: int = 4) -> list[str]:
    """Python names the pickle inside a torch.save zip refers to (read, never executed)."""
    found: list[str] = []
    try:
        with zipfile.ZipFile(path) as archive:
            name = next(n for n in archive.namelist() if n.endswith("data.pkl"))
            data = archive.read(name)
        strings: list[str] = []
        for opcode, arg, _ in pickletools.genops(data):
            if opcode.name == "GLOBAL":
                found.append(str(arg).replace(" ", "."))
            elif opcode.name == "STACK_GLOBAL" and len(strings) >= 2:
                found.append(f"{strings[-2]}.{strings[-1]}")
            elif isinstance(arg, str):
                strings.append(arg)
    except Exception:  # best effort, only used to word a message
        return []
    allowed = ("torch._utils.", "collections.", "torch.FloatStorage", "__builtin__.", "builtins.")
    names = [n for n in dict.fromkeys(found) if not n.startswith(allowed)]
    return names[:limit]


def _refuse_pickle(path: Path) -> UserError:
    names = _pickled_globals(path)
    seen = f" (it refers to {', '.join(names)})" if names else ""
    return UserError(
        f"'{path}' holds pickled Python objects, such as a whole torch.nn.Module saved with "
        f"torch.save(model){seen}. netdim does not load it, because unpickling can run "
        "arbitrary code stored in the file. Safer: save the model as TorchScript "
        "(torch.jit.save), as a torch.export program (.pt2), or save model.state_dict() and give "
        f"--torch-class package.module:Class. If you trust the file and its source, pass "
        f"{_TRUST_FLAG} to load it anyway."
    )


def _torch_load(path: Path, trust: bool) -> Any:
    """``torch.load`` with weights only; whole pickles only when trusted."""
    kind = _sniff(path)
    try:
        return torch.load(path, map_location="cpu", weights_only=True)
    except pickle.UnpicklingError as exc:
        if kind not in ("zip", "legacy"):
            raise _not_torch(path, exc) from exc
        if not trust:
            raise _refuse_pickle(path) from exc
    except Exception as exc:
        raise _not_torch(path, exc) from exc
    try:
        return torch.load(path, map_location="cpu", weights_only=False)
    except Exception as exc:
        raise UserError(
            f"Loading the trusted pickle '{path}' failed ({type(exc).__name__}: {exc}). The code "
            "it refers to must be importable: run netdim from the project folder or install "
            "its package."
        ) from exc


def _not_torch(path: Path, exc: Exception) -> UserError:
    if isinstance(exc, pickle.UnpicklingError):
        detail = "its content is not readable pickle data"
    else:
        text = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        detail = f"{type(exc).__name__}: {text.split('. ')[0][:160]}"
    return UserError(
        f"'{path}' is not a Torch model netdim can read: it is neither a TorchScript archive, a "
        f"torch.export program (.pt2) nor a torch.save file ({detail}). The file may be "
        "truncated or damaged: save or copy the model again."
    )


def _state_dict(obj: Any, path: Path) -> dict[str, torch.Tensor]:
    def is_tensors(value: Any) -> bool:
        return (
            isinstance(value, dict)
            and bool(value)
            and all(isinstance(v, torch.Tensor) for v in value.values())
        )

    if is_tensors(obj):
        return dict(obj)
    if isinstance(obj, dict):
        nested = [v for v in obj.values() if is_tensors(v)]
        if len(nested) == 1:
            return dict(nested[0])
    raise UserError(
        f"'{path}' holds a {type(obj).__name__}, not a model: netdim reads TorchScript, "
        "torch.export programs (.pt2) and state dicts (a dict of tensors from "
        "model.state_dict()). Save the model in one of these forms."
    )


def _short(keys: Sequence[str], limit: int = 4) -> str:
    shown = ", ".join(f"'{k}'" for k in keys[:limit])
    return shown + (f" and {len(keys) - limit} more" if len(keys) > limit else "")


def _rebuild(
    state: dict[str, torch.Tensor],
    torch_class: str | None,
    arguments: dict[str, Any] | None,
    path: Path,
) -> torch.nn.Module:
    if torch_class is None:
        raise UserError(
            f"'{path}' is a state dict ({len(state)} tensors such as {_short(list(state), 2)}): "
            "it holds weights but not the network. Give the class that builds the network with "
            "--torch-class package.module:Class (constructor arguments with --torch-args JSON or "
            "in the [model] table of the input spec), or save the model as TorchScript or a .pt2 "
            "program."
        )
    cls = import_reference(torch_class, what="Torch class")
    if not (isinstance(cls, type) and issubclass(cls, torch.nn.Module)):
        raise UserError(
            f"The Torch class '{torch_class}' is a {type(cls).__name__}, not a subclass of "
            "torch.nn.Module. Name the network class whose state dict was saved."
        )
    arguments = dict(arguments or {})
    try:
        module = cls(**arguments)
    except Exception as exc:
        raise UserError(
            f"Building '{torch_class}' with arguments {arguments} failed ({type(exc).__name__}: "
            f"{exc}). Give the constructor arguments the weights were trained with, with "
            "--torch-args JSON or in the [model] table of the input spec."
        ) from exc
    expected = module.state_dict()
    missing = [k for k in expected if k not in state]
    unexpected = [k for k in state if k not in expected]
    resized = [
        f"{k} {tuple(state[k].shape)} vs {tuple(expected[k].shape)}"
        for k in state
        if k in expected and state[k].shape != expected[k].shape
    ]
    if missing or unexpected or resized:
        parts = []
        if missing:
            parts.append(f"missing keys {_short(missing)}")
        if unexpected:
            parts.append(f"unexpected keys {_short(unexpected)}")
        if resized:
            parts.append(f"shape mismatches (file vs class) {_short(resized)}")
        raise UserError(
            f"The state dict '{path}' does not fit '{torch_class}({_kwargs(arguments)})': "
            + "; ".join(parts)
            + ". Check that this is the class (and the constructor arguments) the weights were "
            "saved from."
        )
    try:
        module.load_state_dict(state, strict=True)
    except Exception as exc:
        raise UserError(
            f"Loading the state dict '{path}' into '{torch_class}' failed: {exc}"
        ) from exc
    return module


def _kwargs(arguments: dict[str, Any]) -> str:
    return ", ".join(f"{k}={v!r}" for k, v in arguments.items())


def open_torch(
    path: str | os.PathLike[str],
    *,
    torch_class: str | None = None,
    torch_arguments: dict[str, Any] | None = None,
    trust: bool = False,
    input_shape: Sequence[int] | None = None,
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
        Load a file holding a whole pickled ``nn.Module``. Unpickling runs
        code from the file, so this is off by default.
    input_shape : tuple of int, optional
        Non-batch shape of the input. Torch files do not store it, except
        ``.pt2`` programs; it is inferred when the network starts with a
        ``Linear`` layer.

    Returns
    -------
    TorchModel
    """
    path = Path(path)
    _check_file(path)
    torch.set_num_threads(os.cpu_count() or 1)
    shape = None if input_shape is None else tuple(int(s) for s in input_shape)
    kind = _sniff(path)
    if kind == "export":
        return ExportedModel(path, input_shape=shape)
    if kind == "torchscript":
        return ScriptModel(path, input_shape=shape)
    obj = _torch_load(path, trust)
    if isinstance(obj, torch.nn.Module):
        return ModuleModel(obj, path, "torch-module", input_shape=shape)
    module = _rebuild(_state_dict(obj, path), torch_class, torch_arguments, path)
    return ModuleModel(module, path, "state-dict", input_shape=shape)


# -- common machinery ---------------------------------------------------------------------


def _float_dtype(tensors: Any) -> torch.dtype:
    for tensor in tensors:
        if tensor.is_floating_point():
            return tensor.dtype
    return torch.float32


class TorchModel:
    """Common part of the Torch backends: signature, batching, casting, capture checks.

    Subclasses set ``format``, ``source``, ``path``, the input shape and dtype, and
    implement :meth:`_forward` and :meth:`_discover_layers`.

    Attributes
    ----------
    notices : list of str
        Remarks for the user.
    batch_size : int or None
        The fixed batch size of the model, or None when any batch size works.
    """

    format = "torch"

    def __init__(
        self,
        path: Path,
        input_shape: tuple[int, ...],
        dtype: torch.dtype,
        *,
        batch: tuple[int, int | None] = (1, None),
    ) -> None:
        self.path = path
        self.source = str(path)
        self.notices: list[str] = []
        self._dtype = dtype
        # numpy has no bfloat16: such models are fed float32 and cast by torch
        self._np_dtype = (
            None if dtype == torch.bfloat16 else torch.empty((), dtype=dtype).numpy().dtype
        )
        self._min_batch, self._max_batch = batch
        self.batch_size = batch[1] if batch[0] == batch[1] else None
        self._layers: list[LayerInfo] | None = None
        self.input = TensorInfo("x", tuple(input_shape), str(dtype).removeprefix("torch."))
        outs = self._probe_outputs()
        many = len(outs) > 1
        for i, o in enumerate(outs):
            if not (o.dtype.is_floating_point or o.dtype == torch.bool):
                raise UserError(integer_output_error(str(path), f"y{i}" if many else "y", str(o.dtype)))
        self.outputs = [
            TensorInfo(
                f"y{i}" if many else "y", tuple(o.shape[1:]), str(o.dtype).removeprefix("torch.")
            )
            for i, o in enumerate(outs)
        ]

    # subclasses -------------------------------------------------------------------------

    def _forward(
        self, x: torch.Tensor, capture: tuple[str, ...]
    ) -> tuple[list[torch.Tensor], list[torch.Tensor]]:
        """Run one batch; return output leaves and captured tensors (in ``capture`` order)."""
        raise NotImplementedError

    def _discover_layers(self) -> list[LayerInfo]:
        raise NotImplementedError

    # signature --------------------------------------------------------------------------

    def feature_names(self) -> list[str]:
        return index_names(self.input.name, self.input.shape)

    def output_names(self) -> list[str]:
        names: list[str] = []
        for info in self.outputs:
            names.extend(index_names(info.name, info.shape))
        return names

    def layers(self) -> list[LayerInfo]:
        """Probe-able hidden layers, in execution order."""
        if self._layers is None:
            self._layers = self._discover_layers()
        return list(self._layers)

    # evaluation -------------------------------------------------------------------------

    def _probe_rows(self) -> int:
        rows = max(_PROBE_ROWS, self._min_batch)
        return rows if self._max_batch is None else min(rows, self._max_batch)

    def _tensor(self, x: np.ndarray) -> torch.Tensor:
        n = len(x)
        if self._np_dtype is None:
            t = torch.from_numpy(np.ascontiguousarray(x, dtype=np.float32)).to(self._dtype)
        else:
            t = torch.from_numpy(np.ascontiguousarray(x, dtype=self._np_dtype))
        return t.reshape((n, *self.input.shape))

    def _run(
        self, x: np.ndarray, capture: tuple[str, ...]
    ) -> tuple[list[torch.Tensor], list[torch.Tensor]]:
        """Run rows ``x`` (n, d), in chunks when the model's batch size is bounded."""
        n = len(x)
        xt = self._tensor(x)
        low, high = self._min_batch, self._max_batch
        try:
            with torch.inference_mode():
                if n >= low and (high is None or n <= high):
                    return self._forward(xt, capture)
                size = high or max(n, low)
                parts = []
                for start in range(0, n, size):
                    chunk = xt[start : start + size]
                    if len(chunk) < low:
                        pad = chunk[-1:].expand(low - len(chunk), *chunk.shape[1:])
                        chunk = torch.cat([chunk, pad])
                    parts.append(self._forward(chunk, capture))
                outs = [torch.cat([p[0][i] for p in parts])[:n] for i in range(len(parts[0][0]))]
                hidden = [torch.cat([p[1][i] for p in parts])[:n] for i in range(len(capture))]
                return outs, hidden
        except UserError:
            raise
        except Exception as exc:
            first = str(exc).strip().splitlines()[0] if str(exc).strip() else ""
            raise UserError(
                f"The Torch model '{self.path}' failed on a batch of {n} rows of shape "
                f"{self.input.shape} ({type(exc).__name__}: {first[:300]}). If the input shape "
                "is wrong, give the shape of one input row, e.g. --input-shape 1,8,8."
            ) from exc

    def _probe_outputs(self) -> list[torch.Tensor]:
        outs, _ = self._run(np.zeros((self._probe_rows(), self.input.units)), ())
        if not outs:
            raise UserError(
                f"The Torch model '{self.path}' returned no tensors. netdim audits models whose "
                "forward returns a tensor (or a tuple / dict of tensors)."
            )
        for out in outs:
            if out.ndim == 0 or out.shape[0] != self._probe_rows():
                raise UserError(
                    f"The Torch model '{self.path}' returned a tensor of shape "
                    f"{tuple(out.shape)} for {self._probe_rows()} rows; netdim needs outputs "
                    "with the batch axis first. Check the input shape (--input-shape)."
                )
        return outs

    def evaluate(self, x: np.ndarray, capture: Sequence[str] = ()) -> Evaluation:
        """Evaluate rows ``x``.

        Parameters
        ----------
        x : ndarray, shape (n, d)
            Input rows, float64; cast to the model's own precision.
        capture : sequence of str
            Names of hidden layers (from :meth:`layers`) to return as well.

        Returns
        -------
        Evaluation
            Outputs (n, k) and the captured layers (n, units), float64.
        """
        x = check_rows(x, self.input.units)
        n = len(x)
        capture = tuple(dict.fromkeys(capture))
        if capture:
            self._check_capture(capture)
        outs, hidden = self._run(x, capture)
        parts = [_as_rows(o, n) for o in outs]
        outputs = parts[0] if len(parts) == 1 else np.concatenate(parts, axis=1)
        return Evaluation(
            outputs=outputs,
            hidden={name: _as_rows(t, n) for name, t in zip(capture, hidden, strict=True)},
        )

    def _check_capture(self, capture: Sequence[str]) -> None:
        known = {layer.name for layer in self.layers()}
        for name in capture:
            if name not in known:
                raise UserError(
                    f"The Torch model '{self.path.name}' has no probe-able layer '{name}'."
                    + suggest(name, known)
                    + f" Run 'netdim layers {self.source}' to list the layer names."
                )


def _as_rows(t: torch.Tensor, n: int) -> np.ndarray:
    return t.detach().reshape(n, -1).to(torch.float64).numpy()


def _leaves(result: Any) -> list[torch.Tensor]:
    return [leaf for leaf in pytree.tree_leaves(result) if isinstance(leaf, torch.Tensor)]


def _shape_error(path: Path, what: str) -> UserError:
    return UserError(
        f"The input shape of the Torch model '{path}' is unknown: {what}. Give the shape of one "
        "input row (without the batch axis), e.g. --input-shape 8 or --input-shape 1,8,8."
    )


# -- eager modules (state dict, trusted pickle): forward hooks ------------------------------


class ModuleModel(TorchModel):
    """An eager ``torch.nn.Module`` (rebuilt from a state dict, or a trusted pickle).

    Layers are submodules, named by qualified name; their outputs are read
    with forward hooks registered only while capturing.
    """

    def __init__(
        self,
        module: torch.nn.Module,
        path: Path,
        format: str,
        *,
        input_shape: tuple[int, ...] | None = None,
    ) -> None:
        self.module = module.eval()
        self.format = format
        if input_shape is None:
            input_shape = self._infer_shape(path)
        dtype = _float_dtype(list(module.parameters()) + list(module.buffers()))
        super().__init__(path, input_shape, dtype)
        self._submodules = dict(module.named_modules())

    def _infer_shape(self, path: Path) -> tuple[int, ...]:
        for _, sub in self.module.named_modules():
            if next(sub.parameters(recurse=False), None) is None:
                continue
            if isinstance(sub, torch.nn.Linear):
                return (sub.in_features,)
            raise _shape_error(path, f"its first layer with weights is a {type(sub).__name__}")
        raise _shape_error(path, "it has no layer with weights to read the shape from")

    def _forward(
        self, x: torch.Tensor, capture: tuple[str, ...]
    ) -> tuple[list[torch.Tensor], list[torch.Tensor]]:
        if not capture:
            return _leaves(self.module(x)), []
        store: dict[str, torch.Tensor] = {}
        handles = []
        for name in capture:

            def hook(_mod: Any, _inp: Any, out: Any, name: str = name) -> None:
                # Copy now: a later in-place operation (ReLU(inplace=True)) must not alter it.
                store[name] = out.detach().reshape(out.shape[0], -1).to(torch.float64, copy=True)

            handles.append(self._submodules[name].register_forward_hook(hook))
        try:
            outs = _leaves(self.module(x))
        finally:
            for handle in handles:
                handle.remove()
        return outs, [store[name] for name in capture]

    def _discover_layers(self) -> list[LayerInfo]:
        rows = self._probe_rows()
        seen: dict[str, list[torch.Tensor]] = {}
        order: list[str] = []
        handles = []
        for name, sub in self.module.named_modules():
            if not name:
                continue

            def hook(_mod: Any, _inp: Any, out: Any, name: str = name) -> None:
                if name not in seen:
                    order.append(name)
                seen.setdefault(name, []).append(out)

            handles.append(sub.register_forward_hook(hook))
        try:
            with torch.inference_mode():
                result = _leaves(self.module(self._tensor(np.zeros((rows, self.input.units)))))
        finally:
            for handle in handles:
                handle.remove()
        repeated = [name for name in order if len(seen[name]) > 1]
        kept = [
            (name, seen[name][0])
            for name in order
            if len(seen[name]) == 1
            and isinstance(seen[name][0], torch.Tensor)
            and seen[name][0].is_floating_point()
            and seen[name][0].ndim >= 1
            and seen[name][0].shape[0] == rows
        ]
        # A container returns the very tensor of one of its submodules: keep the submodule.
        # Siblings may share a tensor too (an in-place ReLU after a Linear); hooks copy at
        # call time, so each keeps its own values. Of a tensor the model returns, the last
        # module to hand it on is the output itself, not a hidden layer.
        kept = [
            (name, out)
            for name, out in kept
            if not any(o is out and n.startswith(name + ".") for n, o in kept)
        ]
        returned = {id(out) for out in result}
        last = {id(out): name for name, out in kept}
        layers = []
        for name, out in kept:
            if id(out) in returned and last[id(out)] == name:
                continue
            op = type(self._submodules[name]).__name__
            layers.append(LayerInfo(name, op, tuple(out.shape[1:]), op in ACTIVATION_MODULES))
        if repeated:
            self.notices.append(
                "Modules called more than once per forward pass are not offered as layers: "
                + ", ".join(repeated)
                + "."
            )
        return layers


# -- TorchScript: graph surgery -------------------------------------------------------------

_SCOPE = re.compile(r"([^.()]+)\(([^()]*)\)")


def _module_path(node: torch._C.Node) -> tuple[tuple[str, str], ...]:
    """((instance, type), ...) of the submodule call that produced ``node``."""
    return tuple(
        (inst, kind)
        for inst, kind in _SCOPE.findall(node.getModuleHierarchy())
        if inst not in ("UNKNOWN_INSTANCE", "SELF")  # a function, or a method of the same module
    )


def _top_node(node: torch._C.Node, block: torch._C.Block) -> torch._C.Node | None:
    """The node of ``block`` that contains ``node`` (itself, or a control-flow node)."""
    while node.owningBlock() != block:
        owner = node.owningBlock().owningNode()
        if owner is None:
            return None
        node = owner
    return node


class ScriptModel(TorchModel):
    """A TorchScript archive. Layers are submodules, named by qualified name.

    TorchScript modules have no forward hooks, so the forward graph is
    inlined (every node keeps the module it came from) and, for each
    submodule, the one tensor leaving it is added to the graph's outputs.
    """

    format = "torchscript"

    def __init__(self, path: Path, *, input_shape: tuple[int, ...] | None = None) -> None:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                extra = {SHAPE_FILE: ""}
                self.module = torch.jit.load(str(path), map_location="cpu", _extra_files=extra).eval()
        except Exception as exc:
            raise UserError(
                f"The TorchScript archive '{path}' could not be loaded ({type(exc).__name__}: "
                f"{str(exc).strip().splitlines()[0][:200] if str(exc).strip() else ''}). It is "
                "damaged or was saved by an incompatible torch version: save it again."
            ) from exc
        self._functions: dict[tuple[str, ...], Any] = {}
        inputs = list(self.module.graph.inputs())[1:]
        if len(inputs) != 1:
            raise UserError(
                f"The TorchScript model '{path}' takes {len(inputs)} inputs; netdim supports "
                "models with exactly one floating-point input tensor. Wrap the model so that all "
                "features arrive in one tensor."
            )
        if not isinstance(inputs[0].type(), torch._C.TensorType):
            raise UserError(
                f"The input of the TorchScript model '{path}' has type {inputs[0].type()}; "
                "netdim supports one floating-point tensor input."
            )
        if input_shape is None:
            input_shape = _recorded_shape(extra[SHAPE_FILE]) or self._infer_shape(path)
        dtype = _float_dtype(list(self.module.parameters()) + list(self.module.buffers()))
        super().__init__(path, input_shape, dtype)

    def _inlined(self) -> tuple[torch._C.Graph, dict[str, tuple[torch._C.Value, str]]]:
        """A fresh inlined copy of the forward graph and, per submodule, its output value."""
        graph = self.module.graph.copy()
        torch._C._jit_pass_inline(graph)
        with contextlib.suppress(Exception):  # in-place ops would alter captured values
            torch._C._jit_pass_remove_mutation(graph)
        block = graph.block()
        nodes = list(block.nodes())
        paths = {node: _module_path(node) for node in nodes}
        leaving: dict[tuple[str, ...], list[torch._C.Value]] = {}
        kinds: dict[tuple[str, ...], str] = {}
        returned = {v.unique() for v in graph.outputs()}
        for node in nodes:
            path = paths[node]
            for depth in range(1, len(path) + 1):
                prefix = tuple(inst for inst, _ in path[:depth])
                kinds[prefix] = path[depth - 1][1]
                for value in node.outputs():
                    if not isinstance(value.type(), torch._C.TensorType):
                        continue
                    outside = value.unique() in returned or any(
                        (top := _top_node(use.user, block)) is None
                        or tuple(i for i, _ in paths.get(top, ()))[:depth] != prefix
                        for use in value.uses()
                    )
                    if outside:
                        leaving.setdefault(prefix, []).append(value)
        found: dict[str, tuple[torch._C.Value, str]] = {}
        owner: dict[int, str] = {}
        # deepest module first, so a container never takes the name of its last child's output
        for prefix in sorted(leaving, key=len, reverse=True):
            values = {v.unique(): v for v in leaving[prefix]}
            if len(values) != 1:
                continue
            ((uid, value),) = values.items()
            if uid in owner or uid in returned:
                continue
            owner[uid] = ".".join(prefix)
            found[".".join(prefix)] = (value, kinds[prefix])
        order = {v.unique(): i for i, node in enumerate(nodes) for v in node.outputs()}
        found = dict(sorted(found.items(), key=lambda item: order[item[1][0].unique()]))
        return graph, found

    def _function(self, names: tuple[str, ...]) -> Any:
        key = tuple(sorted(names))
        if key not in self._functions:
            graph, found = self._inlined()
            for name in key:
                graph.registerOutput(found[name][0])
            graph.makeMultiOutputIntoTuple()
            fname = f"netdim_capture_{len(self._functions)}"
            self._functions[key] = (torch._C._create_function_from_graph(fname, graph), key)
        return self._functions[key]

    def _forward(
        self, x: torch.Tensor, capture: tuple[str, ...]
    ) -> tuple[list[torch.Tensor], list[torch.Tensor]]:
        if not capture:
            return _leaves(self.module(x)), []
        function, key = self._function(capture)
        result = function(self.module._c, x)
        captured = dict(zip(key, result[1:], strict=True))
        return _leaves(result[0]), [captured[name] for name in capture]

    def _discover_layers(self) -> list[LayerInfo]:
        _, found = self._inlined()
        names = tuple(found)
        if not names:
            return []
        rows = self._probe_rows()
        function, key = self._function(names)
        with torch.inference_mode():
            result = function(self.module._c, self._tensor(np.zeros((rows, self.input.units))))
        values = dict(zip(key, result[1:], strict=True))
        layers = []
        for name in names:
            value = values[name]
            if value.is_floating_point() and value.ndim >= 1 and value.shape[0] == rows:
                op = found[name][1]
                layers.append(LayerInfo(name, op, tuple(value.shape[1:]), op in ACTIVATION_MODULES))
        self._functions.pop(tuple(sorted(names)), None)
        return layers

    def _infer_shape(self, path: Path) -> tuple[int, ...]:
        graph = self.module.graph.copy()
        torch._C._jit_pass_inline(graph)
        x = list(graph.inputs())[1]
        for node in graph.nodes():
            if node.kind() in ("aten::linear", "aten::conv1d", "aten::conv2d", "aten::conv3d",
                               "aten::_convolution"):  # fmt: skip
                path_names = [inst for inst, _ in _module_path(node)]
                if node.kind() != "aten::linear" or node.inputsAt(0).unique() != x.unique():
                    break
                sub = self.module
                try:
                    for part in path_names:
                        sub = getattr(sub, part)
                    return (int(sub.weight.shape[1]),)
                except (AttributeError, IndexError):
                    break
        raise _shape_error(path, "TorchScript does not record it and the model does not start "
                           "with a Linear layer")  # fmt: skip


# -- torch.export programs: graph nodes ------------------------------------------------------


#: Extra file of a TorchScript archive where netdim (and the model zoo) record the input shape:
#: ``{"input_shape": [1, 8, 8]}``; save it with ``torch.jit.save(m, path, _extra_files={...})``.
SHAPE_FILE = "netdim.json"


def _recorded_shape(text: str | bytes) -> tuple[int, ...] | None:
    if not text:
        return None
    try:
        shape = json.loads(text).get("input_shape")
        return tuple(int(s) for s in shape) if shape else None
    except (ValueError, TypeError, AttributeError):
        return None


def _finite(value: Any) -> int | None:
    """An integer range bound, or None when it is unbounded (sympy infinity)."""
    try:
        out = int(value)
    except (TypeError, ValueError, AttributeError, OverflowError):
        return None
    return out if out < 2**62 else None


class ExportedModel(TorchModel):
    """A ``torch.export`` program (``.pt2``). Layers are graph nodes (``relu``, ``linear_1``).

    The program records its example input, which gives the input shape. When
    the program was exported with a fixed batch size, rows are fed in chunks
    of that size.
    """

    format = "torch-export"

    def __init__(self, path: Path, *, input_shape: tuple[int, ...] | None = None) -> None:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                program = torch.export.load(str(path))
                self.module = program.module()
        except Exception as exc:
            raise UserError(
                f"The torch.export program '{path}' could not be loaded ({type(exc).__name__}: "
                f"{str(exc).strip().splitlines()[0][:200] if str(exc).strip() else ''}). It is "
                "damaged, not a torch.export program, or was saved by an incompatible torch "
                "version: export it again."
            ) from exc
        self._modules: dict[tuple[str, ...], torch.fx.GraphModule] = {}
        placeholders = [n for n in self.module.graph.nodes if n.op == "placeholder"]
        if len(placeholders) != 1:
            raise UserError(
                f"The torch.export program '{path}' takes {len(placeholders)} inputs; netdim "
                "supports programs with exactly one floating-point input tensor."
            )
        example = placeholders[0].meta.get("val")
        if not isinstance(example, torch.Tensor) or not example.is_floating_point():
            raise UserError(
                f"The input of the torch.export program '{path}' is "
                f"{getattr(example, 'dtype', type(example).__name__)}; netdim supports one "
                "floating-point tensor input."
            )
        batch, *rest = example.shape
        if isinstance(batch, int):
            limits: tuple[int, int | None] = (batch, batch)
        else:
            bounds = program.range_constraints.get(batch.node.expr)
            low = int(bounds.lower) if bounds is not None else 1
            high = _finite(bounds.upper) if bounds is not None else None
            limits = (max(low, 1), high)
        known = tuple(int(s) for s in rest) if all(isinstance(s, int) for s in rest) else None
        if input_shape is not None and known is not None and tuple(input_shape) != known:
            raise UserError(
                f"The input shape {tuple(input_shape)} given for '{path}' does not match the "
                f"program's own input shape {known}. Leave --input-shape out for this model."
            )
        shape = known or input_shape
        if shape is None:
            raise _shape_error(path, "the program's input has symbolic non-batch dimensions")
        super().__init__(path, tuple(shape), example.dtype, batch=limits)
        if limits[0] == limits[1] == 1:
            self.notices.append(
                f"The program '{path.name}' was exported with a batch size of 1, so netdim "
                "evaluates it one row at a time, which is slow. Export it with a dynamic batch "
                "dimension (torch.export.Dim)."
            )

    def _graph_module(self, names: tuple[str, ...]) -> torch.fx.GraphModule:
        key = tuple(sorted(names))
        if key not in self._modules:
            graph = torch.fx.Graph()
            mapping: dict[torch.fx.Node, torch.fx.Node] = {}
            result = graph.graph_copy(self.module.graph, mapping)
            leaves = list(result) if isinstance(result, (tuple, list)) else [result]
            by_name = {
                node.name: mapping[node] for node in self.module.graph.nodes if node in mapping
            }
            graph.output((*leaves, *(by_name[name] for name in key)))
            self._modules[key] = torch.fx.GraphModule(self.module, graph)
        return self._modules[key]

    def _forward(
        self, x: torch.Tensor, capture: tuple[str, ...]
    ) -> tuple[list[torch.Tensor], list[torch.Tensor]]:
        if not capture:
            return _leaves(self.module(x)), []
        key = tuple(sorted(capture))
        result = self._graph_module(capture)(x)
        k = len(result) - len(key)
        captured = dict(zip(key, result[k:], strict=True))
        return [r for r in result[:k] if isinstance(r, torch.Tensor)], [
            captured[name] for name in capture
        ]

    def _discover_layers(self) -> list[LayerInfo]:
        output = next(n for n in self.module.graph.nodes if n.op == "output")
        returned = {n.name for n in pytree.tree_leaves(output.args) if isinstance(n, torch.fx.Node)}
        candidates = []
        for node in self.module.graph.nodes:
            value = node.meta.get("val")
            if (
                node.op == "call_function"
                and node.name not in returned
                and isinstance(value, torch.Tensor)
                and value.is_floating_point()
                and value.ndim >= 1
            ):
                candidates.append(node)
        if not candidates:
            return []
        names = tuple(node.name for node in candidates)
        rows = self._probe_rows()
        _, values = self._run(np.zeros((rows, self.input.units)), names)
        self._modules.pop(tuple(sorted(names)), None)
        layers = []
        for node, value in zip(candidates, values, strict=True):
            if value.shape[0] != rows:
                continue
            target = node.target
            schema = getattr(target, "_schema", None)
            op = (
                schema.name.split("::")[-1]
                if schema is not None
                else getattr(target, "__name__", str(target))
            )
            layers.append(
                LayerInfo(node.name, op, tuple(value.shape[1:]), op in ACTIVATION_TARGETS)
            )
        return layers
