"""Smoke test of the benchmark suite: its quick mode runs and writes a complete page (no timings asserted).

Runs ``python tests/bench/benchmarks.py --quick --out tmp_path/benchmarks.md`` and
checks the page has every section and the versions line, that every ratio in its
tables is a finite positive number, and that the raw timings file beside it holds
the same measures. Common practice, no source.
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

import pytest

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from report_md import SECTIONS  # noqa: E402

pytest.importorskip("distributed")


def _ratio_cells(page: str) -> list[str]:
    """The cells of every table column whose header names a ratio or speed-up."""
    cells, column = [], None
    for line in page.splitlines():
        if not line.startswith("|"):
            column = None
            continue
        parts = [p.strip() for p in line.strip("|").split("|")]
        if column is None:
            named = [i for i, p in enumerate(parts) if p.startswith(("ratio", "speed-up"))]
            column = named[0] if named else -1
        elif column >= 0 and not set(parts[0]) <= set("-"):
            cells.append(parts[column])
    return cells


@pytest.fixture(scope="module")
def quick(tmp_path_factory) -> tuple[str, dict]:
    out = tmp_path_factory.mktemp("bench") / "benchmarks.md"
    subprocess.run(
        [sys.executable, str(HERE / "benchmarks.py"), "--quick", "--quiet", "--out", str(out)],
        check=True,
        capture_output=True,
        timeout=600,
    )
    return out.read_text(), json.loads(out.with_suffix(".json").read_text())


def test_every_section_and_the_versions_line(quick):
    page, _ = quick
    for title in SECTIONS.values():
        assert f"## {title}" in page
    versions = [line for line in page.splitlines() if line.startswith("- Versions: ")]
    assert len(versions) == 1
    for lib in ("numpy", "scipy", "onnxruntime", "torch", "dask", "netdim"):
        assert f"{lib} " in versions[0]
    assert "not a safety validation" in page


def test_every_ratio_is_finite_and_positive(quick):
    page, raw = quick
    cells = _ratio_cells(page)
    measures = ("overhead", "memory", "startup", "advise", "scipy", "dask")
    assert len(cells) == sum(len(raw[m]) for m in measures)
    for cell in cells:
        value = float(cell)
        assert math.isfinite(value) and value > 0, cell
    for m in measures:
        assert raw[m], m
        for r in raw[m]:
            assert math.isfinite(r["ratio"]) and r["ratio"] > 0
            assert len(r["raw"]["netdim"]) == len(r["raw"]["reference"]) == r["pairs"]

