"""What the command line prints and writes (audit.cli.output): flags in messages, reports saved atomically."""

import argparse
import errno
import json
import shutil
import types
from pathlib import Path

import pytest

import audit.cli.output
import audit.studies
from audit.cli import main
from audit.cli.output import FLAGS, _write_atomic, as_flags, check_report_target, print_result, save_report
from audit.cli.parser import build_parser
from audit.errors import UserError
from audit.results import AuditResult, Estimate, OutputResult
from audit.studies.advise import ADVICE_SETTINGS
from audit.studies.options import DESIGN_OPTIONS, RUN_OPTIONS

ROOT = Path(__file__).resolve().parents[2]
ZOO = ROOT / "model_zoo"
E = Estimate(1.0, 0.9, 1.1, 0.05)


def _result(source="model_zoo/greenhouse_v1.onnx"):
    return AuditResult({"source": source, "format": "onnx"}, [], {"points": 64}, [OutputResult("y", E, E, E)])


def _args(**kw):
    base = {"json": None, "no_save": False, "quiet": True, "format": "text", "all_outputs": False}
    return argparse.Namespace(**{**base, **kw})


# ----------------------------------------------------------------------------- messages


def test_parameters_in_backticks_become_flags():
    assert as_flags("`points` must be a whole number ≥ 1, got 0.") == "--points must be a whole number ≥ 1, got 0."
    assert as_flags("Set `checkpoint_seconds` or `memory_limit`.") == "Set --checkpoint-every or --memory-limit."
    assert as_flags("`torch_arguments` and `trust`") == "--torch-args and --trust-pickle"
    assert as_flags("`block` has no flag; nor `Points`.") == "`block` has no flag; nor `Points`."
    assert as_flags("no names here") == "no names here"


def test_every_flag_named_exists_and_every_setting_a_flag_sets_is_named():
    options = set()
    for action in build_parser()._actions:
        for sub in getattr(action, "choices", None) or {}:
            options |= {s for a in action.choices[sub]._actions for s in a.option_strings}
    assert set(FLAGS.values()) <= options
    cli_settings = {*DESIGN_OPTIONS, *(set(RUN_OPTIONS) - {"progress", "block"})}
    cli_settings |= set(ADVICE_SETTINGS) - {"max_candidates", "node_cap", "node_floor", "pilot"}
    assert cli_settings <= set(FLAGS)


def test_a_user_error_is_shown_with_flags(capsys):
    code = main(["audit", "clifuncs:two_outputs", "--dim", "2", "--no-save", "--checkpoint-every", "-1"])
    assert code == 2
    assert "netdim: error: --checkpoint-every must be a number ≥ 0, got -1.0." in capsys.readouterr().err


# ----------------------------------------------------------------------------- writing reports


def test_reports_are_written_atomically(tmp_path):
    path = tmp_path / "deep" / "r.json"
    assert _write_atomic(path, '{"a": 1}') == path
    assert json.loads(path.read_text()) == {"a": 1}
    assert _write_atomic(path, '{"a": 2}') == path  # an explicit path is replaced
    assert json.loads(path.read_text()) == {"a": 2}
    assert [p.name for p in path.parent.iterdir()] == ["r.json"]  # no temporary file left


def test_exclusive_writes_never_replace_a_file(tmp_path):
    path = tmp_path / "r.json"
    path.write_text("first")
    second = _write_atomic(path, "second", exclusive=True)
    third = _write_atomic(path, "third", exclusive=True)
    assert (second.name, third.name) == ("r-2.json", "r-3.json")
    assert [p.read_text() for p in (path, second, third)] == ["first", "second", "third"]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r-2.json", "r-3.json", "r.json"]


