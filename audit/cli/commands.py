"""The subcommands: read the arguments, call a workflow, print and save its report. No numerics here."""

from __future__ import annotations

import argparse
import json
import shlex
import sys
from pathlib import Path
from typing import Any

from ..errors import UserError
from .advise import budget_settings, stderr_lines
from .fromdata import cmd_inputs_from_data
from .html import check_html_target, write_html
from .output import check_report_target, console, print_result, progress, save_report

__all__ = ["COMMANDS", "EXIT_GATE", "EXIT_OK", "EXIT_RUNTIME", "EXIT_USAGE"]

EXIT_OK, EXIT_RUNTIME, EXIT_USAGE, EXIT_GATE = 0, 1, 2, 3

ZOO = Path(__file__).resolve().parents[2] / "model_zoo"


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


def _dims(text: str, item: str) -> tuple[int, ...]:
    try:
        shape = tuple(int(v) for v in text.split(","))
    except ValueError:
        raise UserError(
            f"--input-shape takes whole numbers separated by commas, e.g. 1,8,8 or NAME=1,8,8; got '{item}'."
        ) from None
    if not shape or min(shape) < 1:
        raise UserError(f"--input-shape takes positive whole numbers, got '{item}'.")
    return shape


def _shape_arg(items: list[str] | None) -> tuple[int, ...] | dict[str, tuple[int, ...]] | None:
    """``--input-shape`` as one shape, or a shape per named input tensor."""
    if not items:
        return None
    named = [i for i in items if "=" in i]
    if not named:
        if len(items) > 1:
            raise UserError("Give one --input-shape per input tensor as NAME=D1,D2 when there are several.")
        return _dims(items[0], items[0])
    if len(named) != len(items):
        raise UserError("Give every --input-shape as NAME=D1,D2 when one of them names its tensor.")
    names = [item.split("=", 1)[0].strip() for item in items]
    twice = sorted({n for n in names if names.count(n) > 1})
    if twice:
        raise UserError(f"--input-shape names the input tensor {', '.join(repr(n) for n in twice)} more than once; "
                        "give one shape per tensor.")  # fmt: skip
    return {name.strip(): _dims(dims, item) for item in items for name, dims in [item.split("=", 1)]}


def _spec(args: argparse.Namespace) -> Any:
    from ..inputs import assumed_spec, load_spec, uniform_spec

    if getattr(args, "inputs", None):
        return load_spec(args.inputs)
    law = getattr(args, "law", None)
    return uniform_spec(law) if law else assumed_spec()


def _open(args: argparse.Namespace, spec: Any, ref: str | None = None) -> Any:
    from ..models.open import open_model

    kwargs: dict[str, Any] = {"dim": args.dim if args.dim is not None else spec.dim}
    torch_class = args.torch_class or spec.model.get("class")
    if torch_class:
        kwargs["torch_class"] = torch_class
        kwargs["torch_arguments"] = _json_arg(args.torch_args, "--torch-args") or spec.model.get("arguments", {})
    if args.trust_pickle:
        kwargs["trust"] = True
    shape = _shape_arg(args.input_shape) or spec.model.get("input_shape")
    if shape is not None:
        kwargs["input_shape"] = shape
    model = open_model(ref or args.model, **kwargs)
    _check_dim(model, args.dim, ref or args.model)
    return model


def _check_dim(model: Any, dim: int | None, ref: str) -> None:
    """A model file knows its inputs: a `dim` that disagrees is a mistake, never silently ignored."""
    if dim is None:
        return
    have = len(model.feature_names())
    if have != dim:
        raise UserError(
            f"`dim` is {dim}, but the model file '{ref}' takes {have} inputs. `dim` is for Python functions "
            "only (a model file knows its own inputs): leave it out, or give an input spec (`inputs`) whose "
            f"laws cover the {have} inputs."
        )


def _design(args: argparse.Namespace) -> Any:
    from ..studies.options import DesignOptions

    return DesignOptions(**_design_given(args))


def _design_given(args: argparse.Namespace) -> dict[str, Any]:
    """The design options given on the command line (the others take their defaults)."""
    from ..studies.options import resume_seed

    given = {
        "points": args.points,
        "replicates": args.replicates,
        "sampler": args.sampler,
        "estimator": args.estimator,
        "view": getattr(args, "view", None),
        "seed": resume_seed(args.seed, getattr(args, "checkpoint", None)),
    }
    return {k: v for k, v in given.items() if v is not None}


def _run_options(args: argparse.Namespace, advance: Any) -> dict[str, Any]:
    """The run options of ``audit``, ``compare`` and ``advise`` as keywords of the Python API."""
    return {
        "progress": advance,
        "checkpoint": args.checkpoint,
        "checkpoint_seconds": args.checkpoint_every,
        "cluster": args.cluster,
        "memory_limit": _memory_limit(args),
        "time_budget": None if args.time_budget is None else args.time_budget * 3600.0,
    }


def _run(args: argparse.Namespace, bar: Any) -> Any:
    from ..studies.options import RunOptions

    return RunOptions(**_run_options(args, bar.advance))


