"""The ``netdim`` command line: argument parsing, exit codes and wiring; no numerics.

Exit codes: 0 success, 1 runtime failure, 2 bad usage or bad input,
3 a compare gate failed.
"""

from __future__ import annotations

import argparse
import json
import os
import re
import sys
import tempfile
import time
import traceback
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from .errors import UserError

__all__ = ["build_parser", "main"]

EXIT_OK, EXIT_RUNTIME, EXIT_USAGE, EXIT_GATE = 0, 1, 2, 3

ZOO = Path(__file__).resolve().parent.parent / "model_zoo"


def _positive_int(text: str) -> int:
    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got '{text}'") from None
    if v < 1:
        raise argparse.ArgumentTypeError(f"must be at least 1, got {v}")
    return v


def _seed(text: str) -> int:
    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a non-negative whole number, got '{text}'") from None
    if v < 0:
        raise argparse.ArgumentTypeError(f"must be ≥ 0, got {v}")
    return v


def _add_common(p: argparse.ArgumentParser) -> None:
    p.add_argument("--debug", action="store_true", help="show tracebacks of errors")
    p.add_argument("--quiet", "-q", action="store_true", help="print nothing but errors")


def _add_model_options(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("model loading")
    g.add_argument("--torch-class", metavar="MODULE:CLASS", help="class to rebuild a state-dict file")
    g.add_argument("--torch-args", metavar="JSON", help="constructor keyword arguments for --torch-class, as JSON")
    g.add_argument("--input-shape", metavar="D1,D2,...", help="non-batch input shape of a Torch file, e.g. 1,8,8")
    g.add_argument(
        "--trust-pickle",
        action="store_true",
        help="allow loading a whole pickled Torch module (runs code from the file: only for files you trust)",
    )


def _add_design_options(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("inputs and design")
    src = g.add_mutually_exclusive_group()
    src.add_argument("--inputs", metavar="SPEC.toml", help="input spec file: names and laws of the inputs")
    src.add_argument("--law", help="every input N(0, 1) ('normal') or U[0, 1] ('uniform'); default normal")
    g.add_argument("--dim", type=_positive_int, help="number of inputs of a Python callable")
    g.add_argument("--points", type=int, default=1024, help="points N per randomization, a power of two (default 1024)")
    g.add_argument("--replicates", type=int, default=8, help="independent randomizations R (default 8)")
    g.add_argument("--seed", type=_seed, help="seed for the randomizations (default: fresh, recorded in the report)")
    g.add_argument("--sampler", default="sobol", help="'sobol' (scrambled Sobol' points, default) or 'mc'")
    g.add_argument(
        "--estimator",
        default="jansen",
        help="'jansen' (every index, N(d+2) evaluations; default) or 'fast' (mean dimension only, 2N)",
    )
    g.add_argument("--checkpoint", metavar="PATH", help="save finished work there and resume from it")
    g.add_argument(
        "--memory-limit", type=float, metavar="GIB", help="memory the run may use (default: what is available)"
    )
    g.add_argument(
        "--cluster",
        metavar="ADDRESS",
        help="run the work on dask.distributed: 'local', 'local:N' (N worker processes) or a scheduler address",
    )


def _add_output_options(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("report")
    g.add_argument("--json", metavar="PATH", help="write the JSON report there (default: under reports/)")
    g.add_argument("--no-save", action="store_true", help="do not save the JSON report")
    g.add_argument("--format", default="text", choices=("text", "markdown", "json"), help="what to print")
    g.add_argument("--all-outputs", action="store_true", help="detail every output, not just the first few")


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of ``netdim``."""
    parser = argparse.ArgumentParser(
        prog="netdim",
        description="Audit a trained model by its ANOVA structure: mean dimension and Sobol' indices "
        "of every output and hidden unit, with confidence intervals from randomized quasi-Monte Carlo.",
    )
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True

    a = sub.add_parser("audit", help="measure a model's outputs and hidden layers")
    a.add_argument("model", metavar="MODEL", help="model file (.onnx, .pt, .pt2) or package.module:function")
    _add_design_options(a)
    a.add_argument(
        "--layers", default="activations", help="hidden layers: activations (default), all, none, or NAME,NAME"
    )
    a.add_argument(
        "--unit-detail",
        metavar="LAYER",
        action="append",
        default=[],
        help="also rank inputs for every unit of this layer (costs d sums per unit)",
    )
    _add_model_options(a)
    _add_output_options(a)
    _add_common(a)

    c = sub.add_parser("compare", help="compare two model versions on the same points, with pipeline gates")
    c.add_argument("old", metavar="OLD", help="the current model (file or package.module:function)")
    c.add_argument("new", metavar="NEW", help="the candidate model (file or package.module:function)")
    _add_design_options(c)
    c.add_argument("--layers", default="activations", help="hidden layers to compare (same name and size in both)")
    c.add_argument("--output-map", metavar="OLD=NEW,...", help="pair outputs by name or index when they differ")
    c.add_argument("--top-k", type=_positive_int, default=3, help="size of the leading-input sets compared (3)")
    c.add_argument(
        "--independent",
        action="store_true",
        help="use independent points for the two sides (wider intervals; for checking the pairing)",
    )
    g = c.add_argument_group("gates (exit code 3 when one fails)")
    g.add_argument(
        "--max-dimension-rise",
        type=float,
        metavar="X",
        help="fail when any output's ν rises by more than X (judged on the interval's lower end)",
    )
    g.add_argument(
        "--min-rank-agreement",
        type=float,
        metavar="T",
        help="fail when the Kendall τ of any output's total-index ranking falls below T",
    )
    g.add_argument(
        "--max-index-shift",
        type=float,
        metavar="S",
        help="fail when any input's total index moves by more than S (interval end nearest 0)",
    )
    _add_model_options(c)
    _add_output_options(c)
    _add_common(c)

    ad = sub.add_parser("advise", help="which inputs to pre-integrate (measured gain) and which to freeze")
    ad.add_argument("model", metavar="MODEL", help="model file (.onnx, .pt, .pt2) or package.module:function")
    _add_design_options(ad)
    ga = ad.add_argument_group("advice")
    ga.add_argument("--top", type=_positive_int, default=3, help="pre-integration candidates tried per output (3)")
    ga.add_argument("--nodes", type=_positive_int, default=32, help="starting Gauss nodes per pre-integration (32)")
    ga.add_argument(
        "--tolerance",
        type=float,
        default=1e-3,
        help="largest quadrature error allowed, relative to the output's sd (0.001)",
    )
    ga.add_argument(
        "--freeze-threshold",
        type=float,
        default=1e-3,
        help="inputs whose total index stays below this (upper interval end) may be frozen (0.001)",
    )
    ga.add_argument(
        "--freeze-budget",
        type=float,
        default=0.01,
        help="largest mean squared error of freezing, as a share of the variance (0.01)",
    )
    ga.add_argument(
        "--gain-points",
        metavar="N,N,...",
        help="point counts for the measured RQMC gain (default 256,...,16384; empty to skip)",
    )
    _add_model_options(ad)
    _add_output_options(ad)
    _add_common(ad)

    lay = sub.add_parser("layers", help="list a model's inputs, outputs and probe-able layers")
    lay.add_argument("model", metavar="MODEL")
    lay.add_argument("--dim", type=_positive_int, help="number of inputs of a Python callable")
    lay.add_argument("--inputs", metavar="SPEC.toml", help="input spec (for names and a state-dict class)")
    _add_model_options(lay)
    _add_common(lay)

    s = sub.add_parser("show", help="print a saved JSON report again")
    s.add_argument("report", metavar="REPORT.json")
    s.add_argument("--format", default="text", choices=("text", "markdown"))
    s.add_argument("--all-outputs", action="store_true")
    _add_common(s)

    dm = sub.add_parser("demo", help="audit the bundled greenhouse surrogate")
    dm.add_argument("--points", type=int, default=1024)
    dm.add_argument("--replicates", type=int, default=8)
    dm.add_argument("--seed", type=_seed, default=2026)
    dm.add_argument("--no-save", action="store_true")
    dm.add_argument("--json", metavar="PATH")
    _add_common(dm)
    return parser


# -- helpers -------------------------------------------------------------------


def _json_arg(text: str | None, what: str) -> dict[str, Any]:
    if not text:
        return {}
    try:
        v = json.loads(text)
    except json.JSONDecodeError as exc:
        raise UserError(f"{what} must be a JSON object like '{{\"hidden\": 32}}'; got '{text}' ({exc}).") from exc
    if not isinstance(v, dict):
        raise UserError(f"{what} must be a JSON object like '{{\"hidden\": 32}}'; got '{text}'.")
    return v


def _shape_arg(text: str | None) -> tuple[int, ...] | None:
    if not text:
        return None
    try:
        shape = tuple(int(s) for s in text.split(","))
    except ValueError:
        raise UserError(f"--input-shape must be whole numbers separated by commas, e.g. 1,8,8; got '{text}'.") from None
    if not shape or min(shape) < 1:
        raise UserError(f"--input-shape must be positive whole numbers, got '{text}'.")
    return shape


def _design_options(args: argparse.Namespace) -> dict[str, Any]:
    """The design options shared by audit, compare and advise."""
    return {
        "points": args.points, "replicates": args.replicates, "seed": args.seed,
        "sampler": args.sampler, "estimator": args.estimator,
    }


def _spec(args: argparse.Namespace):
    from .inputs import load_spec, uniform_spec

    if getattr(args, "inputs", None):
        return load_spec(args.inputs)
    return uniform_spec(getattr(args, "law", None) or "normal")


def _open(args: argparse.Namespace, spec, ref: str | None = None):
    from .models.open import open_model

    kwargs: dict[str, Any] = {"dim": args.dim if args.dim is not None else spec.dim}
    torch_class = args.torch_class or spec.model.get("class")
    if torch_class:
        kwargs["torch_class"] = torch_class
        kwargs["torch_arguments"] = _json_arg(args.torch_args, "--torch-args") or spec.model.get("arguments", {})
    if args.trust_pickle:
        kwargs["trust"] = True
    shape = _shape_arg(args.input_shape) or (tuple(spec.model["input_shape"]) if "input_shape" in spec.model else None)
    if shape is not None:
        kwargs["input_shape"] = shape
    return open_model(ref or args.model, **kwargs)


def _console(quiet: bool):
    from .report import make_console

    return make_console(file=open(os.devnull, "w") if quiet else None)


def _print_result(result, args: argparse.Namespace) -> None:
    if args.quiet:
        return
    fmt = getattr(args, "format", "text")
    if fmt == "json":
        print(json.dumps(result.to_dict(), indent=2))
        return
    from . import report

    options = {"all_outputs": getattr(args, "all_outputs", False)} if result.kind == "audit" else {}
    if fmt == "markdown":
        print(report.markdown(result))
    else:
        report.render(result, _console(False), **options)


def _finish(result, args: argparse.Namespace) -> Path | None:
    """Print the report, then save its JSON (and say where)."""
    _print_result(result, args)
    saved = _save(result, args)
    if saved is not None and not args.quiet and args.format == "text":
        print(f"Report saved to {saved}")
    return saved


def _default_report_path(source: str) -> Path:
    stem = re.sub(r"[^A-Za-z0-9_.-]+", "_", Path(source.split(":")[-1]).stem or "model").strip("_") or "model"
    return Path("reports") / f"{stem}-{time.strftime('%Y%m%d-%H%M%S')}.json"


def _save(result, args: argparse.Namespace) -> Path | None:
    """Write the JSON report; if the chosen place fails, keep it in a temp file."""
    if getattr(args, "no_save", False) and not args.json:
        return None
    source = result.to_dict()["model"]
    source = source["new"]["source"] if "new" in source else source.get("source", "model")
    path = Path(args.json) if args.json else _default_report_path(source)
    text = json.dumps(result.to_dict(), indent=2)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text, encoding="utf-8")
        return path
    except OSError as exc:
        fd, tmp = tempfile.mkstemp(prefix="netdim-report-", suffix=".json")
        with os.fdopen(fd, "w", encoding="utf-8") as f:
            f.write(text)
        raise UserError(
            f"The report could not be written to '{path}' ({exc.strerror or exc}). Nothing is lost: "
            f"it was saved to '{tmp}' instead. Choose a writable place with --json PATH."
        ) from exc


class _Bar:
    """Progress bar on stderr for a run (nothing when stderr is not a terminal or --quiet)."""

    def __init__(self, args: argparse.Namespace, total: int) -> None:
        from .report import RunProgress

        self._bar = RunProgress(total, enabled=not args.quiet)

    def __enter__(self) -> _Bar:
        self._bar.__enter__()
        return self

    def __exit__(self, *exc: object) -> None:
        self._bar.__exit__(*exc)

    def advance(self, n: int, phase: str) -> None:
        self._bar.advance(n, phase=phase)


def _progress(args: argparse.Namespace, total: int) -> _Bar:
    return _Bar(args, total)


# -- commands ------------------------------------------------------------------


def cmd_audit(args: argparse.Namespace) -> int:
    from .studies import execute, prepare

    spec = _spec(args)
    model = _open(args, spec)
    setup = prepare(
        model,
        spec,
        **_design_options(args),
        layers=args.layers,
        unit_detail=[n for item in args.unit_detail for n in item.split(",") if n],
        memory_limit=None if args.memory_limit is None else int(args.memory_limit * 2**30),
    )
    client = None
    if getattr(args, "cluster", None):
        from .cluster import connect

        client = connect(args.cluster)
    try:
        with _progress(args, setup.evaluations) as bar:
            result = execute(setup, progress=bar.advance, checkpoint=args.checkpoint, executor=client)
    finally:
        if client is not None:
            client.close()
            if args.cluster.startswith("local"):
                client.cluster.close()
    _finish(result, args)
    return EXIT_OK


def cmd_compare(args: argparse.Namespace) -> int:
    from .comparison import Gates, compare_models, parse_output_map

    spec = _spec(args)
    old, new = _open(args, spec, args.old), _open(args, spec, args.new)
    output_map = None
    if args.output_map:
        from .studies import prepare

        names = [prepare(m, spec, points=2, replicates=2, seed=0, layers="none").output_names for m in (old, new)]
        output_map = parse_output_map(args.output_map, *names)
    gates = Gates(args.max_dimension_rise, args.min_rank_agreement, args.max_index_shift)
    from .models.base import feature_count

    per = 2 if args.estimator == "fast" else feature_count(old) + 2
    from .design import round_points

    total = 2 * round_points(max(args.points, 1)) * max(args.replicates, 1) * per
    with _progress(args, total) as bar:
        result = compare_models(
            old,
            new,
            spec,
            **_design_options(args),
            layers=args.layers,
            output_map=output_map,
            gates=gates,
            top_k=args.top_k,
            paired=not args.independent,
            progress=lambda n, ph: bar.advance(2 * n if not args.independent else n, ph),
        )
    _finish(result, args)
    if not result.passed:
        failed = ", ".join(g.name for g in result.gates if not g.passed)
        print(f"netdim: gate failed: {failed}", file=sys.stderr)
        return EXIT_GATE
    return EXIT_OK


def cmd_advise(args: argparse.Namespace) -> int:
    from .advice import execute_advice, prepare_advice

    spec = _spec(args)
    model = _open(args, spec)
    options: dict[str, Any] = {}
    if args.gain_points is not None:
        try:
            options["gain_points"] = tuple(int(v) for v in args.gain_points.split(",") if v.strip())
        except ValueError:
            raise UserError(
                f"--gain-points takes whole numbers separated by commas, got '{args.gain_points}'."
            ) from None
    plan = prepare_advice(
        model,
        spec,
        **_design_options(args),
        top=args.top,
        nodes=args.nodes,
        tolerance=args.tolerance,
        freeze_threshold=args.freeze_threshold,
        freeze_budget=args.freeze_budget,
        **options,
    )
    with _progress(args, plan.evaluations) as bar:
        result = execute_advice(plan, progress=bar.advance)
    _finish(result, args)
    return EXIT_OK


def cmd_layers(args: argparse.Namespace) -> int:
    from .report import render
    from .studies import model_signature

    spec = _spec(args)
    model = _open(args, spec)
    if not args.quiet:
        render(model_signature(model), _console(False))
    return EXIT_OK


def cmd_show(args: argparse.Namespace) -> int:
    from .results import result_from_dict

    path = Path(args.report)
    if not path.is_file():
        raise UserError(f"The report '{args.report}' does not exist or is not a file.")
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
        result = result_from_dict(data)
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise UserError(f"'{args.report}' is not a JSON file: {exc}.") from exc
    except (KeyError, TypeError, ValueError) as exc:
        raise UserError(f"'{args.report}' is not a netdim report this version can read: {exc}.") from exc
    _print_result(result, args)
    return EXIT_OK


def _short_path(p: Path) -> str:
    """``p`` relative to the working folder when it lies below it."""
    try:
        return str(p.relative_to(Path.cwd()))
    except ValueError:
        return str(p)


def cmd_demo(args: argparse.Namespace) -> int:
    from .inputs import load_spec
    from .models.open import open_model
    from .studies import execute, prepare

    model_path = ZOO / "greenhouse_v1.onnx"
    spec_path = ZOO / "greenhouse_v1.toml"
    if not model_path.exists() or not spec_path.exists():
        raise UserError(
            f"The bundled greenhouse model is missing from {ZOO}. Reinstall netdim from its source "
            "folder, or rebuild the zoo with `python -m model_zoo.build`."
        )
    spec = load_spec(_short_path(spec_path))
    model = open_model(_short_path(model_path))
    setup = prepare(model, spec, points=args.points, replicates=args.replicates, seed=args.seed)
    with _progress(args, setup.evaluations) as bar:
        result = execute(setup, progress=bar.advance)
    args.format, args.all_outputs = "text", True
    _print_result(result, args)
    saved = _save(result, args)
    if not args.quiet:
        if saved is not None:
            print(f"Report saved to {saved}")
        v1, v2, sp = (_short_path(p) for p in (model_path, ZOO / "greenhouse_v2.onnx", spec_path))
        print(
            "Next: compare with the retrained surrogate v2\n"
            f"  netdim compare {v1} {v2} \\\n      --inputs {sp}\n"
            "or ask which inputs to pre-integrate or freeze\n"
            f"  netdim advise {v1} --inputs {sp}"
        )
    return EXIT_OK


COMMANDS = {
    "audit": cmd_audit,
    "compare": cmd_compare,
    "advise": cmd_advise,
    "layers": cmd_layers,
    "show": cmd_show,
    "demo": cmd_demo,
}


def _interrupt_on_sigterm() -> None:
    """Turn SIGTERM into KeyboardInterrupt, so a killed run saves its checkpoint first."""
    import signal
    import threading

    if threading.current_thread() is threading.main_thread():

        def handler(signum: int, frame: Any) -> None:
            raise KeyboardInterrupt

        signal.signal(signal.SIGTERM, handler)


def main(argv: Sequence[str] | None = None) -> int:
    """Run ``netdim``; return the exit code."""
    parser = build_parser()
    args = parser.parse_args(argv)
    debug = getattr(args, "debug", False)
    _interrupt_on_sigterm()
    try:
        return COMMANDS[args.command](args)
    except UserError as exc:
        if debug:
            traceback.print_exc()
        print(f"netdim: error: {exc.message}", file=sys.stderr)
        return exc.exit_code
    except KeyboardInterrupt:
        print(
            "netdim: interrupted. Work saved in a --checkpoint file (if one was given) resumes with the same command.",
            file=sys.stderr,
        )
        return 130
    except Exception as exc:
        if debug:
            traceback.print_exc()
        print(
            f"netdim: unexpected failure: {type(exc).__name__}: {exc}. This is not a problem with your "
            "input as far as netdim can tell; run again with --debug for the traceback and report it.",
            file=sys.stderr,
        )
        return EXIT_RUNTIME
