"""Inputs: their marginal laws, one-hot blocks and groups, the TOML input spec, and specs from training data."""

from __future__ import annotations

from .groups import GroupSpec, InputGroup, resolve_groups
from .laws import LAWS, Law, law_from_dict
from .spec import InputSpec, assumed_spec, load_spec, parse_spec, uniform_spec
from .tables import Table, read_table
from .variables import OneHot, Variables, build_variables

__all__ = [
    "LAWS",
    "GroupSpec",
    "InputGroup",
    "InputSpec",
    "Law",
    "OneHot",
    "Table",
    "Variables",
    "assumed_spec",
    "build_variables",
    "law_from_dict",
    "load_spec",
    "parse_spec",
    "read_table",
    "resolve_groups",
    "uniform_spec",
]
