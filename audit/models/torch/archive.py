"""Torch zip archives checked before anything reads them: sizes, and ``.pt2`` programs without pickle.

:func:`check_sizes` reads a zip's central directory only and refuses an archive
whose members declare more content, once unpacked, than a stated limit
(:func:`size_limit`: 16 times the file plus 64 MiB, and at most half of the
available memory), before any member is decompressed.

:func:`read_program` returns the bytes of a ``torch.export`` archive that
``torch.export.load`` can read without running code from the file. The loader
unpickles some members, evaluates symbolic shape expressions with
``sympy.sympify`` and calls whatever its graph nodes name, so each is checked
first (unless the user trusts the file):

* pickled members (sample inputs, legacy weight and constant files) must load
  with ``torch.load(weights_only=True)``, Torch's restricted unpickler, which
  only rebuilds tensors and plain containers; then Torch's own first attempt,
  with the same restriction, succeeds and it never falls back to full pickle;
* members that Torch would read with full pickle (tensor subclasses), objects
  with their own pickling (script objects, opaque objects) and compiled code
  (AOTInductor libraries) are refused;
* every graph node, and every operator passed as an argument, must be a Torch
  operator (``torch.ops.<namespace>.<op>``), a function of ``operator`` or
  ``math``, or a symbolic-shape function of ``torch``; every shape expression may only combine integers, symbols and
  the arithmetic of ``sympy`` (its syntax tree is read, never evaluated).
"""

from __future__ import annotations

import ast
import io
import json
import os
import re
import zipfile
from pathlib import Path
from typing import Any

import torch

from ...errors import UserError

__all__ = ["check_sizes", "read_program", "size_limit"]

_MIB = 2**20

_OPERATOR = frozenset(
    {
        "getitem", "add", "sub", "mul", "truediv", "floordiv", "mod", "pow", "neg", "pos", "abs",
        "eq", "ne", "lt", "le", "gt", "ge", "and_", "or_", "xor", "not_", "invert", "lshift",
        "rshift", "matmul", "index", "truth",
    }
)  # fmt: skip
_TORCH_TARGET = re.compile(r"torch\.(_?sym_[a-z]\w*|_check[a-z_]*|_assert[a-z_]*)")
_OPS_TARGET = re.compile(r"torch\.ops\.(_?[A-Za-z]\w*)\.(_?[A-Za-z]\w*)(\.[A-Za-z]\w*)?")
_NAME = re.compile(r"[A-Za-z_]\w*")
# sympy classes and functions a shape expression may call (srepr output of Torch's shapes).
_SYMPY_CALLS = frozenset(
    {
        "Symbol", "Integer", "Rational", "Float", "Add", "Mul", "Pow", "Min", "Max", "Mod", "Abs",
        "floor", "ceiling", "Eq", "Ne", "Lt", "Le", "Gt", "Ge", "StrictLessThan", "StrictGreaterThan",
        "LessThan", "GreaterThan", "Equality", "Unequality", "And", "Or", "Not", "Piecewise",
        "ExprCondPair", "FloorDiv", "ModularIndexing", "Where", "PythonMod", "CleanDiv", "CeilToInt",
        "FloorToInt", "CeilDiv", "LShift", "RShift", "PowByNatural", "FloatPow", "FloatTrueDiv",
        "IntTrueDiv", "IsNonOverlappingAndDenseIndicator", "TruncToFloat", "TruncToInt", "RoundToInt",
        "RoundDecimal", "ToFloat", "Identity", "OpaqueUnaryFn_sqrt", "BitwiseFn_bitwise_and",
        "BitwiseFn_bitwise_or", "Half", "One", "Zero", "NegativeOne",
    }
)  # fmt: skip
_SYMPY_NAMES = frozenset({"oo", "zoo", "nan", "true", "false", "True", "False", "S", "pi", "E", "I"})


def available_memory() -> int | None:
    """Bytes of memory available now (Linux ``/proc/meminfo``, else ``sysconf``), or None."""
    try:
        with open("/proc/meminfo", encoding="ascii") as handle:
            for line in handle:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        pass
    try:
        return int(os.sysconf("SC_AVPHYS_PAGES")) * int(os.sysconf("SC_PAGE_SIZE"))
    except (ValueError, OSError, AttributeError):
        return None


