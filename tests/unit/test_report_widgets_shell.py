"""Tests of audit.report.widgets.shell: commands laid out so that a shell reads them back unchanged.

The reference is the shell itself: POSIX.1-2017, Shell Command Language, 2.2.1 "Escape Character
(Backslash)" (a backslash before a newline is a line continuation, removed before words are split;
inside single quotes it is not), checked by running the printed lines through bash where it is
installed, and by Python's ``shlex`` (POSIX mode) after removing the continuations as 2.2.1 says.
"""

from __future__ import annotations

import io
import shlex
import shutil
import subprocess

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from rich.console import Console

from audit.report.widgets import CommandText
from audit.report.widgets.shell import CONTINUATION, shell_lines, shell_words


def as_shell_reads(lines: list[str]) -> list[str]:
    """The words a POSIX shell reads from ``lines`` (continuations removed first, then split)."""
    return shlex.split("\n".join(lines).replace("\\\n", ""))


LONG = (
    "netdim audit /home/me/projects/zoo/digits_cnn.pt --inputs /home/me/projects/zoo/digits_cnn.toml "
    "--outputs digit_1,digit_7 --replicates 2 --layers features.1 --unit-detail features.1 "
    "--input-shape 1,8,8 --points 256"
)
QUOTED = (
    "netdim advise "
    + shlex.quote("/tmp/a very long folder/with spaces and more/and still more folders here/model file.onnx")
    + " --inputs "
    + shlex.quote("it's/" * 9 + "spec.toml")
    + " --torch-args "
    + shlex.quote('{"hidden": [1, 2]}')
)


def test_words_split_at_spaces_outside_quotes_and_keep_their_quotes():
    assert shell_words("a 'b c' \"d e\" f\\ g  h") == ["a", "'b c'", '"d e"', "f\\ g", "h"]


def test_a_command_that_fits_stays_on_one_line():
    assert shell_lines("netdim audit m.onnx --law normal", 80, 4) == ["    netdim audit m.onnx --law normal"]


@pytest.mark.parametrize("command", [LONG, QUOTED])
@pytest.mark.parametrize("width", [14, 20, 33, 40, 61, 80, 100])
def test_long_commands_break_into_lines_the_shell_joins_again(command, width):
    lines = shell_lines(command, width, 4)
    assert all(len(line) <= width for line in lines)
    assert as_shell_reads(lines) == shlex.split(command)
    assert all(line.endswith("\\") for line in lines[:-1]) and not lines[-1].endswith("\\")


def test_options_stay_with_their_values_and_continuations_are_indented():
    lines = shell_lines(LONG, 80, 4)
    assert len(lines) > 1 and lines[0].startswith("    netdim audit ")
    assert all(line.startswith(" " * (4 + CONTINUATION) + "--") for line in lines[1:])
    for line in lines:
        words = line.rstrip(" \\").split()
        assert not words[-1].startswith("--")  # never an option alone at the end of a line


words = st.text(st.sampled_from("abcé/_.-='\" x日"), min_size=1, max_size=40)


@settings(max_examples=150, deadline=None)
@given(st.lists(words, min_size=1, max_size=8), st.integers(min_value=12, max_value=90))
def test_any_quoted_words_survive_any_width(items, width):
    command = " ".join(["netdim", "audit", *(shlex.quote(w) for w in items)])
    lines = shell_lines(command, width, 4)
    assert as_shell_reads(lines) == ["netdim", "audit", *items]
    assert all(len(line) <= width for line in lines)


@pytest.mark.skipif(shutil.which("bash") is None, reason="bash is not installed")
@pytest.mark.parametrize("width", [20, 44, 80])
def test_bash_reads_the_printed_lines_as_the_command(width):
    lines = shell_lines(QUOTED, width, 4)
    script = "\n".join(lines).replace("netdim", "printf '%s\\0'", 1)
    out = subprocess.run(["bash", "-c", script], capture_output=True, check=True).stdout.decode()
    assert out.split("\0")[:-1] == shlex.split(QUOTED)[1:]


def test_the_renderable_never_lets_the_console_wrap_or_crop():
    console = Console(file=io.StringIO(), width=40, record=True, color_system=None)
    console.print(CommandText(QUOTED, indent=4))
    lines = console.export_text().rstrip("\n").split("\n")
    assert all(len(line) <= 40 for line in lines)
    assert as_shell_reads([line.rstrip() for line in lines]) == shlex.split(QUOTED)
