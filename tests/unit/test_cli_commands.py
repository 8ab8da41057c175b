"""The subcommands (audit.cli.commands): argument conversions, and the exit code of a failed gate."""

import argparse

import pytest

from audit.cli import main
from audit.cli.commands import EXIT_GATE, EXIT_OK, EXIT_RUNTIME, EXIT_USAGE, _json_arg, _memory_limit, _shape_arg
from audit.errors import UserError


def test_exit_codes():
    assert (EXIT_OK, EXIT_RUNTIME, EXIT_USAGE, EXIT_GATE) == (0, 1, 2, 3)


def test_json_arguments_must_be_objects():
    assert _json_arg('{"hidden": 32}', "--torch-args") == {"hidden": 32}
    assert _json_arg(None, "--torch-args") == {} and _json_arg("", "--torch-args") == {}
    with pytest.raises(UserError, match=r"--torch-args must be a JSON object like '\{\"hidden\": 32\}'; got '\[1\]'"):
        _json_arg("[1]", "--torch-args")
    with pytest.raises(UserError, match="must be a JSON object"):
        _json_arg("{hidden: 32}", "--torch-args")


def test_input_shapes_are_positive_whole_numbers():
    assert _shape_arg(["1,8,8"]) == (1, 8, 8) and _shape_arg(None) is None
    for bad, needle in (("1,x", "whole numbers separated by commas"), ("0,3", "positive whole numbers")):
        with pytest.raises(UserError, match=needle):
            _shape_arg([bad])


def test_input_shapes_per_named_tensor():
    assert _shape_arg(["a=16,4", "b=3"]) == {"a": (16, 4), "b": (3,)}
    with pytest.raises(UserError, match="names the input tensor 'a' more than once"):
        _shape_arg(["a=3", "b=2", "a=2"])
    with pytest.raises(UserError, match="NAME=D1,D2 when there are several"):
        _shape_arg(["3", "4"])
    with pytest.raises(UserError, match="every --input-shape as NAME=D1,D2"):
        _shape_arg(["a=3", "4"])


def test_the_memory_limit_is_given_in_gib():
    assert _memory_limit(argparse.Namespace(memory_limit=None)) is None
    assert _memory_limit(argparse.Namespace(memory_limit=1.5)) == 3 * 2**29
    with pytest.raises(UserError, match=r"`memory_limit` must be a number > 0, got 0\.0\. \(GiB\)"):
        _memory_limit(argparse.Namespace(memory_limit=0.0))


def test_bad_gain_points_are_refused(capsys):
    code = main(["advise", "clifuncs:two_outputs", "--dim", "2", "--no-save", "--gain-points", "256,x"])
    assert code == 2 and "--gain-points takes whole numbers separated by commas, got '256,x'" in capsys.readouterr().err


def test_a_failed_gate_exits_3_after_saving_the_report(tmp_path, capsys):
    out = tmp_path / "c.json"
    code = main([
        "compare", "clifuncs:additive6", "clifuncs:additive6_plus_product", "--dim", "6", "--points", "128",
        "--seed", "1", "--max-dimension-rise", "0", "--json", str(out), "--quiet",
    ])  # fmt: skip
    assert code == 3 and out.exists()
    err = capsys.readouterr().err
    assert err.startswith("netdim: gate failed: ") and "dimension_rise" in err


def test_an_unexpected_failure_exits_1_and_asks_for_a_report(capsys, monkeypatch):
    import audit.cli.commands

    def broken(args):
        raise ZeroDivisionError("division by zero")

    monkeypatch.setitem(audit.cli.commands.COMMANDS, "layers", broken)
    assert main(["layers", "m"]) == 1
    err = capsys.readouterr().err
    assert "unexpected failure: ZeroDivisionError: division by zero" in err and "--debug" in err


def test_a_reader_that_stops_reading_never_costs_the_saved_reports(tmp_path, monkeypatch):
    from reportdata import make_comparison

    from audit.cli import commands

    def closed(result, args):
        raise BrokenPipeError

    monkeypatch.setattr(commands, "print_result", closed)
    args = argparse.Namespace(json=str(tmp_path / "r.json"), html=str(tmp_path / "r.html"), quiet=False,
                              format="text", no_save=False)  # fmt: skip
    with pytest.raises(BrokenPipeError):  # main() turns it into a quiet exit 0
        commands._finish(make_comparison(), args)
    assert (tmp_path / "r.json").is_file() and (tmp_path / "r.html").is_file()


def test_html_targets_that_would_destroy_an_input_are_refused_before_any_work(tmp_path, capsys):
    spec = tmp_path / "s.toml"
    spec.write_text("[inputs]\nlaw = 'uniform'\n", encoding="utf-8")
    code = main(["audit", "tests.clifuncs:log_first", "--dim", "2", "--inputs", str(spec), "--html", str(spec)])
    assert code == EXIT_USAGE and "--html" in capsys.readouterr().err
    assert spec.read_text(encoding="utf-8") == "[inputs]\nlaw = 'uniform'\n"


def test_a_dim_that_disagrees_with_a_model_file_is_refused(capsys):
    import os

    import audit

    path = os.path.join(os.path.dirname(audit.__file__), os.pardir, "model_zoo", "greenhouse_v1.onnx")
    have = len(audit.open_model(path).feature_names())
    code = main(["audit", path, "--dim", str(have + 1), "--law", "uniform", "--points", "64", "--no-save", "-q"])
    err = capsys.readouterr().err
    assert code == EXIT_USAGE and f"--dim is {have + 1}, but the model file" in err and f"takes {have} inputs" in err
    assert "Traceback" not in err
    assert main(["audit", path, "--dim", str(have), "--law", "uniform", "--points", "64", "--replicates", "2",
                 "--no-save", "-q"]) == EXIT_OK  # fmt: skip
