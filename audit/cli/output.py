"""What the command line prints and writes: reports, saved JSON, progress, and error messages.

Reports are written atomically (a temporary file in the same folder, then a
rename), so a failed write never destroys an existing report; when the chosen
place fails the report goes to a temporary file whose path is printed, and as
a last resort to standard error. Default report names never collide.
"""

from __future__ import annotations

import argparse
import contextlib
import json
import os
import re
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

from ..errors import UserError

__all__ = [
    "FLAGS",
    "as_flags",
    "check_report_target",
    "console",
    "json_stdout",
    "print_result",
    "progress",
    "save_report",
]

#: Parameters of the Python API and the flags that set them on the command line.
FLAGS = {
    "points": "--points",
    "replicates": "--replicates",
    "seed": "--seed",
    "sampler": "--sampler",
    "estimator": "--estimator",
    "layers": "--layers",
    "unit_detail": "--unit-detail",
    "checkpoint": "--checkpoint",
    "checkpoint_seconds": "--checkpoint-every",
    "cluster": "--cluster",
    "memory_limit": "--memory-limit",
    "time_budget": "--time-budget",
    "dim": "--dim",
    "inputs": "--inputs",
    "law": "--law",
    "torch_class": "--torch-class",
    "torch_arguments": "--torch-args",
    "input_shape": "--input-shape",
    "trust": "--trust-pickle",
    "output_map": "--output-map",
    "outputs": "--outputs",
    "mean_dimension": "--max-dimension-change",
    "dimension_rise": "--max-dimension-rise",
    "total_index": "--max-index-shift",
    "first_order": "--max-first-order-shift",
    "ranking": "--min-rank-agreement",
    "top_k_kept": "--min-top-k-kept",
    "layer_mean_dimension": "--max-layer-dimension-change",
    "variance": "--max-variance-change",
    "matter": "--matter-floor",
    "pairs": "--pairs",
    "top_k": "--top-k",
    "top": "--top",
    "nodes": "--nodes",
    "tolerance": "--tolerance",
    "freeze_threshold": "--freeze-threshold",
    "freeze_budget": "--freeze-budget",
    "gain_points": "--gain-points",
    "view": "--view",
    "out": "--out",
    "drop": "--drop",
    "fit": "--fit",
    "alpha": "--alpha",
    "max_levels": "--max-levels",
    "dependence": "--dependence",
    "knots": "--knots",
    "integrate": "--integrate",
    "freeze": "--freeze",
    "advice": "--advice",
    "path": "--out",
    "replace": "--replace",
    "output_dtype": "--output-precision",
    "gradient_points": "--gradient-points",
    "screen": "--screen",
    "indices": "--no-indices",
    "only": "--only",
    "max_evaluations": "--max-evaluations",
}


def as_flags(message: str) -> str:
    """A library message with its backticked parameter names (```points```) written as flags (``--points``)."""
    return re.sub(r"`([a-z_]+)`", lambda m: FLAGS.get(m.group(1), m.group(0)), message)


def console(quiet: bool) -> Any:
    """A report console on standard output (one writing nowhere when quiet)."""
    from ..report import make_console

    return make_console(file=open(os.devnull, "w") if quiet else None)  # lives as long as the run


#: Where ``--format json`` writes; while a run prints JSON, anything else written to standard
#: output (by a Python model, say) goes to standard error instead (see :func:`json_stdout`).
_json_out: Any = None


@contextlib.contextmanager
def json_stdout(active: bool):
    """Keep standard output for the JSON report: other writes go to standard error meanwhile."""
    global _json_out
    if not active:
        yield
        return
    _json_out = sys.stdout
    try:
        with contextlib.redirect_stdout(sys.stderr):
            yield
    finally:
        _json_out = None


def print_result(result: Any, args: argparse.Namespace) -> None:
    """Print a result as the chosen format asks (nothing when quiet)."""
    if args.quiet:
        return
    fmt = getattr(args, "format", "text")
    if fmt == "json":
        out = _json_out or sys.stdout
        out.write(json.dumps(result.to_dict(), indent=2) + "\n")
        out.flush()
        return
    from .. import report

    options = {"all_outputs": getattr(args, "all_outputs", False)} if result.kind in ("audit", "slopes") else {}
    if fmt == "markdown":
        print(report.markdown(result, **options))
    else:
        report.render(result, console(False), **options)


def _is_report(path: Path) -> bool:
    try:
        with path.open(encoding="utf-8") as f:
            head = f.read(4096)
        return '"tool": "netdim"' in head or '"tool":"netdim"' in head
    except (OSError, UnicodeDecodeError):
        return False


def same_file(a: Path, b: str | None) -> bool:
    """Whether ``a`` and ``b`` name the same file (by path, or by inode when both exist)."""
    if not b:
        return False
    with contextlib.suppress(OSError, ValueError):
        if a.resolve() == Path(b).resolve():
            return True
        return a.exists() and Path(b).exists() and os.path.samefile(a, b)
    return False