def size_limit(file_size: int, memory: int | None) -> int:
    """Largest unpacked content accepted for a zip of ``file_size`` bytes.

    Torch writes its archives uncompressed (only TorchScript code is
    compressed, a few times over), so 16 times the file plus 64 MiB leaves a
    wide margin; and never more than half the available memory.
    """
    limit = 16 * file_size + 64 * _MIB
    return min(limit, memory // 2) if memory else limit


def check_sizes(path: Path) -> None:
    """Refuse a zip whose members declare more unpacked content than :func:`size_limit`.

    Reads only the central directory: no member is decompressed. A file that
    is not a zip passes (other checks read it).
    """
    if not zipfile.is_zipfile(path):
        return
    try:
        with zipfile.ZipFile(path) as archive:
            infos = archive.infolist()
    except (zipfile.BadZipFile, OSError, ValueError):
        return  # damaged: the loaders say so
    total = sum(max(info.file_size, 0) for info in infos)
    size = path.stat().st_size
    memory = available_memory()
    limit = size_limit(size, memory)
    if total > limit:
        biggest = max(infos, key=lambda info: info.file_size)
        memory_text = f" and half of the {memory / 2**30:.1f} GiB of memory available" if memory else ""
        raise UserError(
            f"The Torch file '{path}' is a zip archive whose {len(infos)} members declare "
            f"{total / _MIB:,.0f} MiB of content once unpacked ('{biggest.filename}' alone "
            f"{biggest.file_size / _MIB:,.0f} MiB), from {size / _MIB:,.1f} MiB on disk. netdim refuses "
            f"more than {limit / _MIB:,.0f} MiB (16 times the file plus 64 MiB{memory_text}) before "
            "unpacking anything, because such a file is damaged or built to exhaust memory. Save the "
            "model again with torch.save, torch.jit.save or torch.export.save."
        )


def _refuse(path: Path, what: str) -> UserError:
    return UserError(
        f"The torch.export program '{path}' {what}. Loading it could run code stored in the file, so "
        "netdim does not load it. Export the program again from plain tensors and Torch operators, or, "
        "if you trust the file and its source, set `trust` to load it anyway."
    )


def _weights_only(data: bytes) -> bool:
    """Whether ``data`` loads with Torch's restricted unpickler (tensors and plain containers only)."""
    try:
        torch.load(io.BytesIO(data), map_location="cpu", weights_only=True)
    except Exception:
        return False
    return True


def _target_ok(target: str) -> bool:
    if target.startswith("_operator."):
        return target.removeprefix("_operator.") in _OPERATOR
    if target.startswith("math."):
        return bool(re.fullmatch(r"[a-z]\w*", target.removeprefix("math.")))
    match = _OPS_TARGET.fullmatch(target)
    if match:
        namespace = getattr(torch.ops, match.group(1), None)
        return isinstance(namespace, torch._ops._OpNamespace | torch._ops._HigherOrderNamespace)
    return bool(_TORCH_TARGET.fullmatch(target))


def _expr_ok(text: str) -> bool:
    """Whether a shape expression is only sympy arithmetic on integers and symbols (never evaluated)."""
    try:
        tree = ast.parse(text, mode="eval")
    except (SyntaxError, ValueError):
        return False
    for node in ast.walk(tree):
        if isinstance(node, ast.Call):
            if not isinstance(node.func, ast.Name) or node.func.id not in _SYMPY_CALLS:
                return False
        elif isinstance(node, ast.Name):
            if node.id not in _SYMPY_CALLS and node.id not in _SYMPY_NAMES:
                return False
        elif isinstance(node, ast.Constant):
            if isinstance(node.value, str) and not _NAME.fullmatch(node.value):
                return False
        elif not isinstance(
            node,
            ast.Expression
            | ast.keyword
            | ast.Load
            | ast.UnaryOp
            | ast.BinOp
            | ast.USub
            | ast.UAdd
            | ast.Add
            | ast.Sub
            | ast.Mult
            | ast.Div
            | ast.FloorDiv
            | ast.Mod
            | ast.Pow,
        ):
            return False
    return True


def _check_graph(document: Any, path: Path) -> None:
    """Every node target and shape expression of a serialized program is harmless."""
    stack = [document]
    while stack:
        item = stack.pop()
        if isinstance(item, dict):
            for key, value in item.items():
                if key in ("target", "as_operator") and isinstance(value, str) and not _target_ok(value):
                    raise _refuse(path, f"has a graph node that calls '{value[:80]}', which is not a Torch operator")
                if key == "expr_str" and isinstance(value, str) and not _expr_ok(value):
                    raise _refuse(path, f"holds a shape expression that is not plain arithmetic ('{value[:80]}')")
                stack.append(value)
        elif isinstance(item, list):
            stack.extend(item)


def _payloads(read: Any, config_name: str, names: set[str], path: Path) -> None:
    """Refuse a payload config (weights or constants) that has Torch unpickle objects in full."""
    if config_name not in names:
        return
    try:
        config = json.loads(read(config_name)).get("config", {})
    except (ValueError, AttributeError) as exc:
        raise _refuse(path, f"has an unreadable '{config_name}' ({exc})") from exc
    for fqn, meta in config.items():
        name = str(meta.get("path_name", ""))
        if meta.get("use_pickle") or name.startswith(("custom_obj_", "opaque_obj_")):
            raise _refuse(path, f"stores '{fqn}' as a pickled Python object, not as plain tensor data")


def read_program(path: Path, trust: bool = False) -> io.BytesIO:
    """The bytes of a ``torch.export`` archive, checked as the module docstring says.

    Parameters
    ----------
    path : Path
        The archive (``.pt2``, or a ``.pt`` that holds one).
    trust : bool
        Skip the checks (the user trusts the file and its source).

    Returns
    -------
    io.BytesIO
        The file's content, read once, for ``torch.export.load``.
    """
    data = path.read_bytes()
    if trust:
        return io.BytesIO(data)
    try:
        archive = zipfile.ZipFile(io.BytesIO(data))
        infos = archive.infolist()
    except (zipfile.BadZipFile, OSError, ValueError) as exc:
        raise UserError(
            f"The torch.export program '{path}' could not be read as a zip archive ({exc}). It is "
            "damaged or truncated: export it again."
        ) from exc
    with archive:
        prefix = {i.filename.split("/", 1)[0] + "/" for i in infos if "/" in i.filename}
        root = prefix.pop() if len(prefix) == 1 else ""
        names = {i.filename[len(root) :] if i.filename.startswith(root) else i.filename for i in infos}

        def read(name: str) -> bytes:
            return archive.read(root + name)

        if any(n.startswith("data/aotinductor/") or n.endswith((".so", ".dll", ".dylib")) for n in names):
            raise _refuse(path, "holds compiled code (an AOTInductor library)")
        documents = [n for n in names if n.startswith("models/") and n.endswith(".json")]
        if "serialized_exported_program.json" in names:  # the archive layout of torch 2.7 and before
            documents.append("serialized_exported_program.json")
        pickled = [n for n in names if n.endswith(".pt") and n.startswith("data/")]
        pickled += [n for n in names if n.startswith("serialized_") and n != "serialized_exported_program.json"]
        for model in (n.removeprefix("models/").removesuffix(".json") for n in documents if n.startswith("models/")):
            _payloads(read, f"data/weights/{model}_weights_config.json", names, path)
            _payloads(read, f"data/constants/{model}_constants_config.json", names, path)
        for name in documents:
            try:
                document = json.loads(read(name))
            except ValueError as exc:
                raise _refuse(path, f"has an unreadable graph '{name}' ({exc})") from exc
            _check_graph(document, path)
        for name in pickled:
            if not _weights_only(read(name)):
                raise _refuse(path, f"keeps '{name}' as pickled Python objects rather than plain tensors")
    return io.BytesIO(data)
