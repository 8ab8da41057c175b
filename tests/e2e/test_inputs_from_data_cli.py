"""From a table of training inputs to a grouped audit, on the command line (the README's three commands)."""

from __future__ import annotations

import json

import numpy as np

from audit.cli import main


def _table(path, rows=400, seed=0):
    rng = np.random.default_rng(seed)
    t = rng.uniform(10, 30, rows)
    w = t / 2 + rng.normal(0, 0.5, rows)  # strongly dependent on t
    soil = rng.choice(3, rows, p=[0.5, 0.3, 0.2])
    lines = ["t,w,soil_clay,soil_loam,soil_sand"]
    lines += [
        f"{float(a)!r},{float(b)!r},{int(s == 0)},{int(s == 1)},{int(s == 2)}"
        for a, b, s in zip(t, w, soil, strict=True)
    ]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def test_table_to_spec_to_grouped_audit(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    _table(tmp_path / "train.csv")
    assert main(["inputs-from-data", "train.csv", "--group-dependent"]) == 0
    out = " ".join(capsys.readouterr().out.split())
    assert "one-hot block 'soil'" in out and "strongly dependent" in out and "t–w" in out
    assert main(["inputs-from-data", "train.csv"]) == 2  # never over an existing spec without --force
    assert "exists" in capsys.readouterr().err
    args = ["audit", "clifuncs:soil_and_weather", "--inputs", "train.toml", "--view", "both"]
    assert main([*args, "--points", "256", "--replicates", "4", "--seed", "1", "--json", "r.json"]) == 0
    printed = capsys.readouterr().out
    assert "By group of inputs" in printed and "Every input was taken" not in printed
    report = json.loads((tmp_path / "r.json").read_text(encoding="utf-8"))
    assert [i["name"] for i in report["inputs"]] == ["t", "w", "soil"]
    assert report["inputs"][2]["one_hot"] == ["soil_clay", "soil_loam", "soil_sand"]
    grouped = report["by_group"]
    assert grouped["groups"] == [{"name": "dependent_1", "inputs": ["t", "w"]}, {"name": "soil", "inputs": ["soil"]}]
    nu = grouped["outputs"][0]["mean_dimension"]
    assert 1 <= nu["ci_low"] <= nu["estimate"] <= nu["ci_high"] <= 2
    assert main(["show", "r.json"]) == 0 and "By group of inputs" in capsys.readouterr().out


def test_no_spec_says_first_that_every_input_was_taken_as_standard_normal(capsys):
    assert main(["audit", "clifuncs:two_outputs", "--dim", "2", "--points", "64", "--no-save"]) == 0
    lines = capsys.readouterr().out.splitlines()
    first = next(i for i, line in enumerate(lines) if "Every input was taken as N(0, 1)" in line)
    assert first <= 3 and "inputs-from-data" in " ".join(lines[first : first + 6])
    assert main(["audit", "clifuncs:two_outputs", "--dim", "2", "--points", "64", "--law", "normal", "--no-save"]) == 0
    assert "Every input was taken" not in capsys.readouterr().out


def test_fast_estimator_and_advice_refuse_what_they_cannot_serve(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    _table(tmp_path / "train.csv")
    assert main(["inputs-from-data", "train.csv", "-q"]) == 0
    base = ["clifuncs:soil_and_weather", "--inputs", "train.toml", "--points", "64", "--no-save"]
    assert main(["audit", *base, "--estimator", "fast"]) == 2
    assert "one-hot input 'soil'" in capsys.readouterr().err
    assert main(["advise", *base]) == 2
    assert "one-hot" in capsys.readouterr().err
    assert main(["audit", *base, "--view", "groups"]) == 2
    assert "declares none" in capsys.readouterr().err
