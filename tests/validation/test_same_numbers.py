"""The engine restructuring changed no number: reports saved before it are reproduced.

``before/`` holds JSON reports written by netdim 0.1 (commit 9907d60) for the commands in
``before/commands.txt``: audits of every backend and estimator, paired and independent
comparisons, and two advise runs. Each command is run again here with the same seed and every
number the old report holds must come back equal to 1e-12 relative (the order in which blocks
are merged may differ, which moves the last bits). Wall-clock times are not compared.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from audit.cli import main

HERE = Path(__file__).resolve().parent / "before"
ROOT = HERE.parents[2]
#: Keys whose values are not results of the computation.
IGNORED = {"seconds", "source", "spec", "block"}
RTOL = 1e-12


def _commands() -> list[tuple[str, list[str]]]:
    out = []
    for line in (HERE / "commands.txt").read_text(encoding="utf-8").splitlines():
        if not line.strip() or line.startswith("#"):
            continue
        name, args = (part.strip() for part in line.split("|", 1))
        out.append((name, args.split()))
    return out


def _compare(old, new, where: str, problems: list[str]) -> None:
    if isinstance(old, dict):
        if not isinstance(new, dict):
            problems.append(f"{where}: was an object, now {type(new).__name__}")
            return
        for key, value in old.items():
            if key in IGNORED:
                continue
            if key not in new:
                problems.append(f"{where}.{key}: missing")
                continue
            _compare(value, new[key], f"{where}.{key}", problems)
    elif isinstance(old, list):
        if not isinstance(new, list) or len(new) != len(old):
            problems.append(f"{where}: list of {len(old)} became {new!r:.60}")
            return
        for i, (a, b) in enumerate(zip(old, new, strict=True)):
            _compare(a, b, f"{where}[{i}]", problems)
    elif isinstance(old, float) and isinstance(new, int | float) and not isinstance(new, bool):
        if not math.isclose(old, new, rel_tol=RTOL, abs_tol=1e-300):
            problems.append(f"{where}: {old!r} became {new!r}")
    elif old != new:
        problems.append(f"{where}: {old!r} became {new!r}")


@pytest.mark.parametrize(("name", "args"), _commands(), ids=[n for n, _ in _commands()])
def test_report_is_reproduced(name, args, tmp_path, monkeypatch):
    monkeypatch.chdir(ROOT)
    out = tmp_path / f"{name}.json"
    code = main([*args, "--json", str(out), "--quiet"])
    assert code == 0
    old = json.loads((HERE / f"{name}.json").read_text(encoding="utf-8"))
    new = json.loads(out.read_text(encoding="utf-8"))
    problems: list[str] = []
    _compare(old, new, name, problems)
    assert not problems, "\n".join(problems[:20])