def _outputs(args: argparse.Namespace) -> list[str] | None:
    text = getattr(args, "outputs", None)
    return [n.strip() for n in text.split(",") if n.strip()] if text else None


def _memory_limit(args: argparse.Namespace) -> int | None:
    if args.memory_limit is None:
        return None
    from ..errors import check_number

    return int(check_number(args.memory_limit, "memory_limit", 0.0, low_open=True, why="(GiB)") * 2**30)


def _finish(result: Any, args: argparse.Namespace) -> Path | None:
    """Print the report, then save its JSON and the HTML page if asked (and say where).

    A reader that stops reading (``| head``) never costs the saved reports: they are
    written first, and only then does the closed pipe end the command, quietly.
    """
    closed = False
    try:
        print_result(result, args)
    except BrokenPipeError:
        closed = True
    saved = save_report(result, args)
    page = write_html(result, args, saved)
    if closed:
        raise BrokenPipeError
    if not args.quiet and args.format == "text":
        if saved is not None:
            print(f"Report saved to {saved}")
        if page is not None:
            print(f"HTML report saved to {page}")
    return saved


def _check_targets(args: argparse.Namespace, protected: list[Any]) -> None:
    """Refuse, before any work, report paths that would destroy an input of the run."""
    check_report_target(args.json, protected)
    check_html_target(getattr(args, "html", None), [*protected, args.json])


def cmd_audit(args: argparse.Namespace) -> int:
    from ..studies import execute, prepare

    spec = _spec(args)
    _check_targets(args, [args.model, getattr(args, "inputs", None), args.checkpoint])
    model = _open(args, spec)
    setup = prepare(
        model,
        spec,
        design=_design(args),
        layers=args.layers,
        unit_detail=[n for item in args.unit_detail for n in item.split(",") if n],
        memory_limit=_memory_limit(args),
        outputs=_outputs(args),
    )
    with progress(args, setup.evaluations) as bar:
        result = execute(setup, _run(args, bar), pairs=args.pairs)
    _finish(result, args)
    return EXIT_OK


#: Gates a comparison judges unless told otherwise.
GATES_ON_BY_DEFAULT = (
    "mean_dimension",
    "total_index",
    "first_order",
    "ranking",
    "top_k_kept",
    "layer_mean_dimension",
    "variance",
)


def _gates(args: argparse.Namespace) -> Any:
    from ..studies.gates import Gates, load_gates

    gates = Gates()
    if args.no_default_gates:
        gates = Gates(**dict.fromkeys(GATES_ON_BY_DEFAULT))
    if args.gates:
        gates = load_gates(args.gates, gates)
    flags = {
        "mean_dimension": args.gate_mean_dimension,
        "dimension_rise": args.gate_dimension_rise,
        "total_index": args.gate_total_index,
        "first_order": args.gate_first_order,
        "ranking": args.gate_ranking,
        "top_k_kept": args.gate_top_k_kept,
        "layer_mean_dimension": args.gate_layer_mean_dimension,
        "variance": args.gate_variance,
        "matter": args.gate_matter,
        "top_k": args.top_k,
    }
    flags = {k: v for k, v in flags.items() if v is not None}
    return Gates(**{**gates.settings(), **flags}) if flags else gates


def cmd_compare(args: argparse.Namespace) -> int:
    from ..studies import compare_models
    from ..studies.compare import load_baseline

    baseline = load_baseline(args.old)
    spec = None if baseline is not None and not (args.inputs or args.law) else _spec(args)
    _check_targets(args, [args.old, args.new, getattr(args, "inputs", None), args.checkpoint])
    old = baseline if baseline is not None else _open(args, spec, args.old)
    new = _open(args, spec if spec is not None else _spec(args), args.new)
    gates = _gates(args)
    given = _design_given(args)
    design = baseline.design if baseline is not None else given
    from ..estimators import make_estimator
    from ..models.base import feature_count

    estimator, points = design.get("estimator", "jansen"), int(design.get("points", 1024))
    chosen = make_estimator(estimator, d=feature_count(new), points=points)
    sides = 1 if baseline is not None else 2
    total = sides * points * int(design.get("replicates") or chosen.replicates) * chosen.rows_per_point()
    with progress(args, total) as bar:
        # the paired run reports each row once for both models
        paired = not args.independent and baseline is None
        advance = (lambda n, phase: bar.advance(2 * n, phase)) if paired else bar.advance
        result = compare_models(
            old,
            new,
            spec if spec is not None or baseline is None else None,
            layers=args.layers,
            output_map=args.output_map,
            gates=gates,
            paired=not args.independent,
            outputs=_outputs(args),
            **given,
            **_run_options(args, advance),
        )
    _finish(result, args)
    if not result.passed:
        failed = ", ".join(g.name for g in result.gates if not g.passed)
        print(f"netdim: gate failed: {failed}", file=sys.stderr)
        return EXIT_GATE
    return EXIT_OK


