"""Shared pieces of the benchmark suite: settings, paired timing, child processes, the machine.

Every measure of :mod:`benchmarks` is a median over PAIRED runs: netdim and its
reference run one after the other, in alternating order from pair to pair, so a
burst of load from elsewhere on the machine hits both sides of a pair alike; the
ratio is formed per pair, and its median and spread (min–max) are reported.
"""

from __future__ import annotations

import os
import platform
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from datetime import UTC, datetime
from importlib import metadata
from pathlib import Path

__all__ = [
    "FULL",
    "QUICK",
    "ROOT",
    "Settings",
    "child",
    "machine",
    "netdim_cmd",
    "paired",
    "row",
    "versions",
]

ROOT = Path(__file__).resolve().parents[2]
ZOO = ROOT / "model_zoo"
HERE = Path(__file__).resolve().parent


@dataclass(frozen=True)
class Settings:
    """Sizes of one run of the suite (``FULL`` or ``QUICK``)."""

    name: str
    pairs: int
    #: pairs of the in-process timings (steady-state overhead, scipy): cheap, and noisier per run
    steady_pairs: int
    #: overhead, per model: (points, replicates) outputs only, and with hidden layers
    mlp_none: tuple[int, int]
    mlp_layers: tuple[int, int]
    cnn_none: tuple[int, int]
    cnn_layers: tuple[int, int]
    #: peak memory: small and large N (replicates 2, every layer)
    memory_points: tuple[int, int]
    #: advise against audit: points, replicates, extra advise flags (none in the full mode)
    advise: tuple[int, int]
    advise_extra: tuple[str, ...]
    #: scipy comparison: total points N (scipy's n), netdim's randomizations R
    scipy_points: int
    scipy_replicates: int
    scipy_dims: tuple[int, ...]
    #: Dask: the simulator's (points, replicates, steps) and the ONNX MLP's (points, replicates)
    dask_ode: tuple[int, int, int]
    dask_mlp: tuple[int, int]
    #: Dask, a job long enough that inference outweighs start-up: the simulator's steps per row (0: left out), pairs
    dask_long: tuple[int, int] = (0, 0)
    #: which (model, --layers) overhead cases, which models for memory and advise, the Dask ONNX case or not
    overhead_cases: tuple[tuple[str, str], ...] = tuple((m, x) for m in ("mlp", "cnn") for x in ("none", "activations", "all"))  # noqa: E501
    memory_models: tuple[str, ...] = ("mlp", "cnn")
    advise_models: tuple[str, ...] = ("digits_mlp", "greenhouse_v1")
    dask_onnx: bool = True


FULL = Settings(
    name="full",
    pairs=5,
    steady_pairs=11,
    mlp_none=(8192, 2),
    mlp_layers=(4096, 2),
    cnn_none=(8192, 2),
    cnn_layers=(4096, 2),
    memory_points=(2**10, 2**14),
    advise=(512, 4),
    advise_extra=(),
    scipy_points=2**13,
    scipy_replicates=8,
    scipy_dims=(3, 6, 20, 50),
    dask_ode=(4096, 4, 2000),
    dask_mlp=(1024, 2),
    dask_long=(20000, 3),
)

QUICK = Settings(
    name="quick",
    pairs=1,
    steady_pairs=1,
    mlp_none=(64, 2),
    mlp_layers=(64, 2),
    cnn_none=(64, 2),
    cnn_layers=(64, 2),
    memory_points=(2**5, 2**7),
    advise=(32, 2),
    advise_extra=("--gain-points", "64,128"),
    scipy_points=2**8,
    scipy_replicates=4,
    scipy_dims=(3, 6, 20, 50),
    dask_ode=(64, 2, 50),
    dask_mlp=(64, 2),
    overhead_cases=(("mlp", "none"), ("mlp", "all"), ("cnn", "activations")),
    memory_models=("mlp",),
    advise_models=("greenhouse_v1",),
    dask_onnx=False,
)


def netdim_cmd(*args: str) -> list[str]:
    """The ``netdim`` command of this interpreter's environment, with ``args``."""
    exe = Path(sys.executable).with_name("netdim")
    return [str(exe) if exe.exists() else "netdim", *args]


