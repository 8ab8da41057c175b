"""Inputs: their marginal laws and the TOML input spec."""

from __future__ import annotations

from .laws import LAWS, Law, law_from_dict
from .spec import InputSpec, load_spec, parse_spec, uniform_spec

__all__ = ["LAWS", "InputSpec", "Law", "law_from_dict", "load_spec", "parse_spec", "uniform_spec"]
