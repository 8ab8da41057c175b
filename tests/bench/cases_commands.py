"""Measures c and d: start-up of the command line, and ``netdim advise`` against ``netdim audit``."""

from __future__ import annotations

import re
import sys

from cases_common import Settings, child, netdim_cmd, paired, row

__all__ = ["ADVISE_FLAGS_V01", "advise", "advise_new_flags", "startup"]

#: Flags of ``netdim advise`` at the time the suite was written; others found in ``--help`` are reported.
_V01 = (
    "--help --inputs --law --dim --outputs --points --replicates --seed --sampler --estimator --top --nodes "
    "--tolerance --freeze-threshold --freeze-budget --gain-points --checkpoint --checkpoint-every "
    "--memory-limit --time-budget --cluster --torch-class --torch-args --input-shape --trust-pickle --json "
    "--no-save --format --debug --quiet"
)
ADVISE_FLAGS_V01 = frozenset(_V01.split())

TINY_FUNCTION = (
    "audit model_zoo.functions:ishigami --inputs model_zoo/ishigami.toml --points 64 --replicates 2 --no-save -q"
)
TINY_ONNX = (
    "audit model_zoo/greenhouse_v1.onnx --inputs model_zoo/greenhouse_v1.toml --points 64 --replicates 2 "
    "--layers none --no-save -q"
)


def startup(settings: Settings) -> list[dict]:
    """``netdim --help`` against ``python -c "import numpy, rich"`` (≤ 2×), and three untargeted start-ups."""
    py = sys.executable
    cmds = {
        "baseline": [py, "-c", "import numpy, rich"],
        "help": netdim_cmd("--help"),
        "import": [py, "-c", "import audit"],
        "function": netdim_cmd(*TINY_FUNCTION.split()),
        "onnx": netdim_cmd(*TINY_ONNX.split()),
    }
    t = paired({k: (lambda c=c: child(c)[0]) for k, c in cmds.items()}, settings.pairs)
    base = 'python -c "import numpy, rich"'
    nan = float("nan")
    return [
        row("netdim --help", t["help"], t["baseline"], 2.0, command="netdim --help", reference_command=base),
        row("python -c \"import audit\"", t["import"], t["baseline"], nan, command='python -c "import audit"',
            reference_command=base, note="no target"),
        row("tiny audit of a Python function", t["function"], t["baseline"], nan, command=f"netdim {TINY_FUNCTION}",
            reference_command=base, note="no target"),
        row("tiny ONNX audit, outputs only", t["onnx"], t["baseline"], nan, command=f"netdim {TINY_ONNX}",
            reference_command=base, note="no target"),
    ]  # fmt: skip


def advise_new_flags() -> dict[str, str]:
    """Flags of ``netdim advise --help`` that were not there when the suite was written, with their help line."""
    _, _, text = child(netdim_cmd("advise", "--help"))
    found: dict[str, str] = {}
    for m in re.finditer(r"^\s{2}(--[a-z][a-z0-9-]*)[^\n]*?(?:\s{2,}(.*))?$", text, flags=re.M):
        flag = m.group(1)
        if flag not in ADVISE_FLAGS_V01:
            found[flag] = (m.group(2) or "").strip()
    return found


def advise(settings: Settings) -> list[dict]:
    """Default ``netdim advise`` against the default ``netdim audit`` of the same model at the same points (≤ 5×)."""
    points, replicates = settings.advise
    rows = []
    for name in settings.advise_models:
        common = [
            f"model_zoo/{name}.onnx", "--inputs", f"model_zoo/{name}.toml", "--points", str(points),
            "--replicates", str(replicates), "--seed", "1", "--no-save", "-q",
        ]  # fmt: skip
        adv = ["advise", *common, *settings.advise_extra]
        aud = ["audit", *common]
        t = paired({"advise": lambda a=adv: child(netdim_cmd(*a))[0], "audit": lambda a=aud: child(netdim_cmd(*a))[0]},
                   settings.pairs)  # fmt: skip
        rows.append(row(name, t["advise"], t["audit"], 5.0, command="netdim " + " ".join(adv),
                        reference_command="netdim " + " ".join(aud)))  # fmt: skip
    return rows