def check_target(flag: str, path: str | None, protected: list[Any], ours: Any, what: str, example: str) -> None:
    """Refuse, before any work, a report path (``flag``) that is one of ``protected``, a folder, or an
    existing file that ``ours`` (a predicate) does not recognise as a netdim ``what``."""
    if not path:
        return
    target = Path(path)
    if any(same_file(target, other) for other in protected):
        raise UserError(
            f"{flag} '{path}' is the model, input spec, checkpoint or another report of this run; writing the "
            f"{what} there would destroy it. Give another path, such as {example}."
        )
    if target.is_dir():
        raise UserError(f"{flag} '{path}' is a folder; give a file path such as {example}.")
    if target.exists() and not ours(target):
        raise UserError(
            f"{flag} '{path}' exists and is not a netdim {what}; netdim does not overwrite it. "
            "Give another path, or remove the file first."
        )


def check_report_target(path: str | None, protected: list[str]) -> None:
    """Refuse, before any work, a ``--json`` path that would overwrite something other than a netdim report."""
    check_target("--json", path, protected, _is_report, "report", "reports/run.json")


def _default_path(source: str) -> Path:
    stem = re.sub(r"[^A-Za-z0-9_.-]+", "_", Path(source.split(":")[-1]).stem or "model").strip("_") or "model"
    return Path("reports") / f"{stem}-{time.strftime('%Y%m%d-%H%M%S')}.json"


def _write_atomic(path: Path, text: str, *, exclusive: bool = False) -> Path:
    """Write ``text`` to ``path`` through a temporary file in the same folder; with
    ``exclusive``, never replace an existing file (a suffix -2, -3... is added)."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as f:
            f.write(text)
            f.flush()
            os.fsync(f.fileno())
        mask = os.umask(0)  # a report is for sharing: the permissions of a new file, not mkstemp's 0600
        os.umask(mask)
        os.chmod(tmp, 0o666 & ~mask)
        if not exclusive:
            os.replace(tmp, path)
            return path
        for k in range(1, 1000):
            target = path if k == 1 else path.with_name(f"{path.stem}-{k}{path.suffix}")
            try:
                os.link(tmp, target)  # fails when the name is taken: no report is ever replaced
            except FileExistsError:
                continue
            os.unlink(tmp)
            return target
        raise OSError(f"no free report name next to {path}")
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise


def save_report(result: Any, args: argparse.Namespace) -> Path | None:
    """Write the JSON report; if the chosen place fails, keep it in a temporary file (or on stderr)."""
    if getattr(args, "no_save", False) and not args.json:
        return None
    source = result.to_dict()["model"]
    source = source["new"]["source"] if "new" in source else source.get("source", "model")
    path = Path(args.json) if args.json else _default_path(source)
    text = json.dumps(result.to_dict(), indent=2)
    try:
        return _write_atomic(path, text, exclusive=not args.json)
    except OSError as exc:
        why = exc.strerror or str(exc)
    try:
        fd, tmp = tempfile.mkstemp(prefix="netdim-report-", suffix=".json")
        with os.fdopen(fd, "w", encoding="utf-8") as f:
            f.write(text)
    except OSError:
        sys.stderr.write(text + "\n")
        raise UserError(
            f"The report could not be written to '{path}' ({why}), nor to a temporary file. Nothing is lost: "
            "its JSON is printed above on standard error. Choose a writable place with --json PATH."
        ) from None
    raise UserError(
        f"The report could not be written to '{path}' ({why}). Nothing is lost: it was saved to '{tmp}' "
        "instead. Choose a writable place with --json PATH."
    )


class _Bar:
    """Progress bar on stderr for a run (nothing when stderr is not a terminal or when quiet)."""

    def __init__(self, args: argparse.Namespace, total: int) -> None:
        self._bar = None
        if not args.quiet:  # a quiet run never loads the terminal renderer (about 0.06 s of imports)
            from ..report import RunProgress

            self._bar = RunProgress(total)

    def __enter__(self) -> _Bar:
        if self._bar is not None:
            self._bar.__enter__()
        return self

    def __exit__(self, *exc: object) -> None:
        if self._bar is not None:
            self._bar.__exit__(*exc)

    def advance(self, n: int, phase: str) -> None:
        if self._bar is not None:
            self._bar.advance(n, phase=phase)

    @property
    def drawing(self) -> bool:
        """Whether the bar draws (standard error is a terminal and the run is not quiet)."""
        return self._bar is not None and self._bar.enabled


def progress(args: argparse.Namespace, total: int) -> _Bar:
    """A progress bar for ``total`` model evaluations."""
    return _Bar(args, total)
