"""The argument parser (audit.cli.parser): each subcommand accepts only the options it honours."""

import argparse
import inspect
import re

import pytest

from audit.cli import advise, commands, fromdata, html, output, simplify
from audit.cli.parser import build_parser
from audit.version import __version__

PARSER = build_parser()


def _parse(*args):
    return PARSER.parse_args(list(args))


def _refused(capsys, *args) -> str:
    with pytest.raises(SystemExit) as e:
        _parse(*args)
    assert e.value.code == 2
    return capsys.readouterr().err


@pytest.mark.parametrize(
    "args,needle",
    [
        (["advise", "m", "--layers", "x"], "unrecognized arguments: --layers x"),
        (["advise", "m", "--unit-detail", "x"], "unrecognized arguments: --unit-detail x"),
        (["advise", "m", "--output-map", "a=b"], "unrecognized arguments"),
        (["compare", "a", "b", "--unit-detail", "x"], "unrecognized arguments: --unit-detail x"),
        (["compare", "a", "b", "--all-outputs"], "unrecognized arguments: --all-outputs"),
        (["compare", "a", "b", "--nodes", "2"], "unrecognized arguments: --nodes 2"),
        (["audit", "m", "--top", "3"], "unrecognized arguments: --top 3"),
        (["audit", "m", "--independent"], "unrecognized arguments: --independent"),
        (["audit", "m", "--gain-points", "256,1024"], "unrecognized arguments"),
        (["audit", "m", "--max-index-shift", "0.1"], "unrecognized arguments"),
        (["layers", "m", "--points", "64"], "unrecognized arguments: --points 64"),
        (["layers", "m", "--law", "uniform"], "unrecognized arguments: --law uniform"),
        (["layers", "m", "--json", "x.json"], "unrecognized arguments"),
        (["show", "r.json", "--json", "x.json"], "unrecognized arguments"),
        (["show", "r.json", "--format", "json"], "invalid choice: 'json'"),
        (["demo", "--cluster", "local"], "unrecognized arguments: --cluster local"),
        (["demo", "--inputs", "s.toml"], "unrecognized arguments"),
        (["demo", "--checkpoint", "c.npz"], "unrecognized arguments"),
        (["audit", "m", "--format", "html"], "invalid choice: 'html'"),
    ],
)
def test_options_a_subcommand_does_not_honour_are_refused(capsys, args, needle):
    assert needle in _refused(capsys, *args)


@pytest.mark.parametrize(
    "args,needle",
    [
        (["audit", "m", "--seed", "-1"], "must be ≥ 0, got -1"),
        (["audit", "m", "--seed", "x"], "expected a non-negative whole number, got 'x'"),
        (["audit", "m", "--dim", "0"], "must be at least 1, got 0"),
        (["audit", "m", "--points", "many"], "invalid int value: 'many'"),
        (["compare", "a", "b", "--top-k", "0"], "must be at least 1"),
        (["advise", "m", "--top", "0"], "must be at least 1"),
        (["advise", "m", "--nodes", "2.5"], "expected a whole number, got '2.5'"),
        (["audit", "m", "--inputs", "s.toml", "--law", "normal"], "not allowed with argument --inputs"),
        (["audit"], "the following arguments are required: MODEL"),
        ([], "the following arguments are required: COMMAND"),
    ],
)
def test_values_are_checked_by_the_parser(capsys, args, needle):
    assert needle in _refused(capsys, *args)


def test_version_prints_the_one_version(capsys):
    with pytest.raises(SystemExit) as e:
        _parse("--version")
    assert e.value.code == 0
    assert capsys.readouterr().out == f"netdim {__version__}\n"


def test_defaults():
    a = _parse("audit", "m")
    # design options not given are left to DesignOptions (so a baseline's design can be told from a choice)
    assert (a.points, a.replicates, a.seed, a.sampler, a.estimator) == (None, None, None, None, None)
    from audit.cli.commands import _design

    d0 = _design(a)
    assert (d0.points, d0.replicates, d0.sampler, d0.estimator) == (1024, 8, "sobol", "jansen")
    assert (a.layers, a.unit_detail, a.checkpoint_every, a.format, a.json) == ("activations", [], 30.0, "text", None)
    assert _parse("audit", "m", "--unit-detail", "a", "--unit-detail", "b,c").unit_detail == ["a", "b,c"]
    c = _parse("compare", "a", "b")
    assert (c.top_k, c.independent, c.gate_dimension_rise, c.output_map, c.gates) == (None, False, None, None, None)
    ad = _parse("advise", "m")
    assert (ad.top, ad.nodes, ad.tolerance, ad.freeze_threshold, ad.freeze_budget, ad.gain_points) == (
        3, 32, 1e-3, 1e-3, 0.01, None
    )  # fmt: skip
    d = _parse("demo")
    assert (d.points, d.replicates, d.seed, d.no_save, d.json) == (1024, 8, 2026, False, None)


def _subparsers() -> dict[str, argparse.ArgumentParser]:
    action = next(a for a in PARSER._actions if isinstance(a, argparse._SubParsersAction))
    return dict(action.choices)


#: The functions each subcommand runs (its command and the helpers that read ``args``).
READERS = {
    "audit": [commands.cmd_audit, commands._spec, commands._open, commands._design, commands._run_options,
              commands._memory_limit, commands._outputs, commands._finish, output.print_result, output.save_report,
              commands._design_given, html.write_html],
    "compare": [commands.cmd_compare, commands._spec, commands._open, commands._design, commands._run_options,
                commands._memory_limit, commands._outputs, commands._finish, output.print_result,
                output.save_report, commands._design_given, commands._gates, html.write_html],
    "advise": [commands.cmd_advise, commands._spec, commands._open, commands._design, commands._run,
               commands._run_options, commands._memory_limit, commands._outputs, commands._finish,
               output.print_result, output.save_report, commands._design_given, advise.budget_settings,
               advise.stderr_lines, html.write_html],
    "simplify": [commands.cmd_simplify, commands._spec, commands._open, commands._design, commands._run_options,
                 commands._memory_limit, simplify.run_simplify, output.print_result, output.save_report,
                 commands._design_given, html.write_html],
    "slopes": [commands.cmd_slopes, commands._spec, commands._open, commands._design, commands._run,
               commands._run_options, commands._memory_limit, commands._outputs, commands._finish,
               output.print_result, output.save_report, commands._design_given, html.write_html],
    "layers": [commands.cmd_layers, commands._spec, commands._open],
    "show": [commands.cmd_show, output.print_result, html.write_html],
    "demo": [commands.cmd_demo, commands._finish, output.print_result, output.save_report, html.write_html],
    "inputs-from-data": [fromdata.cmd_inputs_from_data],
}  # fmt: skip


@pytest.mark.parametrize("command", list(READERS))
def test_every_option_a_subcommand_accepts_is_read_by_it(command):
    source = "\n".join(inspect.getsource(f) for f in READERS[command])
    read = set(re.findall(r"args\.(\w+)", source)) | set(re.findall(r'getattr\(args, "(\w+)"', source))
    read |= {"debug", "command"}  # read by audit.cli.main
    accepted = {a.dest for a in _subparsers()[command]._actions if a.dest != "help"}
    assert accepted - read == set(), f"{command} accepts options it never reads"
    assert set(_subparsers()) == set(READERS) == set(commands.COMMANDS)
