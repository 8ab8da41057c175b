"""Tests of audit.report.signature: what ``netdim layers`` prints, with names from files made safe."""

from __future__ import annotations

import io
import re

from rich.console import Console

from audit.report import render, renderable
from audit.report.signature import format_shape, render_signature
from audit.results import LayerEntry, ModelSignature, TensorEntry

HOSTILE = "relu\x1b[2J[/bold][red]\nforged"


def signature(name: str = "/body/relu_output_0") -> ModelSignature:
    return ModelSignature(
        "model_zoo/x.onnx",
        "onnx",
        [TensorEntry("input", (1, 8, 8), "float32")],
        [TensorEntry("y", (10,), "float32")],
        [LayerEntry(name, "Relu", (32,), True), LayerEntry("gemm", "Gemm", (6,), False)],
        ["a notice"],
    )


def test_shapes():
    assert format_shape((1, 8, 8)) == "(1, 8, 8)" and format_shape((6,)) == "(6,)" and format_shape(()) == "()"


def test_plain_text_off_a_terminal_fits_80_columns():
    buf = io.StringIO()
    render_signature(signature(), Console(file=buf, width=200))
    text = buf.getvalue()
    assert "Model model_zoo/x.onnx  [onnx]" in text and "Inputs" not in text and "Input (d = 64 features)" in text
    assert "Outputs (10 units)" in text and "Probe-able layers (2)" in text and "Note: a notice" in text
    assert "1 activation layer(s) with 32 units" in text
    assert max(len(line) for line in text.splitlines()) <= 80 and "\x1b" not in text and "─" not in text
    rows = [line.split() for line in text.splitlines() if line.startswith(("/body", "gemm"))]
    assert rows == [["/body/relu_output_0", "Relu", "(32,)", "32", "yes"], ["gemm", "Gemm", "(6,)", "6", "no"]]
    no_layers = ModelSignature("f", "python", [TensorEntry("x", (3,), "float64")], [TensorEntry("y", (), "float64")])
    buf = io.StringIO()
    render(no_layers, Console(file=buf, width=80))
    assert "no hidden layers to probe" in buf.getvalue()


def test_hostile_names_are_escaped_never_parsed_and_ascii_where_needed():
    for terminal in (False, True):
        buf = io.StringIO()
        render_signature(signature(HOSTILE), Console(file=buf, width=100, force_terminal=terminal, markup=True))
        plain = re.sub(r"\x1b\[[0-9;]*m", "", buf.getvalue())  # the console's own styles only
        assert "\x1b" not in plain and "relu\\x1b[2J[/bold][red]" in plain
        assert not [line for line in plain.splitlines() if line.startswith("forged")]
    ascii_buf = io.TextIOWrapper(io.BytesIO(), encoding="ascii", errors="strict")
    render_signature(signature("température_ν"), Console(file=ascii_buf, width=80))
    ascii_buf.flush()
    assert "temperature_nu" in ascii_buf.buffer.getvalue().decode("ascii")
    console = Console(file=io.StringIO(), width=80, record=True, force_terminal=True)
    console.print(renderable(signature(HOSTILE), ascii_only=True))
    out = console.export_text()
    assert out.isascii() and "relu\\x1b[2J[/bold][red]\\nforged" in out
