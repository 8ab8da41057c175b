"""netdim's benchmark suite: every measure of the performance targets, side by side in one run.

    python tests/bench/benchmarks.py            # full mode: reports/benchmarks.md, reports/bench/benchmarks.json
    python tests/bench/benchmarks.py --quick    # the same code paths at tiny sizes, into a temporary folder
    python tests/bench/benchmarks.py --out PATH # the page at PATH, the raw timings at PATH with suffix .json

Measures (ratios of paired runs, see :mod:`cases_common`): a. overhead against raw
onnxruntime inference (:mod:`cases_overhead`), b. peak memory at a large N against a
small one, c. start-up (:mod:`cases_commands`), d. advise against audit, e. netdim
against scipy's ``stats.sobol_indices`` (:mod:`cases_scipy`), f. Dask ``local:2``
against one process (:mod:`cases_dask`). Only netdim's public command line and Python
API are used, so the suite measures whatever engine is installed. Benchmarks, not
timed tests: nothing here fails on a slow machine.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import time
from dataclasses import asdict
from pathlib import Path

HERE = Path(__file__).resolve().parent
if str(HERE) not in sys.path:
    sys.path.insert(0, str(HERE))
if str(HERE.parents[1]) not in sys.path:
    sys.path.insert(1, str(HERE.parents[1]))

from cases_commands import advise, advise_new_flags, startup  # noqa: E402
from cases_common import FULL, QUICK, ROOT, ZOO, Settings, machine, versions  # noqa: E402
from cases_dask import dask_cases  # noqa: E402
from cases_overhead import build_mlp, memory, overhead  # noqa: E402
from cases_scipy import against_scipy  # noqa: E402
from report_md import render  # noqa: E402

__all__ = ["main", "run_all"]

GAPS = (
    "The overhead reference batches as netdim does (CALL_ROWS rows a call, fixed from measurements on five "
    "MLPs and CNNs); the batch size onnxruntime likes best is not searched for per model.",
    "TorchScript and .pt2 models are not timed (the overhead measures are ONNX only).",
    "Peak memory is the whole process's peak, imports included.",
    "Options limiting advise (freezing only, pre-integration only, a budget) are listed when `--help` shows "
    "them, but not timed: their names were not known when the suite was written.",
    "The cost of the fast ν estimator against d (once in tests/bench/bench_speed.py, now removed) is not "
    "measured.",
    "Dask is measured on a local cluster only (no remote scheduler).",
)


def _log(quiet: bool, text: str) -> None:
    if not quiet:
        print(text, file=sys.stderr, flush=True)


def run_all(settings: Settings, quiet: bool = False, shared: str = "") -> dict:
    """Every measure, in one run; the results as one JSON-ready dict."""
    t0 = time.perf_counter()
    results: dict = {"machine": machine(), "versions": versions(), "settings": asdict(settings), "shared": shared}
    # byte-code of netdim's modules and the zoo's, as an install leaves it (pip compiles what it installs)
    subprocess.run([sys.executable, "-m", "compileall", "-q", str(ROOT / "audit"), str(ZOO)], check=True)
    with tempfile.TemporaryDirectory() as tmp:
        models = {"mlp": build_mlp(Path(tmp)), "cnn": ZOO / "digits_cnn.onnx"}
        steps = (
            ("overhead", lambda: overhead(settings, models)),
            ("memory", lambda: memory(settings, models)),
            ("startup", lambda: startup(settings)),
            ("advise", lambda: advise(settings)),
            ("advise_new_flags", advise_new_flags),
            ("scipy", lambda: against_scipy(settings)),
            ("dask", lambda: dask_cases(settings, models["mlp"])),
        )
        for name, step in steps:
            s = time.perf_counter()
            value = step()
            if name == "scipy":
                results["scipy"], results["scipy_details"] = value
            else:
                results[name] = value
            _log(quiet, f"{name}: {time.perf_counter() - s:.1f} s")
    results["gaps"] = list(GAPS)
    results["seconds"] = time.perf_counter() - t0
    return results


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n", 1)[0])
    parser.add_argument("--quick", action="store_true", help="tiny sizes, one pair each, into a temporary folder")
    parser.add_argument("--out", type=Path, help="Markdown page (default reports/benchmarks.md; --quick: a temp path)")
    parser.add_argument("--shared", default="", help="a remark on the machine's load, shown beside the machine")
    parser.add_argument("--quiet", action="store_true", help="no progress lines")
    args = parser.parse_args(argv)
    settings = QUICK if args.quick else FULL
    if args.out is not None:
        page, raw = args.out, args.out.with_suffix(".json")
    elif args.quick:
        folder = Path(tempfile.mkdtemp(prefix="netdim-bench-"))
        page, raw = folder / "benchmarks.md", folder / "benchmarks.json"
    else:
        page, raw = ROOT / "reports" / "benchmarks.md", ROOT / "reports" / "bench" / "benchmarks.json"
    results = run_all(settings, quiet=args.quiet, shared=args.shared)
    page.parent.mkdir(parents=True, exist_ok=True)
    raw.parent.mkdir(parents=True, exist_ok=True)
    raw.write_text(json.dumps(results, indent=2, ensure_ascii=False) + "\n")
    page.write_text(render(results))
    print(page)
    return 0


if __name__ == "__main__":
    sys.exit(main())
