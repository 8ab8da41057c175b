"""The ``netdim`` command line: argument parsing (:mod:`~.parser`), subcommands (:mod:`~.commands`),
printing and saving (:mod:`~.output`); no numerics.

Exit codes: 0 success, 1 runtime failure, 2 bad usage or bad input,
3 a compare gate failed, 130 / 143 interrupted (SIGINT / SIGTERM).
"""

from __future__ import annotations

import os
import signal
import sys
import threading
import traceback
from collections.abc import Sequence
from typing import Any

from ..errors import UserError
from .commands import COMMANDS, EXIT_GATE, EXIT_OK, EXIT_RUNTIME, EXIT_USAGE
from .output import as_flags, json_stdout
from .parser import build_parser

__all__ = ["EXIT_GATE", "EXIT_OK", "EXIT_RUNTIME", "EXIT_USAGE", "build_parser", "main"]


class _Terminated(KeyboardInterrupt):
    """SIGTERM, raised where the run is, so that finished work is saved on the way out."""


def _interrupt_on_sigterm() -> None:
    """Turn SIGTERM into an interrupt, so a killed run saves its checkpoint first."""
    if threading.current_thread() is threading.main_thread():

        def handler(signum: int, frame: Any) -> None:
            raise _Terminated

        signal.signal(signal.SIGTERM, handler)


def _quiet_pipe() -> None:
    """Standard output was closed by the reader (``| head``): stop writing, quietly."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError):
        pass


def main(argv: Sequence[str] | None = None) -> int:
    """Run ``netdim``; return the exit code."""
    parser = build_parser()
    args = parser.parse_args(argv)
    debug = getattr(args, "debug", False)
    _interrupt_on_sigterm()
    try:
        with json_stdout(getattr(args, "format", "text") == "json" and not getattr(args, "quiet", False)):
            code = COMMANDS[args.command](args)
        sys.stdout.flush()
        return code
    except BrokenPipeError:
        _quiet_pipe()
        return EXIT_OK
    except SystemExit as exc:  # netdim's commands never exit themselves: this came from a model's code
        if debug:
            traceback.print_exc()
        print(
            f"netdim: error: the model's own code called sys.exit({exc.code!r}) during the run, so netdim "
            "stopped without a result. A Python model must return its values (or raise an error), not exit.",
            file=sys.stderr,
        )
        return EXIT_USAGE
    except UserError as exc:
        if debug:
            traceback.print_exc()
        print(f"netdim: error: {as_flags(exc.message)}", file=sys.stderr)
        return exc.exit_code
    except KeyboardInterrupt as exc:
        print(
            "netdim: interrupted. Work saved in a --checkpoint file (if one was given) resumes with the same command.",
            file=sys.stderr,
        )
        return 143 if isinstance(exc, _Terminated) else 130
    except Exception as exc:
        if debug:
            traceback.print_exc()
        print(
            f"netdim: unexpected failure: {type(exc).__name__}: {exc}. This is not a problem with your "
            "input as far as netdim can tell; run again with --debug for the traceback and report it.",
            file=sys.stderr,
        )
        return EXIT_RUNTIME
