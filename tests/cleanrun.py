"""Run Python code in a fresh interpreter where netdim is not importable (test helper).

The child runs with ``-S -I`` (no site processing, no working folder, no user
paths): only the site-packages folders of this interpreter are put back on its
path, so numpy, onnxruntime and torch import, while netdim (installed editable,
through a ``.pth`` hook that ``-S`` skips) does not. The child checks that itself.
"""

from __future__ import annotations

import json
import site
import subprocess
import sys
import textwrap
from collections.abc import Sequence

__all__ = ["run_clean"]

_PRELUDE = """
import sys, importlib.util
sys.path[:0] = {paths}
assert importlib.util.find_spec("audit") is None, "netdim is importable in the clean interpreter"
"""


def run_clean(code: str, extra_paths: Sequence[str] = (), timeout: float = 240.0) -> str:
    """Run ``code`` in a clean interpreter; return its standard output (raise on failure)."""
    paths = [*extra_paths, *site.getsitepackages()]
    program = _PRELUDE.format(paths=json.dumps(paths)) + textwrap.dedent(code)
    done = subprocess.run(
        [sys.executable, "-S", "-I", "-c", program], capture_output=True, text=True, timeout=timeout, check=False
    )
    if done.returncode != 0:
        raise AssertionError(f"the clean interpreter failed:\n{done.stderr[-3000:]}")
    return done.stdout
