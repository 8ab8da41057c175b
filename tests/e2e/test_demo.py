"""netdim demo: the bundled greenhouse surrogate audited end to end, its report saved, the next steps shown."""

import json
import tempfile

import pytest

from audit.cli import main

SMALL = ["--points", "64", "--replicates", "2"]


def test_demo_audits_the_greenhouse_surrogate_and_saves_the_report(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    assert main(["demo", *SMALL]) == 0
    out = capsys.readouterr().out
    saved = list((tmp_path / "reports").glob("greenhouse_v1-*.json"))
    assert len(saved) == 1 and f"Report saved to reports/{saved[0].name}" in out
    report = json.loads(saved[0].read_text())
    assert report["kind"] == "audit" and report["design"]["seed"] == 2026 and report["design"]["points"] == 64
    assert [i["name"] for i in report["inputs"]][:3] == ["outside_temperature", "solar_irradiance", "vent_opening"]
    assert report["layers"]  # the activations of the network
    assert "netdim compare" in out and "netdim advise" in out and "not a safety validation" in " ".join(out.split())


def test_demo_quiet_without_saving(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    assert main(["demo", *SMALL, "--quiet", "--no-save"]) == 0
    assert capsys.readouterr().out == "" and not (tmp_path / "reports").exists()


def test_demo_writes_the_report_where_asked(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    assert main(["demo", *SMALL, "--quiet", "--json", "r.json", "--seed", "3"]) == 0
    assert json.loads((tmp_path / "r.json").read_text())["design"]["seed"] == 3


@pytest.mark.parametrize("target", ["notes.txt", "folder"])
def test_demo_refuses_a_json_target_that_is_not_a_report_before_any_work(tmp_path, monkeypatch, capsys, target):
    monkeypatch.chdir(tmp_path)
    monkeypatch.setattr(tempfile, "tempdir", str(tmp_path))  # where a report that cannot be saved would go
    (tmp_path / "folder").mkdir()
    (tmp_path / "notes.txt").write_text("my notes")
    code = main(["demo", *SMALL, "--quiet", "--json", target])
    err = capsys.readouterr().err
    assert (tmp_path / "notes.txt").read_text() == "my notes"
    assert code == 2 and f"--json '{target}'" in err
