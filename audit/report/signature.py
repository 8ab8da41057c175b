"""What ``netdim layers MODEL`` prints: a model's signature and probe-able layers.

:func:`signature_renderable` turns a :class:`~audit.results.ModelSignature`
into one rich renderable: the input tensor (name, shape, number of features
d), the output tensors (name, shape, units) and a table of hidden layers
(name, operation, shape, units, activation or not); :func:`render_signature`
prints it. On a terminal the tables have light borders; elsewhere (a pipe, a
file) the output is plain aligned text. Everything fits 80 columns: long
layer names fold, numbers never do.

Tensor and layer names come from the model file: they are shown through
:func:`audit.report.widgets.safe_text` when the signature is printed, so
control characters appear as escapes, markup is never interpreted, and a
console that cannot encode Unicode gets ASCII.

It renders the signature object only; it never imports a backend, Torch or onnxruntime.
"""

from __future__ import annotations

import io
from collections.abc import Sequence

from rich import box
from rich.console import Console, ConsoleOptions, RenderableType, RenderResult
from rich.table import Table
from rich.text import Text

from ..results.signature import LayerEntry, ModelSignature, TensorEntry
from .widgets import AsciiOnly, safe_text

__all__ = ["MAX_WIDTH", "format_shape", "render_signature", "signature_renderable"]

MAX_WIDTH = 80


def format_shape(shape: Sequence[int]) -> str:
    """``(1, 8, 8)``; a one-element shape is ``(6,)``, a scalar ``()``."""
    return "(" + ", ".join(str(int(s)) for s in shape) + ("," if len(shape) == 1 else "") + ")"


class _Signature:
    """The signature's tables, built when printed (names made safe for that console)."""

    def __init__(self, model: ModelSignature, plain: bool) -> None:
        self.model, self.plain = model, plain

    def _text(self, text: str, style: str = "") -> Text:
        return safe_text(text, "" if self.plain else style, ascii_only=self._ascii)

    def _table(self, title: str, columns: Sequence[tuple[str, str]]) -> Table:
        table = Table(
            title=Text(title, style="" if self.plain else "bold"),
            title_justify="left",
            box=None if self.plain else box.SIMPLE_HEAD,
            show_edge=False,
            pad_edge=False,
            header_style="" if self.plain else "bold",
            expand=False,
        )
        for header, kind in columns:
            if kind == "name":
                table.add_column(header, overflow="fold", ratio=1, min_width=12)
            else:
                table.add_column(header, justify="right" if kind == "num" else "left", no_wrap=True)
        return table

    def _tensors(self, title: str, tensors: Sequence[TensorEntry], units_header: str) -> Table:
        table = self._table(title, [("name", "name"), ("shape", "text"), (units_header, "num"), ("dtype", "text")])
        for info in tensors:
            table.add_row(self._text(info.name), format_shape(info.shape), str(info.units), self._text(info.dtype))
        return table

    def _layers(self, layers: Sequence[LayerEntry]) -> Table:
        columns = [("layer", "name"), ("op", "text"), ("shape", "text"), ("units", "num"), ("activation", "text")]
        detail = any(layer.tensor and layer.tensor != layer.name for layer in layers)
        if detail:
            columns.append(("tensor in the file", "name"))
        table = self._table(f"Probe-able layers ({len(layers)})", columns)
        for layer in layers:
            cells = [
                self._text(layer.name),
                self._text(layer.op),
                format_shape(layer.shape),
                str(layer.units),
                "yes" if layer.activation else "no",
            ]
            if detail:
                cells.append(self._text(layer.tensor if layer.tensor != layer.name else ""))
            table.add_row(*cells)
        return table

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        self._ascii = options.ascii_only
        model = self.model
        header = self._text("Model ", "bold")
        header.append_text(self._text(f"{model.source}  [{model.format}]"))
        yield header
        yield Text("")
        noun = "Input" if len(model.inputs) == 1 else "Inputs"
        yield self._tensors(f"{noun} (d = {model.features} features)", model.inputs, "d")
        yield Text("")
        k = sum(info.units for info in model.outputs)
        yield self._tensors(f"Outputs ({k} units)", model.outputs, "units")
        yield Text("")
        if model.layers:
            yield self._layers(model.layers)
            active = sum(layer.activation for layer in model.layers)
            units = sum(layer.units for layer in model.layers if layer.activation)
            yield Text(
                f"{active} activation layer(s) with {units} units are captured by default "
                "(--layers activations); --layers all takes every layer, or name them with "
                "--layers NAME,NAME."
            )
        else:
            yield Text("This model has no hidden layers to probe; only outputs are audited.")
        for notice in model.notices:
            yield self._text(f"Note: {notice}", "yellow")


def signature_renderable(model: ModelSignature, *, plain: bool = False) -> RenderableType:
    """The signature of ``model`` as one rich renderable.

    Parameters
    ----------
    model : ModelSignature
        The signature of an opened model.
    plain : bool
        Plain aligned text without borders or styles (for pipes and files).

    Returns
    -------
    rich renderable
        Names are made safe, and transliterated on an ASCII console, when printed.
    """
    return _Signature(model, plain)


def render_signature(model: ModelSignature, console: Console | None = None) -> None:
    """Print the signature of ``model``, at most :data:`MAX_WIDTH` columns wide.

    Parameters
    ----------
    model : ModelSignature
        The signature of an opened model.
    console : rich.console.Console, optional
        Where to print; default a console on standard output. The output is
        plain (no borders, styles or colour) when the console is not a
        terminal, and ASCII when its encoding is not UTF.
    """
    if console is None:
        console = Console(highlight=False, emoji=False, markup=False)
    width = min(console.width or MAX_WIDTH, MAX_WIDTH)
    if console.is_terminal and not console.no_color:
        console.print(signature_renderable(model), width=width)
        return
    # plain text: render off-screen, then drop the padding rich leaves at line ends
    view: RenderableType = signature_renderable(model, plain=True)
    if not console.encoding.lower().startswith("utf"):
        view = AsciiOnly(view)
    buffer = io.StringIO()
    Console(file=buffer, width=width, color_system=None, highlight=False, emoji=False).print(view)
    text = "\n".join(line.rstrip() for line in buffer.getvalue().splitlines())
    console.file.write(text + "\n")