def test_default_names_never_collide_within_one_second(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    # two reports in the same second: the clock of the module always reads the same second
    monkeypatch.setattr(audit.cli.output, "time", types.SimpleNamespace(strftime=lambda fmt: "20260101-120000"))
    first = save_report(_result(), _args())
    second = save_report(_result(), _args())
    assert first == Path("reports/greenhouse_v1-20260101-120000.json")
    assert second == Path("reports/greenhouse_v1-20260101-120000-2.json")
    assert json.loads(first.read_text()) == json.loads(second.read_text()) == _result().to_dict()
    assert save_report(_result("pkg.mod:my func"), _args()).name == "my_func-20260101-120000.json"


def test_no_save_writes_nothing_unless_a_path_is_given(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert save_report(_result(), _args(no_save=True)) is None and not (tmp_path / "reports").exists()
    assert save_report(_result(), _args(no_save=True, json="r.json")) == Path("r.json")


def test_an_existing_report_survives_a_failed_write(tmp_path, monkeypatch):
    path = tmp_path / "r.json"
    path.write_text(json.dumps(_result("old").to_dict()))
    before = path.read_text()

    def full_disk(fd):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(audit.cli.output.os, "fsync", full_disk)
    with pytest.raises(UserError) as e:
        save_report(_result("new"), _args(json=str(path)))
    message = e.value.message
    assert f"could not be written to '{path}' (No space left on device). Nothing is lost" in message
    kept = Path(message.split("saved to '")[1].split("'")[0])
    try:
        assert json.loads(kept.read_text())["model"]["source"] == "new"
    finally:
        kept.unlink()
    assert path.read_text() == before and [p.name for p in tmp_path.iterdir()] == ["r.json"]


def test_as_a_last_resort_the_report_goes_to_standard_error(tmp_path, monkeypatch, capsys):
    def no_temp(*a, **k):
        raise OSError(errno.EROFS, "Read-only file system")

    monkeypatch.setattr(audit.cli.output.tempfile, "mkstemp", no_temp)
    with pytest.raises(UserError, match=r"nor to a temporary file\. Nothing is lost: its JSON is printed above"):
        save_report(_result(), _args(json=str(tmp_path / "r.json")))
    assert json.loads(capsys.readouterr().err) == _result().to_dict()


# ----------------------------------------------------------------------------- where --json may go


def test_check_report_target_refuses_what_is_not_a_report(tmp_path):
    model, spec = tmp_path / "m.onnx", tmp_path / "s.toml"
    model.write_bytes(b"onnx bytes")
    spec.write_text("[inputs]\n")
    notes = tmp_path / "notes.txt"
    notes.write_text("mine")
    report = tmp_path / "old.json"
    report.write_text(json.dumps(_result().to_dict(), indent=2))
    for target, needle in ((model, "is the model, input spec, checkpoint or another report of this run"),
                           (spec, "is the model, input spec, checkpoint or another report"),
                           (tmp_path, "is a folder"), (notes, "exists and is not a netdim report")):  # fmt: skip
        with pytest.raises(UserError, match=needle):
            check_report_target(str(target), [str(model), str(spec)])
    link = tmp_path / "link.json"
    link.symlink_to(model)
    with pytest.raises(UserError, match="is the model, input spec, checkpoint or another report"):
        check_report_target(str(link), [str(model)])
    check_report_target(str(report), [str(model)])  # an earlier report may be replaced
    check_report_target(str(tmp_path / "new.json"), [str(model)])
    check_report_target(None, [str(model)])


@pytest.fixture
def no_work(monkeypatch):
    """Every workflow fails the test if it is reached."""

    def reached(*a, **k):
        raise AssertionError("work started before the --json target was checked")

    for name in ("execute", "prepare", "compare_models", "prepare_advice", "execute_advice"):
        monkeypatch.setattr(audit.studies, name, reached)


def _files(tmp_path):
    model, spec = tmp_path / "model.onnx", tmp_path / "spec.toml"
    shutil.copy(ZOO / "greenhouse_v1.onnx", model)
    shutil.copy(ZOO / "greenhouse_v1.toml", spec)
    notes = tmp_path / "notes.txt"
    notes.write_text("my notes")
    return model, spec, notes


@pytest.mark.parametrize("command", ["audit", "advise", "compare"])
@pytest.mark.parametrize("target", ["model", "spec", "folder", "notes"])
def test_json_onto_the_model_spec_a_folder_or_another_file_is_refused_before_any_work(
    tmp_path, capsys, no_work, command, target
):
    model, spec, notes = _files(tmp_path)
    before = {p: p.read_bytes() for p in (model, spec, notes)}
    where = {"model": model, "spec": spec, "folder": tmp_path, "notes": notes}[target]
    models = [str(model)] * (2 if command == "compare" else 1)
    code = main([command, *models, "--inputs", str(spec), "--json", str(where), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and f"--json '{where}'" in err and "Traceback" not in err
    assert {p: p.read_bytes() for p in before} == before


# ----------------------------------------------------------------------------- printing


def test_print_result_in_each_format(capsys):
    print_result(_result(), _args(quiet=False, format="json"))
    assert json.loads(capsys.readouterr().out) == _result().to_dict()
    print_result(_result(), _args(quiet=False, format="markdown"))
    assert "|" in capsys.readouterr().out
    print_result(_result(), _args(quiet=True, format="json"))
    assert capsys.readouterr().out == ""
    print_result(_result(), _args(quiet=False))
    assert "not a safety validation" in " ".join(capsys.readouterr().out.split())


def test_json_onto_the_checkpoint_is_refused_before_any_work(tmp_path, capsys):
    path = str(tmp_path / "run.npz")
    code = main(["audit", "clifuncs:two_outputs", "--dim", "2", "--points", "64", "--checkpoint", path,
                 "--json", path, "--quiet"])  # fmt: skip
    assert code == 2 and f"--json '{path}'" in capsys.readouterr().err


def test_reports_are_written_with_the_permissions_of_a_new_file(tmp_path):
    """A report is for sharing: the umask decides, not the temporary file's 0600 (common practice, no source)."""
    import os
    import stat

    mask = os.umask(0o022)
    try:
        path = _write_atomic(tmp_path / "r.json", "{}")
    finally:
        os.umask(mask)
    assert stat.S_IMODE(path.stat().st_mode) == 0o644
