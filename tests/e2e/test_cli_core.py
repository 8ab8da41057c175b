"""The command line on Python callables: end to end, JSON contract, user errors."""

import json
import os
import subprocess
import sys
from pathlib import Path

import exact
import pytest

from audit.cli import main

ROOT = Path(__file__).resolve().parents[2]
ENV = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT / "tests"), str(ROOT)])}


def netdim(*args, cwd=None):
    return subprocess.run(
        [sys.executable, "-m", "audit", *args], capture_output=True, text=True, env=ENV, cwd=cwd or ROOT, timeout=300
    )


def test_audit_callable_end_to_end_writes_the_json_contract(tmp_path):
    out = tmp_path / "r.json"
    p = netdim(
        "audit",
        "model_zoo.functions:ishigami",
        "--inputs",
        "model_zoo/ishigami.toml",
        "--points",
        "2048",
        "--replicates",
        "10",
        "--seed",
        "3",
        "--json",
        str(out),
    )
    assert p.returncode == 0, p.stderr
    assert "Traceback" not in p.stderr
    rep = json.loads(out.read_text())
    assert rep["tool"] == "netdim" and rep["schema"] == 1
    assert {"points", "replicates", "seed", "evaluations"} <= set(rep["design"])
    assert rep["design"]["evaluations"] == 2048 * 10 * 5
    o = rep["outputs"][0]
    for key in ("name", "variance", "mean_dimension", "total_index", "first_order"):
        assert key in o
    assert [t["feature"] for t in o["total_index"]] == ["x1", "x2", "x3"]
    # Ishigami function (Proc. ISUMA '90, 1990): exact ν inside the reported interval
    nu = o["mean_dimension"]
    assert nu["ci_low"] <= exact.ishigami()["nu"] <= nu["ci_high"]
    assert "x1" in p.stdout  # the report was printed


def test_audit_law_and_dim_and_quiet(tmp_path):
    p = netdim(
        "audit",
        "clifuncs:two_outputs",
        "--law",
        "uniform",
        "--dim",
        "3",
        "--points",
        "256",
        "--quiet",
        "--json",
        str(tmp_path / "q.json"),
    )
    assert p.returncode == 0, p.stderr
    assert p.stdout == ""
    rep = json.loads((tmp_path / "q.json").read_text())
    assert [o["name"] for o in rep["outputs"]] == ["y[0]", "y[1]"]
    assert rep["inputs"][0] == {"name": "x0", "law": "uniform", "low": 0.0, "high": 1.0}


def test_default_report_goes_under_reports(tmp_path):
    p = netdim("audit", "clifuncs:two_outputs", "--dim", "2", "--points", "64", "--quiet", cwd=tmp_path)
    assert p.returncode == 0, p.stderr
    saved = list((tmp_path / "reports").glob("two_outputs-*.json"))
    assert len(saved) == 1


def _run(capsys, *args):
    code = main(list(args))
    return code, capsys.readouterr().err


@pytest.mark.parametrize(
    "args,needle",
    [
        (["--points", "0"], "whole number ≥ 1"),
        (["--replicates", "1"], "At least 2 replicates"),
        (["--law", "gaussian"], "valid choices: normal, uniform"),
        (["--sampler", "halton"], "valid choices: sobol, mc"),
        (["--estimator", "pickfreeze"], "valid choices: jansen, fast"),
        (["--inputs", "nowhere.toml"], "does not exist"),
    ],
)
def test_bad_options_exit_2_with_a_message(capsys, args, needle):
    code, err = _run(capsys, "audit", "clifuncs:two_outputs", "--dim", "2", "--no-save", "--quiet", *args)
    assert code == 2
    assert needle in err and "Traceback" not in err


def test_bad_references(capsys):
    code, err = _run(capsys, "audit", "nosuchmodule_xyz:f", "--dim", "2", "--no-save")
    assert code == 2 and "could not be imported" in err
    code, err = _run(capsys, "audit", "clifuncs:two_outputz", "--dim", "2", "--no-save")
    assert code == 2 and "Did you mean 'two_outputs'" in err
    code, err = _run(capsys, "audit", "clifuncs:NOT_CALLABLE", "--dim", "2", "--no-save")
    assert code == 2 and "not callable" in err
    code, err = _run(capsys, "audit", "clifuncs:bad_shape", "--dim", "2", "--no-save")
    assert code == 2 and "returned shape" in err
    code, err = _run(capsys, "audit", "clifuncs:two_outputs", "--no-save")
    assert code == 2 and "--dim" in err


