"""The budget options of netdim advise and what goes to standard error (audit.cli.advise)."""

import argparse

import pytest

from audit.cli import advise
from audit.cli.parser import build_parser


def _args(*extra):
    return build_parser().parse_args(["advise", "m:f", *extra])


def test_only_and_max_evaluations_reach_the_workflow():
    args = _args("--only", "freezing", "--max-evaluations", "2_000_000")
    assert advise.budget_settings(args) == {"only": "freezing", "max_evaluations": 2_000_000}
    assert advise.budget_settings(_args()) == {"only": None, "max_evaluations": None}
    assert advise.ONLY_CHOICES == ("freezing", "pre-integration")


@pytest.mark.parametrize("extra", [("--only", "gain"), ("--max-evaluations", "0"), ("--max-evaluations", "1e6")])
def test_bad_values_are_usage_errors(extra, capsys):
    with pytest.raises(SystemExit) as e:
        _args(*extra)
    assert e.value.code == 2 and "error" in capsys.readouterr().err


def test_plan_lines_unless_quiet_and_phase_lines_only_without_a_bar(capsys):
    quiet = advise.stderr_lines(argparse.Namespace(quiet=True), drawing=False)
    assert quiet == {"log": None, "phase_lines": None}
    on_terminal = advise.stderr_lines(argparse.Namespace(quiet=False), drawing=True)
    assert on_terminal["log"] is not None and on_terminal["phase_lines"] is None
    piped = advise.stderr_lines(argparse.Namespace(quiet=False), drawing=False)
    piped["phase_lines"]("netdim advise: audit started")
    captured = capsys.readouterr()
    assert captured.err == "netdim advise: audit started\n" and captured.out == ""
