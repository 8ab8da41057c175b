"""Findings about hidden layers and units: ν below 1 as sampling noise, ν against depth, dead units.

The rules (common practice, no source; reading aids, not statistical tests):

``DEPTH_GROWTH = 0.05``
    A hidden layer whose variance-weighted mean ν exceeds that of the layer
    before it by more than 5 % marks growth of interaction order with depth;
    when no layer does, the report says that ν does not grow with depth.
ν below 1
    Any unit that varies has ν >= 1 (ν = Σ_u |u| σ²_u / σ² with |u| >= 1), so
    an estimate below 1, or an interval lying entirely below 1, is sampling
    noise at the current N. It is reported as estimated (never clamped) and
    flagged. Outputs count as units here too.
Constant hidden units
    Units that do not vary under the input laws carry no information for
    inputs in these ranges.
"""

from __future__ import annotations

import itertools
from collections.abc import Sequence

from ...results import AuditResult
from ..describe import layer_inert, layer_units
from ..text import finite, fmt, fmt_count, fmt_setting, listing
from .base import Finding, active_outputs

__all__ = ["CHAIN_LIMIT", "DEPTH_GROWTH", "below_one", "dead_units", "depth"]

DEPTH_GROWTH = 0.05
CHAIN_LIMIT = 6


def _chain(items: Sequence[tuple[str, float]]) -> str:
    """``a 1.0 → b 1.2 → …``; long chains keep their ends."""
    shown = [f"{n} {fmt(v)}" for n, v in items]
    if len(shown) > CHAIN_LIMIT:
        cut = len(shown) - CHAIN_LIMIT + 1
        shown = [*shown[:3], f"… ({cut} more)", *shown[3 + cut :]]
    return " → ".join(shown)


def below_one(result: AuditResult) -> Finding | None:
    """Units (outputs or hidden units) whose ν estimate, or whole interval, is below 1 (kind ``"below_one"``)."""
    count, below_ci, total = 0, 0, 0
    lowest: tuple[float, str] | None = None
    where: list[str] = []
    for o in active_outputs(result):
        nu = o.mean_dimension
        total += 1
        if finite(nu.estimate) and nu.estimate < 1.0:
            count += 1
            below_ci += bool(finite(nu.ci_high) and nu.ci_high < 1.0)
            where.append(o.name)
            if lowest is None or nu.estimate < lowest[0]:
                lowest = (nu.estimate, o.name)
    for layer in result.layers:
        in_layer = 0
        if layer.units:
            for u in layer.units:
                if u.inert or u.mean_dimension is None:
                    continue
                total += 1
                e = u.mean_dimension
                if finite(e.estimate) and e.estimate < 1.0:
                    in_layer += 1
                    below_ci += bool(finite(e.ci_high) and e.ci_high < 1.0)
                    if lowest is None or e.estimate < lowest[0]:
                        lowest = (e.estimate, layer.name)
        else:  # summary only: the minimum tells whether any unit went below 1
            low = layer.summary.get("nu_min")
            if finite(low) and low < 1.0:
                in_layer = 1
                if lowest is None or low < lowest[0]:
                    lowest = (low, layer.name)
        count += in_layer
        if in_layer:
            where.append(layer.name)
    if lowest is None:
        return None
    points = result.design.get("points")
    at = f"N = {fmt_count(points)} points" if finite(points) else "this N"
    units = f"{count} of {fmt_count(total)} units" if total else "some units"
    place = f"all in {where[0]}" if len(where) == 1 else f"in {listing(where)}"
    lowest_at = "" if len(where) == 1 else f" in {lowest[1]}"
    intervals = f"; {below_ci} interval{'s lie' if below_ci != 1 else ' lies'} entirely below 1" if below_ci else ""
    return Finding(
        "below_one",
        f"ν estimated below 1 for {units}, {place} (lowest {fmt(lowest[0])}{lowest_at}"
        f"{intervals}). A unit that varies has ν ≥ 1 by definition, so this is sampling noise "
        f"at {at}; the numbers are shown as estimated. More points narrow it.",
        tuple(where),
    )


def depth(result: AuditResult) -> Finding | None:
    """ν (variance-weighted) from layer to layer: kind ``"depth"`` when it grows, ``"depth_flat"`` when not."""
    layers = [(ly.name, ly.summary.get("nu_weighted")) for ly in result.layers]
    layers = [(n, float(v)) for n, v in layers if finite(v)]
    if len(layers) < 2:
        return None
    steps = [(a, b) for a, b in itertools.pairwise(layers) if b[1] > a[1] * (1.0 + DEPTH_GROWTH)]
    if not steps:
        return Finding(
            "depth_flat",
            f"Interaction order does not grow with depth (no layer more than "
            f"{fmt_setting(100 * DEPTH_GROWTH)} % above the one before): ν (variance-weighted) "
            f"{_chain(layers)}.",
            tuple(n for n, _ in layers),
        )
    if len(steps) == len(layers) - 1:
        text = f"Interaction order grows with depth: ν (variance-weighted) {_chain(layers)}."
    else:
        pairs = "; ".join(f"{a[0]} {fmt(a[1])} → {b[0]} {fmt(b[1])}" for a, b in steps[:3])
        more = f"; and {len(steps) - 3} more" if len(steps) > 3 else ""
        text = f"Interaction order grows between some layers: ν (variance-weighted) {pairs}{more}."
    subjects = tuple(dict.fromkeys(n for step in steps for n, _ in step))
    return Finding("depth", text, subjects)


def dead_units(result: AuditResult) -> Finding | None:
    """Hidden layers with constant units (kind ``"dead_units"``)."""
    dead = []
    for layer in result.layers:
        n_inert, n_units = layer_inert(layer), layer_units(layer)
        if isinstance(n_inert, int | float) and n_inert > 0:
            dead.append((layer.name, f"{layer.name} {fmt_count(n_inert)} of {fmt_count(n_units)}"))
    if not dead:
        return None
    return Finding(
        "dead_units",
        f"Hidden units constant under these input laws: {listing([t for _, t in dead])}. "
        "They carry no information for inputs in these ranges.",
        tuple(n for n, _ in dead),
    )
