"""Plain-language findings of an audit, derived from its numbers by rules of thumb.

The rules are common practice, no source: they are reading aids, not
statistical tests. The hidden-layer rules are in
:mod:`audit.report.findings.layers`.

``NEARLY_ADDITIVE_NU = 1.1``
    An output whose mean dimension ν stays below 1.1 even at the upper end of
    its 95 % interval is nearly additive: almost all of its variance comes from
    inputs acting one at a time. Such functions suit quasi-Monte Carlo
    integration well and one-input-at-a-time explanations miss little.
``INTERACTION_NU = 1.5`` and ``ADDITIVE_SHARE_FLOOR = 0.7``
    An output with ν above 1.5, or whose first-order indices add up to less
    than 0.7 of its variance, is dominated by interactions: its inputs cannot
    be read one at a time.
``threshold`` (default ``DEFAULT_THRESHOLD = 0.001``)
    An input whose normalised total index stays below the threshold even at
    the upper end of its interval, for every output that varies, looks
    freezable: fixing it at a nominal value should change the outputs little.
``WIDE_INTERVAL = 0.10``
    When the half-width of ν's interval exceeds 10 % of the estimate, the
    run is too short for a conclusion. Randomized quasi-Monte Carlo error falls
    at least like 1/√N, so four times the points halve the interval.
``MIN_REPLICATES = 2``, ``GOOD_REPLICATES = 8``
    An interval needs at least two independent randomizations; with fewer than
    about eight the Student-t interval is wide and itself unreliable.
Next steps
    Outputs dominated by interactions, and inputs that look freezable, lead to
    a suggested ``netdim advise`` command (which inputs to pre-integrate, what
    freezing costs); intervals too wide lead to a suggested rerun with four
    times the points (:mod:`audit.report.commands`).

Lists inside findings are capped at :data:`~audit.report.text.LIST_LIMIT`
items (``"and N more"``), so the findings stay short however many outputs and
inputs a model has.
"""

from __future__ import annotations

from ...results import AuditResult
from ..commands import suggest
from ..text import LIST_LIMIT, finite, fmt, fmt_count, fmt_setting, listing
from .base import Finding, active_outputs, relative_half_width
from .layers import below_one, dead_units, depth

__all__ = [
    "ADDITIVE_SHARE_FLOOR",
    "DEFAULT_THRESHOLD",
    "GOOD_REPLICATES",
    "INTERACTION_NU",
    "MIN_REPLICATES",
    "NEARLY_ADDITIVE_NU",
    "WIDE_INTERVAL",
    "derive_findings",
    "freezable_inputs",
]

DEFAULT_THRESHOLD = 0.001
NEARLY_ADDITIVE_NU = 1.1
INTERACTION_NU = 1.5
ADDITIVE_SHARE_FLOOR = 0.7
WIDE_INTERVAL = 0.10
MIN_REPLICATES = 2
GOOD_REPLICATES = 8


def freezable_inputs(result: AuditResult, threshold: float) -> tuple[list[str], dict[str, list[str]]]:
    """Inputs freezable for every varying output, and per output those freezable for it only.

    Returns
    -------
    everywhere : list of str
        Inputs whose total index is below ``threshold`` at the upper end of its
        interval for every output that varies, in input order.
    some : dict of str to list of str
        Per output, the other inputs below the threshold for it.
    """
    per_output: dict[str, list[str]] = {}
    judged = [o for o in active_outputs(result) if o.total_index]
    for o in judged:
        per_output[o.name] = [f.feature for f in o.total_index if f.value.ci_high < threshold]
    if not judged:
        return [], {}
    everywhere = [f.feature for f in judged[0].total_index if all(f.feature in per_output[o.name] for o in judged)]
    some = {
        name: [x for x in feats if x not in everywhere]
        for name, feats in per_output.items()
        if any(x not in everywhere for x in feats)
    }
    return everywhere, some


def _freezable_some_text(some: dict[str, list[str]], n_outputs: int, threshold: float) -> str:
    """Inputs freezable for some outputs only, grouped by input, most outputs first."""
    by_input: dict[str, list[str]] = {}
    for name, feats in some.items():
        for x in feats:
            by_input.setdefault(x, []).append(name)
    order = sorted(by_input, key=lambda x: -len(by_input[x]))  # stable: input order on ties
    items = []
    for x in order[:LIST_LIMIT]:
        outs = by_input[x]
        where = ", ".join(outs) if len(outs) <= 2 else f"{len(outs)} of {n_outputs} outputs"
        items.append(f"{x} for {where}")
    rest = len(order) - len(items)
    listed = "; ".join(items)
    if rest:
        listed += f"; and {rest} more input{'' if rest == 1 else 's'}"
    noun = "input looks" if len(order) == 1 else "inputs look"
    return (
        f"{len(order)} {noun} freezable for some outputs only (total index below "
        f"{fmt_setting(threshold)} for them, still needed by others): {listed}."
    )


