"""``netdim simplify``: write a model with inputs integrated out or frozen, and audit it against the source.

The subcommand reads its arguments and calls
:func:`audit.studies.simplify.simplify_model`; the model, the input spec and the
design come from the helpers of :mod:`audit.cli.commands`, which passes them in.
No numerics here.
"""

from __future__ import annotations

import argparse
from collections.abc import Callable
from typing import Any

from .html import check_html_target, write_html
from .output import check_report_target, print_result, progress, save_report

__all__ = ["run_simplify"]


def _names(items: list[str] | None) -> list[str]:
    return [n.strip() for item in items or [] for n in item.split(",") if n.strip()]


def run_simplify(args: argparse.Namespace, spec: Any, model: Any, design: Any, run_options: Callable) -> int:
    """Run ``netdim simplify`` with the opened ``model``, its ``spec`` and ``design``; print and save the report."""
    from ..studies.simplify import simplify_model

    protected = [args.model, getattr(args, "inputs", None), args.checkpoint, args.out]
    check_report_target(args.json, protected)
    check_html_target(args.html, [*protected, args.json])
    from ..models.base import feature_count

    d = feature_count(model)
    total = 2 * design.points * design.replicates * (d + 2)  # the two audits; the bar's hint only
    with progress(args, total) as bar:
        result = simplify_model(
            model,
            spec,
            integrate=_names(args.integrate),
            freeze=_names(args.freeze),
            advice=args.advice,
            path=args.out,
            nodes=args.nodes,
            tolerance=args.tolerance,
            output_dtype=args.output_precision,
            check=not args.no_check,
            replace=args.replace,
            outputs=[n.strip() for n in args.outputs.split(",") if n.strip()] if args.outputs else None,
            **{k: getattr(design, k) for k in ("points", "replicates", "seed", "sampler", "estimator")},
            **run_options(args, bar.advance),
        )
    print_result(result, args)
    saved = save_report(result, args)
    page = write_html(result, args, saved)
    if not args.quiet and args.format == "text":
        print(f"Simplified model written to {result.written['path']}")
        if saved is not None:
            print(f"Report saved to {saved}")
        if page is not None:
            print(f"HTML report saved to {page}")
    return 0
