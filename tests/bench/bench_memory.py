"""Peak memory of an audit does not grow with N (a benchmark, not a timed test).

Runs the same audit of the digits MLP (64 inputs, every layer captured) at
N = 2^10 and N = 2^14 in fresh processes and compares their peak resident
memory (``resource.getrusage(RUSAGE_CHILDREN).ru_maxrss``). Target: the
ratio stays within 1.10. Writes ``reports/bench/memory.json``.

    python tests/bench/bench_memory.py
"""

from __future__ import annotations

import json
import resource
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
CHILD = """
import resource, sys
from audit import audit_model, load_spec
spec = load_spec("model_zoo/digits_mlp.toml")
r = audit_model("model_zoo/digits_mlp.onnx", spec, points=int(sys.argv[1]), replicates=2, seed=1, layers="all")
print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, r.design["evaluations"], r.design["block"])
"""


def peak_kib(points: int) -> tuple[int, int, int]:
    out = subprocess.run(
        [sys.executable, "-c", CHILD, str(points)], cwd=ROOT, capture_output=True, text=True, check=True
    )
    rss, evals, block = (int(v) for v in out.stdout.split())
    return rss, evals, block


def main() -> None:
    rows = {}
    for n in (2**10, 2**14):
        rss, evals, block = peak_kib(n)
        rows[n] = {"peak_rss_mib": round(rss / 1024, 1), "evaluations": evals, "block_points": block}
        print(f"N = {n:6d}: peak RSS {rss / 1024:8.1f} MiB, {evals:,} evaluations, {block} points per task")
    ratio = rows[2**14]["peak_rss_mib"] / rows[2**10]["peak_rss_mib"]
    print(f"peak memory ratio N=2^14 / N=2^10: {ratio:.3f} (target ≤ 1.10)")
    out = ROOT / "reports" / "bench" / "memory.json"
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps({"model": "digits_mlp.onnx, layers=all", "runs": rows, "ratio": ratio}, indent=2))
    _ = resource  # the children report their own peak


if __name__ == "__main__":
    main()
