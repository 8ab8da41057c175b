"""What ``netdim layers MODEL`` prints: a model's signature and probe-able layers.

:func:`signature_renderable` turns a :class:`~audit.results.ModelSignature` into
one rich ``Group``: the input tensor (name, shape, number of features d), the
output tensors (name, shape, units) and a table of hidden layers (name,
operation, shape, units, activation or not); :func:`render_signature` prints
it. On a terminal the tables have light borders; elsewhere (a pipe, a file)
the output is plain aligned text in ASCII. Everything fits 80 columns: long
layer names fold, numbers never do.

It renders the signature object only; it never imports a backend, Torch or onnxruntime.
"""

from __future__ import annotations

import io
from collections.abc import Sequence

from rich import box
from rich.console import Console, Group, RenderableType
from rich.table import Table
from rich.text import Text

from ..results.signature import LayerEntry, ModelSignature, TensorEntry

__all__ = ["format_shape", "render_signature", "signature_renderable"]


def format_shape(shape: Sequence[int]) -> str:
    """``(1, 8, 8)``; a scalar is ``()``."""
    return "(" + ", ".join(str(int(s)) for s in shape) + ("," if len(shape) == 1 else "") + ")"


def _table(title: str, plain: bool, columns: Sequence[tuple[str, str]]) -> Table:
    table = Table(
        title=title,
        title_justify="left",
        title_style="" if plain else "bold",
        box=None if plain else box.SIMPLE_HEAD,
        show_edge=False,
        pad_edge=False,
        header_style="" if plain else "bold",
        expand=False,
    )
    for header, kind in columns:
        if kind == "name":
            table.add_column(header, overflow="fold", ratio=1, min_width=12)
        else:
            table.add_column(header, justify="right" if kind == "num" else "left", no_wrap=True)
    return table


def _tensors(title: str, tensors: Sequence[TensorEntry], units_header: str, plain: bool) -> Table:
    columns = [("name", "name"), ("shape", "text"), (units_header, "num"), ("dtype", "text")]
    table = _table(title, plain, columns)
    for info in tensors:
        table.add_row(info.name, format_shape(info.shape), str(info.units), info.dtype)
    return table


def _layers(layers: Sequence[LayerEntry], plain: bool) -> Table:
    columns = [
        ("layer", "name"),
        ("op", "text"),
        ("shape", "text"),
        ("units", "num"),
        ("activation", "text"),
    ]
    table = _table(f"Probe-able layers ({len(layers)})", plain, columns)
    for layer in layers:
        table.add_row(
            layer.name,
            layer.op,
            format_shape(layer.shape),
            str(layer.units),
            "yes" if layer.activation else "no",
        )
    return table


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
    rich.console.Group
    """
    layers = model.layers
    header = Text()
    header.append("Model ", style="" if plain else "bold")
    header.append(f"{model.source}  [{model.format}]")
    parts: list[RenderableType] = [header, Text("")]
    noun = "Input" if len(model.inputs) == 1 else "Inputs"
    parts.append(_tensors(f"{noun} (d = {model.features} features)", model.inputs, "d", plain))
    parts.append(Text(""))
    k = sum(info.units for info in model.outputs)
    parts.append(_tensors(f"Outputs ({k} units)", model.outputs, "units", plain))
    parts.append(Text(""))
    if layers:
        parts.append(_layers(layers, plain))
        active = sum(layer.activation for layer in layers)
        units = sum(layer.units for layer in layers if layer.activation)
        parts.append(
            Text(
                f"{active} activation layer(s) with {units} units are captured by default "
                "(--layers activations); --layers all takes every layer, or name them with "
                "--layers NAME,NAME."
            )
        )
    else:
        parts.append(Text("This model has no hidden layers to probe; only outputs are audited."))
    for notice in model.notices:
        parts.append(Text(f"Note: {notice}", style="" if plain else "yellow"))
    return Group(*parts)


def render_signature(model: ModelSignature, console: Console | None = None) -> None:
    """Print the signature of ``model``.

    Parameters
    ----------
    model : ModelSignature
        The signature of an opened model.
    console : rich.console.Console, optional
        Where to print; default a console on standard output. The output is
        plain (no borders, styles or colour) when the console is not a
        terminal.
    """
    if console is None:
        console = Console(highlight=False, emoji=False, markup=False)
    width = min(console.width or 80, 80)
    if console.is_terminal and not console.no_color:
        console.print(signature_renderable(model), width=width)
        return
    # plain text: render off-screen, then drop the padding rich leaves at line ends
    buffer = io.StringIO()
    Console(file=buffer, width=width, color_system=None, highlight=False, emoji=False).print(
        signature_renderable(model, plain=True)
    )
    text = "\n".join(line.rstrip() for line in buffer.getvalue().splitlines())
    console.file.write(text + "\n")
