"""An input spec from a table of training inputs: empirical laws, discrete columns, one-hot blocks, dependence.

Per column of the table (:mod:`audit.inputs.tables`):

* text → a category: a discrete law over its labels (codes 0..k−1 in sorted
  order of the labels: check that the model codes them so), probabilities the frequencies;
* at most ``max_levels`` distinct numbers → a discrete law on them, with their
  frequencies (whole numbers stay whole, so an integer model input is fed what it saw);
* more → the empirical law: the data's quantile function, piecewise linear
  between the order statistics (all of them up to ``knots`` rows; beyond, the
  quantiles at ``knots`` evenly spaced levels). On request (``fit``) a standard law
  (normal, lognormal, uniform) fitted by maximum likelihood takes its place when
  a goodness-of-fit test does not reject it at level ``alpha``: the
  Anderson–Darling statistic with the parameters fitted to the data, its p-value
  by parametric bootstrap (:func:`scipy.stats.goodness_of_fit`), which accounts
  for the fitting; the law with the largest p-value wins.
* columns of 0s and 1s, side by side, that add up to exactly 1 on every row → a
  one-hot block: one categorical input (:mod:`audit.inputs.variables`).

Sobol' indices assume independent inputs, and the design samples each input
from its own law. Pairs of inputs whose Spearman rank correlation exceeds
``dependence`` in size (default 0.7, a common reading of a "strong"
correlation, no source) are warned about, with groups suggested: the connected
sets of such pairs. A group's index is then its inputs' joint share, which does
not depend on how the dependence would split it (the design still samples
them independently; the warning says so).

References
----------
.. [1] "Asymptotic theory of certain 'goodness of fit' criteria based on
   stochastic processes", Annals of Mathematical Statistics, 1952 (the
   Anderson–Darling statistic).
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import UserError, check_choice, suggest
from .laws import Law
from .tables import Table
from .tomlwrite import TomlWriter

__all__ = ["FITS", "ColumnSummary", "DataSpec", "DependentPair", "spec_from_table"]

#: Standard laws that can be fitted (``fit``).
FITS = ("normal", "lognormal", "uniform")
#: Bootstrap samples of the goodness-of-fit test.
FIT_SAMPLES = 499


@dataclass(frozen=True)
class ColumnSummary:
    """One column: what law it got and why.

    Attributes
    ----------
    name : str
    kind : {"continuous", "discrete", "category", "one-hot"}
    law : Law or None
        ``None`` for a column of a one-hot block (its block carries the law).
    low, high : float
        Range of the data (NaN for text).
    distinct, missing : int
    note : str
        The fit tried, the block it belongs to...
    """

    name: str
    kind: str
    law: Law | None
    low: float
    high: float
    distinct: int
    missing: int
    note: str = ""


@dataclass(frozen=True)
class DependentPair:
    """Two inputs with a strong rank correlation."""

    first: str
    second: str
    rho: float


@dataclass(frozen=True)
class DataSpec:
    """A spec made from a table: per-column summaries, warnings, and the TOML text."""

    source: str
    rows: int
    columns: list[ColumnSummary]
    one_hot: list[tuple[str, list[str], list[float]]]
    pairs: list[DependentPair]
    groups: list[list[str]]
    dependence: float
    text: str
    warnings: list[str] = field(default_factory=list)


def _one_hot_blocks(table: Table, names: list[str]) -> list[tuple[int, int]]:
    """Runs [start, stop) of adjacent 0/1 columns adding up to 1 on every row."""
    binary = [
        c.dtype.kind == "f" and np.isfinite(c).all() and np.isin(c, (0.0, 1.0)).all() and len(np.unique(c)) == 2
        for c in (table.column(n) for n in names)
    ]
    blocks, j = [], 0
    while j < len(names):
        if not binary[j]:
            j += 1
            continue
        total, k, found = np.zeros(table.rows), j, None
        while k < len(names) and binary[k]:
            total = total + table.column(names[k])
            if total.max() > 1:
                break
            k += 1
            if k - j >= 2 and (total == 1).all():
                found = k
        if found:
            blocks.append((j, found))
            j = found
        else:
            j += 1
    return blocks


def _block_name(cols: list[str], taken: set[str]) -> str:
    prefix = cols[0]
    for c in cols[1:]:
        while not c.startswith(prefix):
            prefix = prefix[:-1]
    name = prefix.rstrip("_=-. ") or "category"
    base, i = name, 2
    while name in taken:
        name, i = f"{base}_{i}", i + 1
    return name


def _fit(values: np.ndarray, kinds: tuple[str, ...], alpha: float, seed: int) -> tuple[Law | None, str]:
    """The best standard law not rejected, and a note of the tests."""
    from scipy import stats

    families = {"normal": (stats.norm, {}), "lognormal": (stats.lognorm, {"loc": 0.0}), "uniform": (stats.uniform, {})}
    best: tuple[float, Law] | None = None
    notes = []
    for kind in kinds:
        if kind == "lognormal" and values.min() <= 0:
            notes.append("lognormal impossible (values ≤ 0)")
            continue
        dist, known = families[kind]
        with warnings.catch_warnings(), np.errstate(all="ignore"):
            warnings.simplefilter("ignore", RuntimeWarning)  # samples the statistic cannot judge count as extreme
            res = stats.goodness_of_fit(dist, values, known_params=known, n_mc_samples=FIT_SAMPLES, rng=seed)
        p, fitted = float(res.pvalue), res.fit_result.params
        if kind == "normal":
            law = Law("normal", {"mean": fitted.loc, "sd": fitted.scale})
        elif kind == "lognormal":
            law = Law("lognormal", {"log_mean": float(np.log(fitted.scale)), "log_sd": fitted.s})
        else:
            law = Law("uniform", {"low": fitted.loc, "high": fitted.loc + fitted.scale})
        verdict = "kept" if p >= alpha else "rejected"
        notes.append(f"{kind} {verdict} (p = {p:.3g})")
        if p >= alpha and (best is None or p > best[0]):
            best = (p, law)
    return (best[1] if best else None), "; ".join(notes)


def _column(name: str, values: np.ndarray, opts: dict[str, Any]) -> ColumnSummary:
    if values.dtype.kind != "f":
        labels, counts = np.unique(values, return_counts=True)
        law = Law("discrete", {"labels": labels.tolist(), "probabilities": (counts / counts.sum()).tolist()})
        note = f"text: codes 0..{len(labels) - 1} in sorted order of the labels"
        return ColumnSummary(name, "category", law, np.nan, np.nan, len(labels), 0, note)
    ok = values[np.isfinite(values)]
    missing = len(values) - len(ok)
    if ok.size == 0:
        raise UserError(f"Column '{name}' of the table has no numbers. Leave it out with `drop`.")
    distinct, counts = np.unique(ok, return_counts=True)
    lo, hi = float(ok.min()), float(ok.max())
    if len(distinct) <= opts["max_levels"]:
        law = Law("discrete", {"values": distinct.tolist(), "probabilities": (counts / counts.sum()).tolist()})
        return ColumnSummary(name, "discrete", law, lo, hi, len(distinct), missing)
    knots = np.sort(ok)
    if len(knots) > opts["knots"]:
        knots = np.quantile(ok, np.linspace(0, 1, opts["knots"]))
    law = Law("empirical", {"quantiles": knots.tolist()})
    note = ""
    if opts["fit"]:
        fitted, note = _fit(ok, opts["fit"], opts["alpha"], opts["seed"])
        law = fitted or law
    return ColumnSummary(name, "continuous", law, lo, hi, len(distinct), missing, note)


def _ranks(values: np.ndarray) -> np.ndarray:
    from scipy import stats

    return stats.rankdata(values, nan_policy="omit")


def _dependent(table: Table, inputs: dict[str, np.ndarray], threshold: float) -> list[DependentPair]:
    """Pairs with |Spearman ρ| above ``threshold`` (on the rows where both are known)."""
    names = list(inputs)
    ranks = {n: _ranks(v) for n, v in inputs.items()}
    pairs = []
    for a in range(len(names)):
        for b in range(a + 1, len(names)):
            x, y = inputs[names[a]], inputs[names[b]]
            both = np.isfinite(x) & np.isfinite(y)
            if both.sum() < 3:
                continue
            if both.all():
                rx, ry = ranks[names[a]], ranks[names[b]]
            else:
                rx, ry = _ranks(x[both]), _ranks(y[both])
            if rx.std() == 0 or ry.std() == 0:
                continue
            rho = float(np.corrcoef(rx, ry)[0, 1])
            if abs(rho) > threshold:
                pairs.append(DependentPair(names[a], names[b], rho))
    return pairs


def _components(pairs: list[DependentPair], order: list[str]) -> list[list[str]]:
    parent = {n: n for n in order}

    def find(n: str) -> str:
        while parent[n] != n:
            parent[n] = parent[parent[n]]
            n = parent[n]
        return n

    for p in pairs:
        parent[find(p.first)] = find(p.second)
    sets: dict[str, list[str]] = {}
    for n in order:
        sets.setdefault(find(n), []).append(n)
    return [s for s in sets.values() if len(s) > 1]


def spec_from_table(
    table: Table,
    *,
    drop: tuple[str, ...] = (),
    fit: tuple[str, ...] = (),
    alpha: float = 0.05,
    max_levels: int = 20,
    dependence: float = 0.7,
    knots: int = 1025,
    group_dependent: bool = False,
    groups: tuple[tuple[str, tuple[str, ...]], ...] = (),
    seed: int = 0,
) -> DataSpec:
    """An input spec for the columns of ``table`` (see the module docstring).

    Parameters
    ----------
    table : Table
    drop : tuple of str
        Columns that are not model inputs (a target, an id).
    fit : tuple of {"normal", "lognormal", "uniform"}
        Standard laws to try on the continuous columns (default none: empirical laws).
    alpha : float
        Level of the goodness-of-fit test: a law with p < alpha is rejected.
    max_levels : int
        Columns with at most this many distinct numbers get discrete laws.
    dependence : float
        Pairs with |Spearman ρ| above this are warned about.
    knots : int
        Most knots of an empirical law.
    group_dependent : bool
        Write the suggested groups as the spec's ``[groups]`` (else as comments).
    groups : tuple of (name, input names)
        Groups to write into the spec's ``[groups]`` (with ``group_dependent``, the
        suggested groups that share no input with these are added).
    seed : int
        Seed of the goodness-of-fit bootstrap.

    Returns
    -------
    DataSpec

    Examples
    --------
    >>> import numpy as np
    >>> from audit.inputs.tables import Table
    >>> from audit.inputs.fromdata import spec_from_table
    >>> rng = np.random.default_rng(0)
    >>> t = Table(["a", "b"], [rng.uniform(size=200), rng.integers(0, 3, 200).astype(float)], "t.csv")
    >>> [c.law.kind for c in spec_from_table(t).columns]
    ['empirical', 'discrete']
    """
    for f in fit:
        check_choice(f, "fit", FITS)
    missing = [n for n in drop if n not in table.names]
    if missing:
        table.column(missing[0])  # raises, naming the columns there are
    names = [n for n in table.names if n not in drop]
    if not names:
        raise UserError("Every column of the table was dropped; keep the model's inputs.")
    opts = {"max_levels": max_levels, "knots": knots, "fit": tuple(fit), "alpha": alpha, "seed": seed}
    blocks = _one_hot_blocks(table, names)
    in_block = {j: b for b, (start, stop) in enumerate(blocks) for j in range(start, stop)}
    taken = set(names)
    one_hot = []
    for start, stop in blocks:
        cols = names[start:stop]
        name = _block_name(cols, taken)
        taken.add(name)
        one_hot.append((name, cols, [float(table.column(c).mean()) for c in cols]))
    columns = []
    inputs: dict[str, np.ndarray] = {}
    for j, name in enumerate(names):
        values = table.column(name)
        if j in in_block:
            block = one_hot[in_block[j]]
            columns.append(ColumnSummary(name, "one-hot", None, 0.0, 1.0, 2, 0, f"one-hot column of '{block[0]}'"))
            if name == block[1][0]:
                codes = np.argmax(np.column_stack([table.column(c) for c in block[1]]), axis=1)
                inputs[block[0]] = codes.astype(np.float64)
            continue
        summary = _column(name, values, opts)
        columns.append(summary)
        if summary.kind == "category":
            inputs[name] = np.searchsorted(np.array(summary.law.params["labels"]), values).astype(np.float64)
        else:
            inputs[name] = values
    for gname, members in groups:
        for m in members:
            if m not in inputs:
                raise UserError(
                    f"The group '{gname}' names '{m}', which is not an input of the table." + suggest(m, inputs)
                )
    pairs = _dependent(table, inputs, dependence)
    suggested = _components(pairs, list(inputs))
    warnings = []
    if pairs:
        listed = ", ".join(f"{p.first}–{p.second} (ρ = {p.rho:+.2f})" for p in pairs[:8])
        more = f" and {len(pairs) - 8} more" if len(pairs) > 8 else ""
        sets = "; ".join("{" + ", ".join(g) + "}" for g in suggested)
        warnings.append(
            f"{len(pairs)} pair{'s' if len(pairs) != 1 else ''} of inputs are strongly dependent (Spearman |ρ| > "
            f"{dependence:g}): {listed}{more}. Sobol' indices assume independent inputs and the design samples each "
            f"input on its own, so rows the model never saw are evaluated. Consider grouping them: {sets} "
            f"({'written as [groups]' if group_dependent else 'commented out at the end of the spec'}), so that each "
            "set gets one index whatever the dependence within it."
        )
    chosen = [(n, list(m)) for n, m in groups]
    if group_dependent:
        used = {m for _, ms in chosen for m in ms}
        chosen += [(f"dependent_{i + 1}", g) for i, g in enumerate(suggested) if not used & set(g)]
    text = _write(table, columns, one_hot, pairs, suggested, chosen, dependence)
    return DataSpec(table.source, table.rows, columns, one_hot, pairs, suggested, dependence, text, warnings)


def _write(
    table: Table,
    columns: list[ColumnSummary],
    one_hot: list[tuple[str, list[str], list[float]]],
    pairs: list[DependentPair],
    suggested: list[list[str]],
    chosen: list[tuple[str, list[str]]],
    dependence: float,
) -> str:
    w = TomlWriter()
    w.comment(f"netdim input spec made from {table.source} ({table.rows} rows) by `netdim inputs-from-data`.")
    w.comment("empirical: the data's quantile function, piecewise linear between the sorted values (`quantiles`).")
    w.comment("discrete: the distinct values with their frequencies. Edit freely; the indices change with the laws.")
    w.key("title", f"Inputs of {table.source}")
    w.blank()
    w.table("inputs")
    w.key("count", len(columns))
    for c in columns:
        w.blank()
        w.array_table("inputs.feature")
        w.key("name", c.name)
        span = "" if c.kind == "category" else f"range {c.low:g} to {c.high:g}, "
        miss = f", {c.missing} missing" if c.missing else ""
        w.comment(f"{c.kind}: {span}{c.distinct} distinct values{miss}" + (f"; {c.note}" if c.note else ""))
        if c.law is None:
            continue
        for k, v in c.law.to_dict().items() if c.law.kind != "empirical" else [("law", "empirical")]:
            w.key(k, v)
        if c.law.kind == "empirical":
            w.key("quantiles", list(c.law.params["quantiles"]))
    for name, cols, probs in one_hot:
        w.blank()
        w.array_table("inputs.one_hot")
        w.key("name", name)
        w.key("columns", cols)
        w.key("probabilities", [p / sum(probs) for p in probs])
    if pairs:
        w.blank()
        w.comment(f"Strongly dependent inputs (Spearman |rho| > {dependence:g}):")
        for p in pairs:
            w.comment(f"  {p.first} and {p.second}: rho = {p.rho:+.3f}")
    if chosen:
        w.blank()
        w.table("groups")
        for name, members in chosen:
            w.array_table("groups.group")
            w.key("name", name)
            w.key("inputs", members)
    elif suggested:
        w.comment("Uncomment to measure each set as one group (netdim audit --view groups or both):")
        w.lines.append("# [groups]")
        for i, g in enumerate(suggested):
            w.lines.append("# [[groups.group]]")
            w.key("name", f"dependent_{i + 1}", "# ")
            w.key("inputs", g, "# ")
    return w.text()
