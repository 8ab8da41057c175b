"""Point sets and designs: uniforms on the cube, mapped through the input laws, block by block."""

from __future__ import annotations

from .design import EPS, SAMPLERS, Block, Design, map_to_laws, map_variables, round_points
from .points import POINT_SETS, MonteCarlo, PointSet, ScrambledSobol, make_point_set

__all__ = [
    "EPS",
    "POINT_SETS",
    "SAMPLERS",
    "Block",
    "Design",
    "MonteCarlo",
    "PointSet",
    "ScrambledSobol",
    "make_point_set",
    "map_to_laws",
    "map_variables",
    "round_points",
]
