"""Command lines a report suggests as the next step (``netdim advise ...``, a rerun with more points).

A suggestion repeats everything the run it comes from needed, so that it can
be pasted as it is (each word quoted for a POSIX shell):

- the model and its input options: the spec file when the run recorded one,
  ``--law`` (and ``--dim`` for a Python callable) when every input has the
  standard law of that name, and the placeholder ``--inputs SPEC.toml``
  otherwise;
- how the model was opened (``--input-shape``, ``--torch-class``,
  ``--torch-args``, ``--trust-pickle``) and the run's choices (``--outputs``,
  and for an audit ``--layers`` and ``--unit-detail``), as the JSON report
  records them under ``design.options``;
- the design settings that differ from the defaults (``--replicates``,
  ``--sampler``, and for an audit ``--estimator``).

Terminal reports lay a long command out on several lines continued with a
backslash (:mod:`audit.report.widgets.shell`).
"""

from __future__ import annotations

import json
import shlex
from collections.abc import Mapping
from typing import Any

from .describe import describe_law

__all__ = ["DESIGN_DEFAULTS", "input_options", "run_options", "suggest"]

_STANDARD_LAWS = {"normal(0, 1)": "normal", "uniform(0, 1)": "uniform"}
#: Design settings of the command line's defaults (``netdim audit --help``), left out of suggestions.
DESIGN_DEFAULTS = {"replicates": 8, "sampler": "sobol", "estimator": "jansen"}
#: Options each command accepts beyond the model, the inputs and ``--points``.
_ACCEPTS = {
    "audit": ("loading", "outputs", "layers", "unit_detail", "replicates", "sampler", "estimator"),
    "advise": ("loading", "outputs", "replicates", "sampler"),
    "compare": ("loading", "outputs", "layers", "replicates", "sampler", "estimator"),
}


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


def _shape(value: Any) -> list[str]:
    if isinstance(value, Mapping):
        return [f"--input-shape {shlex.quote(f'{name}=' + ','.join(str(v) for v in dims))}"
                for name, dims in value.items()]
    return [f"--input-shape {','.join(str(v) for v in value)}"]


def _loading(options: Mapping[str, Any]) -> list[str]:
    out: list[str] = []
    if options.get("input_shape"):
        out += _shape(options["input_shape"])
    if options.get("torch_class"):
        out.append(f"--torch-class {shlex.quote(str(options['torch_class']))}")
    if options.get("torch_arguments"):
        out.append(f"--torch-args {shlex.quote(json.dumps(options['torch_arguments'], separators=(',', ':')))}")
    if options.get("trust"):
        out.append("--trust-pickle")
    return out


def run_options(result: Any, verb: str) -> list[str]:
    """The options beyond model, inputs and points that ``netdim VERB`` needs to repeat ``result``'s run.

    Parameters
    ----------
    result : AuditResult or AdviceResult
        The run (its ``design`` and ``design.options``).
    verb : {"audit", "advise", "compare"}
        The command suggested: each takes only the options it accepts.

    Returns
    -------
    list of str
        Options with their values, quoted for a POSIX shell, in the order of ``netdim VERB --help``.
    """
    design = result.design or {}
    options = design.get("options") or {}
    accepts = _ACCEPTS.get(verb, ())
    out: list[str] = []
    if "outputs" in accepts and options.get("outputs"):
        out.append(f"--outputs {shlex.quote(','.join(str(x) for x in options['outputs']))}")
    for key in ("replicates", "sampler", "estimator"):
        value = design.get(key)
        if key in accepts and value is not None and value != DESIGN_DEFAULTS[key]:
            out.append(f"--{key} {shlex.quote(str(value))}")
    if "layers" in accepts and options.get("layers"):
        out.append(f"--layers {shlex.quote(str(options['layers']))}")
    if "unit_detail" in accepts:
        out += [f"--unit-detail {shlex.quote(str(name))}" for name in options.get("unit_detail") or []]
    if "loading" in accepts:
        out += _loading(options)
    return out


def suggest(result: Any, verb: str, *extra: str) -> tuple[str, ...]:
    """``netdim VERB MODEL INPUT-OPTIONS RUN-OPTIONS EXTRA...`` for the model of ``result``.

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
    words = ["netdim", verb, shlex.quote(str(source)), input_options(result), *run_options(result, verb), *extra]
    return (" ".join(words),)
