"""What the terminal prints can be used as it is: suggested commands paste back, a closed pipe ends quietly.

Commands are read back as a POSIX shell reads them (POSIX.1-2017, Shell Command Language, 2.2.1:
a backslash before a newline continues the line) and given to netdim's own argument parser.
"""

from __future__ import annotations

import json
import shlex
import subprocess
import sys
from pathlib import Path

import pytest

from audit.cli import main
from audit.cli.parser import build_parser

ROOT = Path(__file__).resolve().parents[2]
ZOO = ROOT / "model_zoo"


def printed_commands(text: str) -> list[str]:
    """The suggested commands of a printed report: ``netdim`` lines under a finding, with their continuations."""
    lines, out, current = text.splitlines(), [], None
    for line in lines:
        if current is not None:
            current.append(line)
        elif line.startswith("    netdim "):
            current = [line]
        if current is not None and not line.endswith("\\"):
            out.append("\n".join(current).replace("\\\n", ""))
            current = None
    return out


@pytest.fixture(scope="module")
def torch_audit(tmp_path_factory):
    """A TorchScript CNN, which needs --input-shape, audited with layer, unit and output choices."""
    out = tmp_path_factory.mktemp("paste") / "cnn.json"
    argv = ["audit", str(ZOO / "digits_cnn.pt"), "--inputs", str(ZOO / "digits_cnn.toml"), "--input-shape", "1,8,8",
            "--points", "64", "--replicates", "3", "--seed", "5", "--layers", "features.1", "--unit-detail",
            "features.1", "--outputs", "digit_1,digit_7", "--json", str(out)]  # fmt: skip
    return argv, out


def test_every_command_printed_at_80_columns_parses_with_every_option_the_run_needed(torch_audit, capsys):
    argv, _ = torch_audit
    assert main(argv) == 0
    text = capsys.readouterr().out
    assert all(len(line) <= 80 for line in text.splitlines())
    commands = printed_commands(text)
    verbs = sorted(shlex.split(c)[1] for c in commands)
    assert verbs == ["advise", "audit"]  # a rerun with more points, and the advice
    parser = build_parser()
    for command in commands:
        words = shlex.split(command)
        assert words[0] == "netdim"
        args = parser.parse_args(words[1:])  # argparse exits (failing the test) on anything it does not accept
        assert args.model == str(ZOO / "digits_cnn.pt") and args.inputs == str(ZOO / "digits_cnn.toml")
        assert args.input_shape == ["1,8,8"] and args.outputs == "digit_1,digit_7" and args.replicates == 3
        if args.command == "audit":
            assert args.layers == "features.1" and args.unit_detail == ["features.1"] and args.points == 256


def test_the_demo_next_steps_paste_back(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    assert main(["demo", "--points", "64", "--replicates", "2", "--no-save"]) == 0
    text = capsys.readouterr().out
    tail = text[text.index("Next: compare"):].splitlines()
    joined = "\n".join(tail).replace("\\\n", "")
    commands = [line.strip() for line in joined.splitlines() if line.strip().startswith("netdim ")]
    assert [shlex.split(c)[1] for c in commands] == ["compare", "advise"]
    for command in commands:
        build_parser().parse_args(shlex.split(command)[1:])
    assert all(len(line) <= 80 for line in tail)


def test_a_closed_pipe_ends_quietly_with_status_0(tmp_path):
    sys.path.insert(0, str(ROOT / "tests" / "unit"))
    from reportdata import grid_result

    big = tmp_path / "big.json"  # far more text than a pipe holds, so the writer meets the closed pipe
    big.write_text(json.dumps(grid_result({}, n_out=120).to_dict()), encoding="utf-8")
    run = subprocess.run(
        ["bash", "-o", "pipefail", "-c", f"{shlex.quote(sys.executable)} -m audit show {shlex.quote(str(big))} "
         "--all-outputs | head -1"],
        capture_output=True, text=True, cwd=ROOT, timeout=300,
    )  # fmt: skip
    assert run.returncode == 0 and run.stderr == ""
    assert run.stdout.startswith("Model and run") and run.stdout.count("\n") == 1
