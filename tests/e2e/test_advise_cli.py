"""netdim advise on a budget from the command line: exit codes, standard error when it is not a terminal,
and a standard output that holds the JSON report alone."""

import json
import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
ENV = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT / "tests"), str(ROOT)])}
BASE = ["advise", "model_zoo.functions:ishigami", "--inputs", "model_zoo/ishigami.toml", "--points", "256",
        "--replicates", "4", "--seed", "3", "--gain-points", "64,256", "--no-save"]  # fmt: skip


def netdim(*args):
    # stderr is a pipe here, not a terminal: no progress bar, phase lines instead
    return subprocess.run(
        [sys.executable, "-m", "audit", *args], capture_output=True, text=True, env=ENV, cwd=ROOT, timeout=300
    )


def test_only_freezing_prints_pure_json_and_the_plan_and_phases_on_stderr():
    p = netdim(*BASE, "--only", "freezing", "--format", "json")
    assert p.returncode == 0, p.stderr
    report = json.loads(p.stdout)  # the whole of standard output is the report
    assert report["kind"] == "advice" and set(report["skipped"]) == {"pre-integration", "rqmc gain"}
    assert all(o["preintegrate"] == [] and o["rqmc_gain"] is None for o in report["outputs"])
    err = p.stderr.splitlines()
    assert err[0] == "netdim advise plan: 3 inputs, 256 points x 4 randomizations"
    assert any(line.startswith("  total") and "an estimate" in line for line in err)
    assert "  not done: pre-integration (not asked for: only freezing)" in err
    phases = [line for line in err if line.startswith("netdim advise: ")]
    assert [line.split(",")[0] for line in phases] == [
        "netdim advise: audit started", "netdim advise: audit finished",
        "netdim advise: freeze check started", "netdim advise: freeze check finished",
    ]  # fmt: skip
    total = report["design"]["evaluations"]
    assert f"(0 of {report['plan']['total']:,} done" in phases[0]  # the plan's estimate first,
    assert f"({total:,} of {total:,} planned done" in phases[-1]  # revised as the phases end


def test_quiet_prints_nothing_at_all():
    p = netdim(*BASE, "--only", "pre-integration", "--quiet")
    assert p.returncode == 0 and p.stdout == "" and p.stderr == ""


def test_a_budget_is_met_and_recorded(tmp_path):
    out = tmp_path / "a.json"
    full = netdim(*BASE, "--format", "json")
    assert full.returncode == 0, full.stderr
    limit = json.loads(full.stdout)["plan"]["total"] // 2
    p = netdim(*BASE[:-1], "--json", str(out), "--max-evaluations", str(limit), "--format", "markdown")
    assert p.returncode == 0, p.stderr
    report = json.loads(out.read_text())
    assert report["design"]["evaluations"] <= limit and report["plan"]["max_evaluations"] == limit
    assert report["plan"]["cuts"] and report["settings"]["max_evaluations"] == limit
    assert "## Left out of this run" in p.stdout and f"Evaluation budget {limit:,}" in p.stdout.replace("\\", "")
    assert any(line.startswith(f"  budget {limit:,} evaluations: ") for line in p.stderr.splitlines())


def test_a_budget_below_the_smallest_plan_is_refused_with_its_cost():
    p = netdim(*BASE, "--max-evaluations", "1000")
    assert p.returncode == 2 and p.stdout == ""
    assert p.stderr.startswith("netdim: error: Even the smallest advise plan needs about ")
    assert "--max-evaluations" in p.stderr and "--only" in p.stderr and "Traceback" not in p.stderr


def test_an_unknown_part_is_a_usage_error():
    p = netdim(*BASE, "--only", "gain")
    assert p.returncode == 2 and "invalid choice: 'gain'" in p.stderr
