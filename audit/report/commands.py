"""Command lines a report suggests as the next step (``netdim advise ...``, a rerun with more points).

A suggestion repeats the model and the input options of the run it comes
from, so that it can be pasted as it is: the spec file when the run recorded
one (quoted for a POSIX shell), ``--law`` (and ``--dim`` for a Python
callable) when every input has the standard law of that name, and the
placeholder ``--inputs SPEC.toml`` otherwise.
"""

from __future__ import annotations

import shlex
from typing import Any

from .describe import describe_law

__all__ = ["input_options", "suggest"]

_STANDARD_LAWS = {"normal(0, 1)": "normal", "uniform(0, 1)": "uniform"}


def input_options(result: Any) -> str:
    """The input options that reproduce the laws of ``result`` (an audit or advise result).

    Returns
    -------
    str
        ``--inputs 'my specs/g.toml'``, ``--law normal --dim 8`` or ``--inputs SPEC.toml``.
    """
    spec = (result.design or {}).get("spec")
    if spec:
        return f"--inputs {shlex.quote(str(spec))}"
    laws = {describe_law(e) for e in result.inputs}
    law = _STANDARD_LAWS.get(next(iter(laws), ""))
    if len(laws) == 1 and law:
        dim = f" --dim {len(result.inputs)}" if (result.model or {}).get("format") == "python" else ""
        return f"--law {law}{dim}"
    return "--inputs SPEC.toml"


def suggest(result: Any, verb: str, *extra: str) -> tuple[str, ...]:
    """``netdim VERB MODEL INPUT-OPTIONS EXTRA...`` for the model of ``result``.

    Parameters
    ----------
    result : AuditResult
        The run the suggestion follows.
    verb : str
        The command (``"audit"``, ``"advise"``).
    *extra : str
        Further options, already quoted.

    Returns
    -------
    tuple of str
        One command line, or none when the result does not record its model's source.
    """
    source = (result.model or {}).get("source")
    if not source:
        return ()
    return (" ".join(["netdim", verb, shlex.quote(str(source)), input_options(result), *extra]),)
