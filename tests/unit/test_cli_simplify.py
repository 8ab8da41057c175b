"""The simplify subcommand's options."""

from audit.cli import build_parser


def test_simplify_options_parse():
    args = build_parser().parse_args(
        ["simplify", "m.onnx", "--integrate", "a:8,b", "--integrate", "c", "--freeze", "d=best", "--advice", "a.json",
         "--out", "s.onnx", "--output-precision", "float64", "--no-check", "--replace"]
    )  # fmt: skip
    assert args.integrate == ["a:8,b", "c"] and args.freeze == ["d=best"] and args.advice == "a.json"
    assert args.out == "s.onnx" and args.output_precision == "float64" and args.no_check and args.replace
    defaults = build_parser().parse_args(["simplify", "m.onnx"])
    assert defaults.nodes == 32 and defaults.tolerance == 1e-3 and defaults.output_precision == "source"
