"""Reading a Torch file: what it holds, recognised by content, and a network from a state dict.

:func:`sniff` tells the kind of a Torch file from its layout alone (zip member
names, the legacy magic number); nothing is unpickled to find out. A
``torch.save`` file is then read with ``torch.load(weights_only=True)``; one
holding other pickled objects (a whole ``nn.Module``) is refused unless the user
trusts it (``trust=True``, ``--trust-pickle``), because unpickling runs code from
the file. A state dict is loaded into a user-named class ``package.module:Class``.
"""

from __future__ import annotations

import pickle
import pickletools
import zipfile
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import torch

from ...errors import UserError
from ..python import import_reference

__all__ = ["check_file", "load_weights", "rebuild", "sniff", "state_dict"]

_TRUST_FLAG = "`trust`"
# First bytes of the legacy (pre-zip) torch.save format: a pickled magic number.
_LEGACY_MAGIC = b"\x80\x02\x8a\x0al\xfc\x9cF\xf9 j\xa8P\x19"


def check_file(path: Path) -> None:
    if not path.exists():
        raise UserError(
            f"The Torch model file '{path}' does not exist. Check the path (and the current folder) and try again."
        )
    if path.is_dir():
        raise UserError(f"'{path}' is a folder, not a Torch model file. Give the path of the .pt / .pt2 file itself.")
    if path.stat().st_size == 0:
        raise UserError(
            f"The Torch model file '{path}' is empty (0 bytes). It was probably not written "
            "completely: save the model again."
        )


def sniff(path: Path) -> str:
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
        f"`torch_class` package.module:Class. If you trust the file and its source, pass "
        f"{_TRUST_FLAG} to load it anyway."
    )


def load_weights(path: Path, trust: bool) -> Any:
    """``torch.load`` with weights only; whole pickles only when trusted."""
    kind = sniff(path)
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


def state_dict(obj: Any, path: Path) -> dict[str, torch.Tensor]:
    def is_tensors(value: Any) -> bool:
        return isinstance(value, dict) and bool(value) and all(isinstance(v, torch.Tensor) for v in value.values())

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


def rebuild(
    state: dict[str, torch.Tensor],
    torch_class: str | None,
    arguments: dict[str, Any] | None,
    path: Path,
) -> torch.nn.Module:
    if torch_class is None:
        raise UserError(
            f"'{path}' is a state dict ({len(state)} tensors such as {_short(list(state), 2)}): "
            "it holds weights but not the network. Give the class that builds the network with "
            "`torch_class` package.module:Class (constructor arguments with `torch_arguments` JSON or "
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
            "`torch_arguments` JSON or in the [model] table of the input spec."
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
        raise UserError(f"Loading the state dict '{path}' into '{torch_class}' failed: {exc}") from exc
    return module


def _kwargs(arguments: dict[str, Any]) -> str:
    return ", ".join(f"{k}={v!r}" for k, v in arguments.items())