def child(cmd: Sequence[str], env: Mapping[str, str] | None = None) -> tuple[float, float, str]:
    """Run ``cmd`` in ROOT; return its wall seconds, its own peak RSS in MiB and its stdout.

    The child runs with Python's byte-code cache on (``PYTHONDONTWRITEBYTECODE`` left out of
    its environment), as an installed package runs: else every netdim command would compile
    its modules again while numpy's and rich's, compiled at their install, would not.
    The peak is the child's own ``ru_maxrss`` as ``/usr/bin/time -f %M`` reports it: a small
    process forks the command, so the peak does not start from this (large) process's
    memory, which Linux carries over a fork and exec. Without ``/usr/bin/time`` it is
    ``os.wait4``'s (an upper bound then).
    """
    full_env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}  # as an install runs
    full_env.update(env or {})
    timer = shutil.which("time", path="/usr/bin:/bin")
    with tempfile.TemporaryFile("w+") as err, tempfile.NamedTemporaryFile("r", suffix=".rss") as rss:
        full = [timer, "-f", "%M", "-o", rss.name, *cmd] if timer else list(cmd)
        t0 = time.perf_counter()
        proc = subprocess.Popen(full, cwd=ROOT, env=full_env, stdout=subprocess.PIPE, stderr=err, text=True)
        out = proc.stdout.read() if proc.stdout else ""
        _, status, usage = os.wait4(proc.pid, 0)
        wall = time.perf_counter() - t0
        proc.returncode = os.waitstatus_to_exitcode(status)
        if proc.returncode != 0:
            err.seek(0)
            raise RuntimeError(f"{' '.join(cmd)} failed with exit code {proc.returncode}:\n{err.read()[-3000:]}")
        text = rss.read().strip().splitlines()
    kib = int(text[-1]) if timer and text and text[-1].isdigit() else usage.ru_maxrss
    return wall, kib / 1024, out


def paired(runs: Mapping[str, Callable[[], float]], pairs: int) -> dict[str, list[float]]:
    """Call every run once per pair, forward in even pairs and backward in odd ones; their values per name."""
    names = list(runs)
    values: dict[str, list[float]] = {n: [] for n in names}
    for p in range(pairs):
        for n in names if p % 2 == 0 else names[::-1]:
            values[n].append(float(runs[n]()))
    return values


def row(
    case: str,
    netdim: Sequence[float],
    reference: Sequence[float],
    target: float,
    *,
    higher_is_better: bool = False,
    unit: str = "s",
    command: str = "",
    reference_command: str = "",
    note: str = "",
) -> dict:
    """One table row: medians, per-pair ratios netdim/reference (or reference/netdim when higher is better)."""
    if higher_is_better:
        ratios = [r / n for n, r in zip(netdim, reference, strict=True)]
    else:
        ratios = [n / r for n, r in zip(netdim, reference, strict=True)]
    ratio = statistics.median(ratios)
    met = ratio >= target if higher_is_better else ratio <= target
    return {
        "case": case,
        "unit": unit,
        "netdim": statistics.median(netdim),
        "reference": statistics.median(reference),
        "ratio": ratio,
        "ratio_min": min(ratios),
        "ratio_max": max(ratios),
        "pairs": len(ratios),
        "target": target,
        "target_op": "≥" if higher_is_better else "≤",
        "met": bool(met) if target == target else None,
        "command": command,
        "reference_command": reference_command,
        "note": note,
        "raw": {"netdim": list(netdim), "reference": list(reference)},
    }


def _cpu_model() -> str:
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                return line.split(":", 1)[1].strip()
    except OSError:
        pass
    return platform.processor() or "unknown"


def _memory_gib() -> float:
    try:
        for line in Path("/proc/meminfo").read_text().splitlines():
            if line.startswith("MemTotal"):
                return int(line.split()[1]) / 2**20
    except OSError:
        pass
    return float("nan")


def machine() -> dict:
    """CPU model, cores, memory, OS, Python, load and date."""
    load = os.getloadavg() if hasattr(os, "getloadavg") else (float("nan"),) * 3
    return {
        "cpu": _cpu_model(),
        "cores": os.cpu_count(),
        "memory_gib": round(_memory_gib(), 1),
        "os": platform.platform(),
        "python": platform.python_version(),
        "load_average_at_start": [round(v, 2) for v in load],
        "date": datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC"),
    }


def versions() -> dict:
    """Versions of the libraries the measures depend on (``metadata``, so nothing heavy is imported)."""
    out = {}
    for dist in ("numpy", "scipy", "onnxruntime", "onnx", "torch", "dask", "distributed", "rich", "netdim"):
        try:
            out[dist] = metadata.version(dist)
        except metadata.PackageNotFoundError:
            out[dist] = "not installed"
    return out
