"""Models and input specs as a study receives them: opened, resolved and identified.

:func:`inputs_spec` turns whatever ``inputs`` a caller gave (a spec, a spec file, a law
name, laws) into an :class:`~audit.inputs.InputSpec`; :func:`resolve_model` opens a path
or reference with the spec's ``[model]`` table, and takes a ``torch.nn.Module`` or an
``onnx.ModelProto`` given in Python as a file of its kind; :func:`model_identity` is what
identifies a model's numbers for a checkpoint (its file's SHA-256, or a function's module
source).
"""

from __future__ import annotations

import hashlib
import inspect
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from ..errors import UserError
from ..inputs import InputSpec, Law, uniform_spec
from ..inputs.spec import assumed_spec
from ..models.base import Model

__all__ = ["inputs_spec", "model_identity", "resolve_model"]


def inputs_spec(inputs: InputSpec | str | Path | Sequence[Law] | None) -> InputSpec:
    """An :class:`InputSpec` from a spec, a spec file path, ``"normal"`` / ``"uniform"``, laws, or ``None``."""
    from ..inputs import load_spec

    if inputs is None:
        return assumed_spec()
    if isinstance(inputs, InputSpec):
        return inputs
    if isinstance(inputs, Path) or (isinstance(inputs, str) and inputs.endswith(".toml")):
        return load_spec(inputs)
    if isinstance(inputs, str):
        return uniform_spec(inputs)
    laws = list(inputs)
    if not all(isinstance(x, Law) for x in laws):
        raise UserError("`inputs` must be an InputSpec, a spec file path, 'normal', 'uniform' or a sequence of Law.")
    return InputSpec(laws=laws, source="laws given in Python")


def _in_memory(model: Any, spec: InputSpec) -> Model | None:
    """A ``torch.nn.Module`` or an ``onnx.ModelProto`` given in Python, opened like a file of its kind."""
    kind = type(model).__module__.split(".")[0]
    shape = spec.model.get("input_shape")
    if kind == "torch" or (hasattr(model, "named_modules") and hasattr(model, "state_dict")):
        import torch

        if isinstance(model, torch.nn.Module):
            from ..models.torch.module import ModuleModel

            return ModuleModel(model, Path(f"<{type(model).__name__} in memory>"), "torch-module", input_shape=shape)
    if kind == "onnx" and type(model).__name__ == "ModelProto":
        import tempfile

        from ..models.open import open_model

        folder = tempfile.TemporaryDirectory(prefix="netdim-onnx-")
        path = Path(folder.name) / f"{model.graph.name or 'model'}.onnx"
        path.write_bytes(model.SerializeToString())
        opened = open_model(str(path), input_shape=shape)
        opened._folder = folder  # the file lives as long as the model
        return opened
    return None


def resolve_model(model: Any, spec: InputSpec, **open_options: Any) -> Model:
    """An opened model: ``model`` itself, a ``torch.nn.Module`` or ``onnx.ModelProto`` given in Python, or the
    file / reference it names, opened with the spec's [model] table."""
    if not isinstance(model, str | Path):
        return _in_memory(model, spec) or model
    from ..models.open import open_model

    options = {"dim": spec.dim}
    if "class" in spec.model:
        options["torch_class"] = spec.model["class"]
        options["torch_arguments"] = spec.model.get("arguments", {})
    if "input_shape" in spec.model:
        options["input_shape"] = tuple(spec.model["input_shape"])
    options.update({k: v for k, v in open_options.items() if v is not None})
    return open_model(str(model), **options)


def _file_hash(path: Path) -> str:
    digest = hashlib.sha256()
    with path.open("rb") as f:
        for chunk in iter(lambda: f.read(1 << 20), b""):
            digest.update(chunk)
    return digest.hexdigest()


def model_identity(model: Any) -> dict[str, Any]:
    """What identifies a model's numbers: its file's hash, or a function's module source and name."""
    args = getattr(model, "open_args", None)
    if isinstance(args, dict) and Path(str(args.get("ref", ""))).is_file():
        return {"model_sha256": _file_hash(Path(args["ref"])), "model_format": getattr(model, "format", "")}
    inner = getattr(model, "model", None)
    if inner is not None and inner is not model and hasattr(model, "index"):  # a pre-integrated model
        return {**model_identity(inner), "integrated": [int(model.index), int(model.cost)]}
    func = getattr(model, "func", None)
    if func is not None:
        identity = {"model": str(getattr(model, "source", ""))}
        try:
            source = inspect.getsource(inspect.getmodule(func) or func)
            identity["model_sha256"] = hashlib.sha256(source.encode()).hexdigest()
        except (OSError, TypeError):
            pass
        return identity
    return {"model": str(getattr(model, "source", type(model).__name__))}
