"""The command line's entry point (audit.cli.main): exit codes and messages for every way a run ends."""

import signal

import pytest

import audit.cli
import audit.cli.commands
from audit.cli import main
from audit.errors import UserError


@pytest.fixture
def command(monkeypatch):
    """Replace the `layers` subcommand by a function raising what a test asks."""

    def install(exc):
        def run(args):
            raise exc

        monkeypatch.setitem(audit.cli.commands.COMMANDS, "layers", run)

    return install


def test_a_user_error_exits_2_with_flags_and_no_traceback(command, capsys):
    command(UserError("`points` must be a whole number ≥ 1, got 0."))
    assert main(["layers", "m"]) == 2
    err = capsys.readouterr().err
    assert err == "netdim: error: --points must be a whole number ≥ 1, got 0.\n"


def test_debug_shows_the_traceback(command, capsys):
    command(UserError("bad"))
    assert main(["layers", "m", "--debug"]) == 2
    assert "Traceback" in capsys.readouterr().err


def test_an_interrupt_exits_130_and_says_the_checkpoint_resumes(command, capsys):
    command(KeyboardInterrupt())
    assert main(["layers", "m"]) == 130
    err = capsys.readouterr().err
    assert "netdim: interrupted" in err and "resumes with the same command" in err


def test_sigterm_becomes_an_interrupt_that_exits_143(command, capsys):
    before = signal.getsignal(signal.SIGTERM)
    try:
        command(audit.cli._Terminated())
        assert main(["layers", "m"]) == 143
        handler = signal.getsignal(signal.SIGTERM)
        with pytest.raises(KeyboardInterrupt):  # raised where the run is, so finished work is saved on the way out
            handler(signal.SIGTERM, None)
    finally:
        signal.signal(signal.SIGTERM, before)


def test_a_closed_pipe_ends_quietly(command, capsys, monkeypatch):
    command(BrokenPipeError())
    monkeypatch.setattr(audit.cli, "_quiet_pipe", lambda: None)
    assert main(["layers", "m"]) == 0
    assert capsys.readouterr().err == ""
