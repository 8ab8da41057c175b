"""The model interface: names of tensor elements, and what studies see of a stand-in model.

Common practice, no source: the expected names follow from the C order of the element
indices.
"""

from __future__ import annotations

import io
import re

from rich.console import Console

from audit.models import LayerInfo, TensorInfo, index_names
from audit.report.signature import render_signature
from audit.studies import model_signature


def test_index_names_in_c_order() -> None:
    assert index_names("x", (2, 2)) == ["x[0,0]", "x[0,1]", "x[1,0]", "x[1,1]"]
    assert index_names("x", (3,)) == ["x[0]", "x[1]", "x[2]"]
    assert index_names("s", ()) == ["s"]


class _LongNames:
    """A stand-in model with very long names, to check that tables fold them."""

    def __init__(self) -> None:
        self.source, self.format = "stand-in", "python"
        self.input = TensorInfo("x", (3,))
        self.outputs = [TensorInfo("y" * 90, (2,))]
        self.notices = ["a notice"]

    def layers(self) -> list[LayerInfo]:
        return [LayerInfo("/block/" + "deep/" * 25 + "Relu_output_0", "Relu", (4, 4), True)]


def test_signature_folds_long_names_within_80_columns() -> None:
    for terminal in (False, True):
        buffer = io.StringIO()
        render_signature(model_signature(_LongNames()), Console(file=buffer, width=200, force_terminal=terminal))
        plain = re.sub(r"\x1b\[[0-9;]*m", "", buffer.getvalue())
        assert max(len(line) for line in plain.splitlines()) <= 80
        assert plain.count("/block/deep/") == 1 and "yes" in plain
        assert "a notice" in plain and "16" in plain  # units of the (4, 4) layer

