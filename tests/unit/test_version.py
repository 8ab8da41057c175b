"""The version (audit.version): written once, read by the package metadata and the command line."""

import importlib.metadata
import re

import audit
from audit.version import __version__


def test_version_is_one_string_everywhere():
    assert re.fullmatch(r"\d+\.\d+\.\d+", __version__)
    assert audit.__version__ == __version__
    # pyproject.toml reads the version from audit.version (dynamic = ["version"])
    assert importlib.metadata.version("netdim") == __version__