def cmd_advise(args: argparse.Namespace) -> int:
    from ..studies import execute_advice, prepare_advice

    spec = _spec(args)
    _check_targets(args, [args.model, getattr(args, "inputs", None), args.checkpoint])
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
        design=_design(args),
        top=args.top,
        nodes=args.nodes,
        tolerance=args.tolerance,
        freeze_threshold=args.freeze_threshold,
        freeze_budget=args.freeze_budget,
        memory_limit=_memory_limit(args),
        outputs=_outputs(args),
        **options,
        **budget_settings(args),
    )
    with progress(args, plan.evaluations) as bar:
        result = execute_advice(plan, _run(args, bar), **stderr_lines(args, bar.drawing))
    _finish(result, args)
    return EXIT_OK


def cmd_simplify(args: argparse.Namespace) -> int:
    from .simplify import run_simplify

    spec = _spec(args)
    return run_simplify(args, spec, _open(args, spec), _design(args), _run_options)


def cmd_slopes(args: argparse.Namespace) -> int:
    from ..studies.slopes import execute_slopes, prepare_slopes

    spec = _spec(args)
    check_report_target(args.json, [args.model, getattr(args, "inputs", None), args.checkpoint])
    model = _open(args, spec)
    plan = prepare_slopes(
        model,
        spec,
        design=_design(args),
        gradient_points=args.gradient_points,
        indices=not args.no_indices,
        screen=args.screen,
        layers=args.layers,
        outputs=_outputs(args),
        memory_limit=_memory_limit(args),
    )
    with progress(args, plan.evaluations) as bar:
        result = execute_slopes(plan, _run(args, bar))
    _finish(result, args)
    return EXIT_OK


def cmd_layers(args: argparse.Namespace) -> int:
    from ..report import render
    from ..studies import model_signature

    spec = _spec(args)
    model = _open(args, spec)
    if not args.quiet:
        render(model_signature(model), console(False))
    return EXIT_OK


def cmd_show(args: argparse.Namespace) -> int:
    from ..results import result_from_dict

    path = Path(args.report)
    if not path.is_file():
        raise UserError(f"The report '{args.report}' does not exist or is not a file.")
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
        result = result_from_dict(data)
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise UserError(f"'{args.report}' is not a JSON file: {exc}.") from exc
    except (KeyError, TypeError, ValueError, AttributeError, RecursionError) as exc:
        raise UserError(f"'{args.report}' is not a netdim report this version can read: {exc}.") from exc
    check_html_target(args.html, [args.report])
    closed = False
    try:
        print_result(result, args)
    except BrokenPipeError:
        closed = True
    page = write_html(result, args, path)
    if closed:
        raise BrokenPipeError
    if page is not None and not args.quiet and args.format == "text":
        print(f"HTML report saved to {page}")
    return EXIT_OK


def _short_path(p: Path) -> str:
    """``p`` relative to the working folder when it lies below it."""
    try:
        return str(p.relative_to(Path.cwd()))
    except ValueError:
        return str(p)


def cmd_demo(args: argparse.Namespace) -> int:
    from ..inputs import load_spec
    from ..models.open import open_model
    from ..studies import execute, prepare
    from ..studies.options import DesignOptions, RunOptions

    model_path = ZOO / "greenhouse_v1.onnx"
    spec_path = ZOO / "greenhouse_v1.toml"
    if not model_path.exists() or not spec_path.exists():
        raise UserError(
            f"The bundled greenhouse model is missing from {ZOO}. Reinstall netdim from its source "
            "folder, or rebuild the zoo with `python -m model_zoo.build`."
        )
    _check_targets(args, [str(model_path), str(spec_path)])
    spec = load_spec(_short_path(spec_path))
    model = open_model(_short_path(model_path))
    design = DesignOptions(points=args.points, replicates=args.replicates, seed=args.seed)
    setup = prepare(model, spec, design=design)
    with progress(args, setup.evaluations) as bar:
        result = execute(setup, RunOptions(progress=bar.advance))
    args.format, args.all_outputs = "text", True
    _finish(result, args)
    if not args.quiet:
        from ..report.widgets import shell_lines

        v1, v2, sp = (shlex.quote(_short_path(p)) for p in (model_path, ZOO / "greenhouse_v2.onnx", spec_path))
        compare = "\n".join(shell_lines(f"netdim compare {v1} {v2} --inputs {sp}", 80, 2))
        advise = "\n".join(shell_lines(f"netdim advise {v1} --inputs {sp}", 80, 2))
        print(
            "Next: compare with the retrained surrogate v2\n"
            f"{compare}\n"
            "or ask which inputs to pre-integrate or freeze\n"
            f"{advise}"
        )
    return EXIT_OK


COMMANDS = {
    "audit": cmd_audit,
    "compare": cmd_compare,
    "advise": cmd_advise,
    "simplify": cmd_simplify,
    "slopes": cmd_slopes,
    "layers": cmd_layers,
    "show": cmd_show,
    "demo": cmd_demo,
    "inputs-from-data": cmd_inputs_from_data,
}
