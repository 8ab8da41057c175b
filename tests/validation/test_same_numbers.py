"""The engine restructuring changed no number: reports saved before it are reproduced.

``before/`` holds JSON reports written by netdim 0.1 (commit 9907d60) for the commands in
``before/commands.txt``: audits of every backend and estimator, paired and independent
comparisons, and two advise runs. Each command is run again here with the same seed and every
number the old report holds must come back equal to 1e-12 relative (the order in which blocks
are merged may differ, which moves the last bits). Wall-clock times are not compared.

Two reports were made with 0.1's fast estimator, now ``hashed``, which is no longer offered to
users (``audit.estimators.REFERENCE_ESTIMATORS``); for those two runs alone it is put back in the
registry, so the check still covers it.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from reportdiff import NOT_RESULTS, differences

from audit.cli import main
from audit.estimators import ESTIMATORS, REFERENCE_ESTIMATORS, kernels

HERE = Path(__file__).resolve().parent / "before"
# reports whose hidden layers are summed by the compiled loop (audit/estimators/_squares.c): without it,
# numpy's float32 partial sums move them by up to 1e-6 (tests/unit/test_estimators_kernels.py covers that)
COMPILED_SUMS = {"audit_greenhouse_onnx", "audit_greenhouse_pt2_all", "audit_greenhouse_ts_detail", "audit_digits_mlp"}
ROOT = HERE.parents[2]
RTOL = 1e-12


def _commands() -> list[tuple[str, list[str]]]:
    out = []
    for line in (HERE / "commands.txt").read_text(encoding="utf-8").splitlines():
        if not line.strip() or line.startswith("#"):
            continue
        name, args = (part.strip() for part in line.split("|", 1))
        out.append((name, args.split()))
    return out


@pytest.mark.parametrize(("name", "args"), _commands(), ids=[n for n, _ in _commands()])
def test_report_is_reproduced(name, args, tmp_path, monkeypatch):
    if name in COMPILED_SUMS and not kernels.available():
        pytest.skip("the compiled loop of hidden layers' sums was not built (no C compiler at install)")
    monkeypatch.chdir(ROOT)
    for retired, cls in REFERENCE_ESTIMATORS.items():
        if retired in args:
            monkeypatch.setitem(ESTIMATORS, retired, cls)
    out = tmp_path / f"{name}.json"
    code = main([*args, "--json", str(out), "--quiet"])
    assert code == 0
    old = json.loads((HERE / f"{name}.json").read_text(encoding="utf-8"))
    new = json.loads(out.read_text(encoding="utf-8"))
    # a quadrature error is max |f̃_m − f̃_2m| / sd(f) over pilot points (audit/nodes.py): a difference of
    # pre-integrated values, which cancels, so its last bits are those of f / sd(f) (another CPU's SIMD kernels
    # moved them by up to 6e-16, 2e-9 relative): it is compared to RTOL of the largest (|mean| + sd) / sd
    scale = max(((abs(o["mean"]["estimate"]) + o["variance"]["estimate"] ** 0.5) / o["variance"]["estimate"] ** 0.5
                 for o in old.get("outputs", []) if isinstance(o.get("variance"), dict)
                 and isinstance(o.get("mean"), dict) and o["variance"]["estimate"] > 0), default=1.0)  # fmt: skip
    # notices are words, not numbers: every notice of the old report must come back, and later versions
    # may add their own (a comparison now names the layers it could not pair)
    problems = differences(old, new, RTOL, name, ignore=NOT_RESULTS | {"notices"},
                           absolute={"quadrature_error": RTOL * scale})  # fmt: skip
    problems += [f"{name}.notices: lost {n!r}" for n in old.get("notices", []) if n not in new.get("notices", [])]
    assert not problems, "\n".join(problems[:20])