def test_bad_spec_values(capsys, tmp_path):
    spec = tmp_path / "s.toml"
    spec.write_text('[inputs]\nlaw = "uniform"\nlow = 3\nhigh = 1\ncount = 2\n')
    code, err = _run(capsys, "audit", "clifuncs:two_outputs", "--inputs", str(spec), "--no-save")
    assert code == 2 and "low must be < high" in err and str(spec) in err
    spec.write_text('[inputs]\nlaw = "normal"\nsd = 0\ncount = 2\n')
    code, err = _run(capsys, "audit", "clifuncs:two_outputs", "--inputs", str(spec), "--no-save")
    assert code == 2 and "sd must be > 0" in err


def test_non_finite_values_are_reported_with_an_example_row():
    p = netdim("audit", "clifuncs:log_first", "--law", "normal", "--dim", "2", "--points", "64", "--no-save")
    assert p.returncode == 2
    assert "NaN or infinite" in p.stderr and "x0=" in p.stderr and "bounded laws" in p.stderr
    assert "Traceback" not in p.stderr
    p = netdim("audit", "clifuncs:log_first", "--law", "normal", "--dim", "2", "--points", "64", "--no-save", "--debug")
    assert p.returncode == 2 and "Traceback" in p.stderr


def test_show_re_renders_a_saved_report(tmp_path):
    out = tmp_path / "r.json"
    first = netdim("audit", "clifuncs:two_outputs", "--dim", "3", "--points", "128", "--seed", "1", "--json", str(out))
    again = netdim("show", str(out))
    assert again.returncode == 0
    assert again.stdout.strip() in first.stdout
    bad = tmp_path / "bad.json"
    bad.write_text("{not json")
    p = netdim("show", str(bad))
    assert p.returncode == 2 and "not a JSON file" in p.stderr


def test_killed_run_resumes_from_its_checkpoint_with_nothing_lost(tmp_path):
    import signal
    import time

    ckpt = tmp_path / "run.npz"
    args = [
        sys.executable,
        "-m",
        "audit",
        "audit",
        "clifuncs:slow_sum",
        "--dim",
        "3",
        "--law",
        "uniform",
        "--points",
        "256",
        "--replicates",
        "12",
        "--seed",
        "9",
        "--checkpoint",
        str(ckpt),
        "--quiet",
    ]
    proc = subprocess.Popen(
        [*args, "--json", str(tmp_path / "a.json")],
        env=ENV,
        cwd=ROOT,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    deadline = time.time() + 60
    while not ckpt.exists() and time.time() < deadline:
        time.sleep(0.05)
    time.sleep(0.5)
    proc.send_signal(signal.SIGKILL)  # no chance to clean up: only what was saved survives
    proc.wait(timeout=30)
    assert ckpt.exists()
    resumed = subprocess.run(
        [*args, "--json", str(tmp_path / "b.json")], env=ENV, cwd=ROOT, capture_output=True, text=True, timeout=120
    )
    assert resumed.returncode == 0, resumed.stderr
    fresh = subprocess.run(
        [*args[:-3], "--quiet", "--json", str(tmp_path / "c.json")],
        env=ENV,
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert fresh.returncode == 0, fresh.stderr
    b, c = (json.loads((tmp_path / f).read_text()) for f in ("b.json", "c.json"))
    nb, nc = b["outputs"][0]["mean_dimension"], c["outputs"][0]["mean_dimension"]
    assert nb["estimate"] == pytest.approx(nc["estimate"], rel=1e-12)
    assert nb["ci_low"] == pytest.approx(nc["ci_low"], rel=1e-12)


def test_advise_end_to_end_and_show(tmp_path):
    out = tmp_path / "a.json"
    p = netdim(
        "advise",
        "model_zoo.functions:ishigami",
        "--inputs",
        "model_zoo/ishigami.toml",
        "--points",
        "512",
        "--seed",
        "2",
        "--gain-points",
        "256,1024",
        "--json",
        str(out),
    )
    assert p.returncode == 0, p.stderr
    rep = json.loads(out.read_text())
    assert rep["kind"] == "advice"
    cands = rep["outputs"][0]["preintegrate"]
    assert cands and {"feature", "mean_dimension_after"} <= set(cands[0])
    after = [c["mean_dimension_after"]["estimate"] for c in cands]
    assert after == sorted(after)  # best first
    again = netdim("show", str(out))
    assert again.returncode == 0 and again.stdout.strip() in p.stdout