def _uncertain(result: AuditResult) -> Finding | None:
    active = active_outputs(result)
    wide = [(o, relative_half_width(o.mean_dimension)) for o in active]
    wide = [(o, h) for o, h in wide if h > WIDE_INTERVAL]
    if not wide:
        return None
    names = [f"{o.name} (±{fmt(100 * h, 3)} %)" for o, h in wide]
    points = result.design.get("points")
    kind = "plain Monte Carlo" if result.design.get("sampler") == "mc" else None
    if kind:
        rate = f"the {kind} error falls like 1/√N"
    else:
        rate = "the randomized quasi-Monte Carlo error falls at least like 1/√N"
    rerun: tuple[str, ...] = ()
    if finite(points) and points > 0:
        more = f"N = {fmt_count(4 * int(points))} points instead of {fmt_count(int(points))}"
        rerun = suggest(result, "audit", f"--points {4 * int(points)}")
    else:
        more = "four times the current points"
    return Finding(
        "uncertain",
        f"Interval of ν too wide for a conclusion (half-width above "
        f"{fmt_setting(100 * WIDE_INTERVAL)} % of the estimate): {listing(names)}. "
        f"Run with {more} to halve it: {rate}.",
        tuple(o.name for o, _ in wide),
        rerun,
    )


def derive_findings(result: AuditResult, *, threshold: float = DEFAULT_THRESHOLD) -> list[Finding]:
    """Plain-language findings derived from an audit's numbers.

    Parameters
    ----------
    result : AuditResult
        The audit.
    threshold : float, optional
        Total-index level below which an input looks freezable.

    Returns
    -------
    list of Finding
        In a fixed order, by kind: ``"inert"`` outputs, nearly ``"additive"``
        outputs, outputs dominated by ``"interactions"``, ``"freezable"``
        inputs (for every output) and ``"freezable_some"`` (for some), intervals
        too wide for a conclusion (``"uncertain"``) or missing
        (``"no_interval"``), ``"below_one"`` (sampling noise), ``"depth"`` or
        ``"depth_flat"``, constant hidden units (``"dead_units"``), and a
        suggested ``"next"`` step. The rules are listed in the module docstring
        (common practice, no source).
    """
    out: list[Finding] = []
    active = active_outputs(result)

    inert = [o.name for o in result.outputs if o.inert or o.mean_dimension is None]
    if inert:
        out.append(
            Finding(
                "inert",
                f"Constant under these input laws: {listing(inert)}. "
                "There is nothing to rank for them; check the input ranges if they should vary.",
                tuple(inert),
            )
        )

    additive = [o for o in active if o.mean_dimension.ci_high < NEARLY_ADDITIVE_NU]
    if additive:
        names = [f"{o.name} (ν {fmt(o.mean_dimension.estimate)})" for o in additive]
        out.append(
            Finding(
                "additive",
                f"Nearly additive (ν below {fmt_setting(NEARLY_ADDITIVE_NU)} even at the upper "
                f"end of its interval): {listing(names)}. Favourable for quasi-Monte Carlo, and "
                "one-input-at-a-time views miss little.",
                tuple(o.name for o in additive),
            )
        )

    interacting = []
    for o in active:
        share_low = bool(o.first_order) and o.additive_share < ADDITIVE_SHARE_FLOOR
        if o.mean_dimension.estimate > INTERACTION_NU or share_low:
            text = f"{o.name} (ν {fmt(o.mean_dimension.estimate)}"
            if o.first_order:
                text += f", additive share {fmt(o.additive_share)}"
            interacting.append((o.name, text + ")"))
    if interacting:
        out.append(
            Finding(
                "interactions",
                f"Dominated by interactions (ν above {fmt_setting(INTERACTION_NU)} or additive "
                f"share below {fmt_setting(ADDITIVE_SHARE_FLOOR)}): "
                f"{listing([t for _, t in interacting])}. "
                "The effect of one input depends on the others; do not read inputs one at a time.",
                tuple(n for n, _ in interacting),
            )
        )

    everywhere, some = freezable_inputs(result, threshold)
    if everywhere:
        out.append(
            Finding(
                "freezable",
                f"Inputs that look freezable (total index below {fmt_setting(threshold)} even at "
                f"the upper end of its interval, for every output): {listing(everywhere)} "
                f"({len(everywhere)} in all). Fixing them at a nominal value should change the "
                "outputs little.",
                tuple(everywhere),
            )
        )
    if some:
        n_judged = sum(1 for o in active if o.total_index)
        out.append(
            Finding(
                "freezable_some",
                _freezable_some_text(some, n_judged, threshold),
                tuple(dict.fromkeys(x for feats in some.values() for x in feats)),
            )
        )

    uncertain = _uncertain(result)
    if uncertain is not None:
        out.append(uncertain)

    lone = [o.name for o in active if not finite(relative_half_width(o.mean_dimension))]
    if lone:
        out.append(
            Finding(
                "no_interval",
                f"No interval for ν of {listing(lone)}: intervals need at least "
                f"{MIN_REPLICATES} independent randomizations; use {GOOD_REPLICATES} or more "
                "before drawing conclusions.",
                tuple(lone),
            )
        )

    out += [f for f in (below_one(result), depth(result), dead_units(result)) if f is not None]

    reasons = []
    if interacting:
        reasons.append("which input to pre-integrate to lower ν of the interacting outputs")
    if everywhere or some:
        reasons.append("what freezing the inputs above would cost")
    advise = suggest(result, "advise")
    if reasons and advise:
        out.append(
            Finding(
                "next",
                f"Next step: netdim advise shows {' and '.join(reasons)}; after retraining, "
                "netdim compare OLD NEW (same input options) tells whether ν or the ranking "
                "moved beyond noise.",
                (),
                advise,
            )
        )
    return out
