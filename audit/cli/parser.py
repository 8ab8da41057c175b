"""The argument parser of ``netdim``: each subcommand takes only the options it honours."""

from __future__ import annotations

import argparse

from ..version import __version__
from . import advise, fromdata
from .html import add_html_option

__all__ = ["build_parser"]

SAMPLER_HELP = "'sobol' (scrambled Sobol' points, default) or 'mc' (plain Monte Carlo)"


def _estimator_help() -> str:
    """One line per registered estimator, from the registry itself."""
    from ..estimators import ESTIMATORS

    return "; ".join(f"'{name}': {cls.help}" for name, cls in ESTIMATORS.items()) + " (default jansen)"


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


def _common(p: argparse.ArgumentParser) -> None:
    p.add_argument("--debug", action="store_true", help="show tracebacks of errors")
    p.add_argument("--quiet", "-q", action="store_true", help="print nothing but errors")


def _model_loading(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("model loading")
    g.add_argument("--torch-class", metavar="MODULE:CLASS", help="class to rebuild a state-dict file")
    g.add_argument("--torch-args", metavar="JSON", help="constructor keyword arguments for --torch-class, as JSON")
    g.add_argument(
        "--input-shape",
        metavar="[NAME=]D1,D2,...",
        action="append",
        help="non-batch shape of an input tensor, e.g. 1,8,8; with several input tensors one per tensor: "
        "--input-shape a=16,4 --input-shape b=3",
    )
    g.add_argument(
        "--trust-pickle",
        action="store_true",
        help="allow loading pickled Python objects from a Torch file: a whole module, or a .pt2 program's "
        "pickled members (runs code from the file: only for files you trust)",
    )


def _inputs(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("inputs")
    src = g.add_mutually_exclusive_group()
    src.add_argument("--inputs", metavar="SPEC.toml", help="input spec file: names and laws of the inputs")
    src.add_argument("--law", help="every input N(0, 1) ('normal') or U[0, 1] ('uniform'); default normal")
    g.add_argument("--dim", type=_positive_int, help="number of inputs of a Python callable")


def _design(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("design")
    g.add_argument("--points", type=int, help="points N per randomization, a power of two (default 1024)")
    g.add_argument(
        "--replicates", type=int, help="independent randomizations R (default 8; 32 with the fast estimator)"
    )
    g.add_argument("--seed", type=_seed, help="seed for the randomizations (default: fresh, recorded in the report)")
    g.add_argument("--sampler", help=SAMPLER_HELP)
    g.add_argument("--estimator", help=_estimator_help())


def _views(p: argparse.ArgumentParser) -> None:
    p.add_argument(
        "--view",
        choices=("inputs", "groups", "both"),
        help="indices per input, per group of inputs (the spec's [groups]), or both on the same points "
        "(default: groups when the spec declares them)",
    )


def _running(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("running")
    g.add_argument("--checkpoint", metavar="PATH", help="save finished work there and resume from it")
    g.add_argument(
        "--checkpoint-every",
        type=float,
        default=30.0,
        metavar="SECONDS",
        help="least seconds between two checkpoint saves (default 30)",
    )
    g.add_argument(
        "--memory-limit", type=float, metavar="GIB", help="memory the run may use (default: what is available)"
    )
    g.add_argument(
        "--time-budget",
        type=float,
        default=24.0,
        metavar="HOURS",
        help="refuse a run estimated to take longer (timed on a probe; default 24)",
    )
    g.add_argument(
        "--cluster",
        metavar="ADDRESS",
        help="run the work on dask.distributed: 'local', 'local:N' (N worker processes) or a scheduler address",
    )


def _outputs(p: argparse.ArgumentParser) -> None:
    p.add_argument(
        "--outputs",
        metavar="NAME,...",
        help="measure only these outputs: unit names (probabilities[1]) or output tensors (default: all)",
    )


def _output(p: argparse.ArgumentParser, *, all_outputs: bool) -> None:
    g = p.add_argument_group("report")
    g.add_argument("--json", metavar="PATH", help="write the JSON report there (default: under reports/)")
    g.add_argument("--no-save", action="store_true", help="do not save the JSON report")
    g.add_argument("--format", default="text", choices=("text", "markdown", "json"), help="what to print")
    add_html_option(g)
    if all_outputs:
        g.add_argument("--all-outputs", action="store_true", help="detail every output, not just the first few")


def _audit(sub: argparse._SubParsersAction) -> None:
    a = sub.add_parser("audit", help="measure a model's outputs and hidden layers")
    a.add_argument("model", metavar="MODEL", help="model file (.onnx, .pt, .pt2) or package.module:function")
    _inputs(a)
    _outputs(a)
    _design(a)
    _views(a)
    g = a.add_argument_group("hidden layers")
    g.add_argument(
        "--layers", default="activations", help="hidden layers: activations (default), all, none, or NAME,NAME"
    )
    g.add_argument(
        "--unit-detail",
        metavar="LAYER",
        action="append",
        default=[],
        help="also rank inputs for every unit of this layer (costs d sums per unit)",
    )
    a.add_argument(
        "--pairs",
        type=int,
        nargs="?",
        const=8,
        default=0,
        metavar="K",
        help="also measure which inputs interact: every pair among the K leading inputs (K = 8 when not given; "
        "N(1 + K + K(K-1)/2) more evaluations)",
    )
    _running(a)
    _model_loading(a)
    _output(a, all_outputs=True)
    _common(a)


def _compare(sub: argparse._SubParsersAction) -> None:
    c = sub.add_parser("compare", help="compare two model versions on the same points, with pipeline gates")
    c.add_argument(
        "old",
        metavar="OLD",
        help="the current model (file or package.module:function), or its saved audit report (.json)",
    )
    c.add_argument("new", metavar="NEW", help="the candidate model (file or package.module:function)")
    _inputs(c)
    _outputs(c)
    _design(c)
    _views(c)
    g = c.add_argument_group("what to compare")
    g.add_argument("--layers", default="activations", help="hidden layers to compare (same name and size in both)")
    g.add_argument("--output-map", metavar="OLD=NEW,...", help="pair outputs by name or index when they differ")
    g.add_argument(
        "--independent",
        action="store_true",
        help="use independent points for the two sides (wider intervals; for checking the pairing)",
    )
    gates = c.add_argument_group(
        "gates (exit code 3 when one fails; a change counts only when its interval lies wholly beyond the tolerance)"
    )
    gates.add_argument("--gates", metavar="FILE.toml", help="tolerances from a [gates] table (see the README)")
    gates.add_argument("--no-default-gates", action="store_true", help="start from no gate instead of the defaults")
    for flag, dest, text in (
        ("--max-dimension-change", "mean_dimension", "largest change of any output's ν (default 0.05)"),
        ("--max-dimension-rise", "dimension_rise", "largest rise of any output's ν (default off)"),
        ("--max-index-shift", "total_index", "largest change of any input's total index (default 0.05)"),
        ("--max-first-order-shift", "first_order", "largest change of any input's first-order index (default 0.05)"),
        ("--min-rank-agreement", "ranking", "least rank agreement of the inputs that matter (default 0.9)"),
        ("--min-top-k-kept", "top_k_kept", "least share of the old top-k not clearly out of the new (default 1)"),
        ("--max-layer-dimension-change", "layer_mean_dimension", "largest change of a layer's weighted ν (0.1)"),
        ("--max-variance-change", "variance", "largest relative change of an output's variance (default 0.25)"),
        ("--matter-floor", "matter", "inputs whose total index reaches this in either model are ranked (0.01)"),
    ):
        gates.add_argument(flag, dest=f"gate_{dest}", type=float, metavar="X", help=text)
    gates.add_argument("--top-k", type=_positive_int, help="size of the leading-input sets compared (default 3)")
    _running(c)
    _model_loading(c)
    _output(c, all_outputs=False)
    _common(c)


def _advise(sub: argparse._SubParsersAction) -> None:
    ad = sub.add_parser("advise", help="which inputs to pre-integrate (measured gain) and which to freeze")
    ad.add_argument("model", metavar="MODEL", help="model file (.onnx, .pt, .pt2) or package.module:function")
    _inputs(ad)
    _outputs(ad)
    _design(ad)
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
        help="point counts for the measured RQMC gain (default 256, 512, ... up to 16 × --points, "
        "within 4096..16384; empty to skip)",
    )
    advise.add_budget_options(ad)
    _running(ad)
    _model_loading(ad)
    _output(ad, all_outputs=False)
    _common(ad)


def _simplify(sub: argparse._SubParsersAction) -> None:
    sm = sub.add_parser("simplify", help="write the model with inputs integrated out or frozen, and audit it")
    sm.add_argument("model", metavar="MODEL", help="model file (.onnx, .pt, .pt2) or package.module:function")
    _inputs(sm)
    _outputs(sm)
    _design(sm)
    g = sm.add_argument_group("simplification")
    g.add_argument(
        "--integrate",
        metavar="NAME[:NODES],...",
        action="append",
        help="inputs to integrate out by a Gauss rule (nodes chosen from the quadrature error unless given)",
    )
    g.add_argument(
        "--freeze",
        metavar="NAME[=VALUE|median|best],...",
        action="append",
        help="inputs to fix: at a value, the law's median (default), or the value with the lowest measured change",
    )
    g.add_argument("--advice", metavar="ADVICE.json", help="take the best candidate and frozen group of this report")
    g.add_argument("--out", metavar="PATH", help="where to write the model (default: MODEL-simplified.SUFFIX here)")
    g.add_argument("--replace", action="store_true", help="replace an existing file at --out")
    g.add_argument("--nodes", type=_positive_int, default=32, help="starting Gauss nodes of the node check (32)")
    g.add_argument(
        "--tolerance", type=float, default=1e-3, help="largest quadrature error, relative to the output's sd (0.001)"
    )
    g.add_argument(
        "--output-precision",
        default="source",
        choices=("source", "float64"),
        help="type of pre-integrated outputs: the model's own (default) or float64",
    )
    g.add_argument("--no-check", action="store_true", help="write the model without auditing it")
    _running(sm)
    _model_loading(sm)
    _output(sm, all_outputs=False)
    _common(sm)


def _slopes(sub: argparse._SubParsersAction) -> None:
    sl = sub.add_parser("slopes", help="bounds from gradients, active directions, and screening of many inputs")
    sl.add_argument("model", metavar="MODEL", help="model file (.onnx, .pt, .pt2) or package.module:function")
    _inputs(sl)
    _outputs(sl)
    g = sl.add_argument_group("design")
    g.add_argument("--points", type=int, default=1024, help="points N per randomization of the indices (default 1024)")
    g.add_argument("--replicates", type=int, default=8, help="independent randomizations R (default 8)")
    g.add_argument("--seed", type=_seed, help="seed for the randomizations (default: fresh, recorded in the report)")
    g.add_argument("--sampler", default="sobol", help=SAMPLER_HELP)
    g.add_argument(
        "--gradient-points",
        type=_positive_int,
        metavar="N",
        help="gradient points per randomization (default --points, or a quarter of it with --screen)",
    )
    s = sl.add_argument_group("what to measure")
    s.add_argument(
        "--screen",
        type=_positive_int,
        metavar="K",
        help="screening: rank the inputs by their bound, then measure "
        "the K highest one by one and all others as one group",
    )
    s.add_argument("--no-indices", action="store_true", help="gradients only: no Jansen indices beside the bounds")
    s.add_argument(
        "--layers",
        default="activations",
        help="hidden layers whose directions are summarised: activations (default), all, none, or NAME,NAME",
    )
    sl.set_defaults(estimator="jansen")
    _running(sl)
    _model_loading(sl)
    _output(sl, all_outputs=True)
    _common(sl)


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of ``netdim``."""
    parser = argparse.ArgumentParser(
        prog="netdim",
        description="Audit a trained model by its ANOVA structure: mean dimension and Sobol' indices "
        "of every output and hidden unit, with confidence intervals from randomized quasi-Monte Carlo.",
    )
    parser.add_argument("--version", action="version", version=f"netdim {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True
    _audit(sub)
    _compare(sub)
    _advise(sub)
    fromdata.add_parser(sub)
    _simplify(sub)
    _slopes(sub)

    lay = sub.add_parser("layers", help="list a model's inputs, outputs and probe-able layers")
    lay.add_argument("model", metavar="MODEL")
    lay.add_argument("--dim", type=_positive_int, help="number of inputs of a Python callable")
    lay.add_argument("--inputs", metavar="SPEC.toml", help="input spec (for names and a state-dict class)")
    _model_loading(lay)
    _common(lay)

    s = sub.add_parser("show", help="print a saved JSON report again")
    s.add_argument("report", metavar="REPORT.json")
    s.add_argument("--format", default="text", choices=("text", "markdown"))
    s.add_argument("--all-outputs", action="store_true", help="detail every output, not just the first few")
    add_html_option(s)
    _common(s)

    dm = sub.add_parser("demo", help="audit the bundled greenhouse surrogate")
    dm.add_argument("--points", type=int, default=1024, help="points N per randomization (default 1024)")
    dm.add_argument("--replicates", type=int, default=8, help="independent randomizations R (default 8)")
    dm.add_argument("--seed", type=_seed, default=2026, help="seed (default 2026)")
    dm.add_argument("--no-save", action="store_true", help="do not save the JSON report")
    dm.add_argument("--json", metavar="PATH", help="write the JSON report there (default: under reports/)")
    add_html_option(dm)
    _common(dm)
    return parser
