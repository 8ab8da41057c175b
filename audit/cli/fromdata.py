"""``netdim inputs-from-data TABLE``: write an input spec from a table of training inputs, and summarise it.

The laws, tests and warnings are made by :func:`audit.inputs.fromdata.spec_from_table`;
this module reads the arguments, prints the per-feature summary and the
warnings, and writes the TOML spec atomically (never over an existing file
unless ``--force``).
"""

from __future__ import annotations

import argparse
import math
import os
import tempfile
from pathlib import Path
from typing import Any

from ..errors import UserError, check_int, check_number

__all__ = ["add_parser", "cmd_inputs_from_data"]


def add_parser(sub: argparse._SubParsersAction) -> None:
    """The ``inputs-from-data`` subcommand and its options."""
    p = sub.add_parser(
        "inputs-from-data",
        help="write an input spec (laws, discrete and one-hot inputs, dependence warnings) from training data",
    )
    p.add_argument("table", metavar="TABLE", help="training inputs: .csv (with a header), .npy, .npz or .parquet")
    p.add_argument("--out", metavar="SPEC.toml", help="where to write the spec (default: TABLE with .toml)")
    p.add_argument("--force", action="store_true", help="overwrite an existing spec file")
    p.add_argument("--drop", metavar="COLUMN,...", help="columns that are not model inputs (a target, an id)")
    p.add_argument(
        "--fit",
        metavar="LAW,...",
        help="try these standard laws on continuous columns: normal, lognormal, uniform (kept when an "
        "Anderson–Darling test with fitted parameters does not reject them; default: empirical laws only)",
    )
    p.add_argument("--alpha", type=float, default=0.05, help="level of the goodness-of-fit test (0.05)")
    p.add_argument(
        "--max-levels", type=int, default=20, help="columns with at most this many distinct values are discrete (20)"
    )
    p.add_argument(
        "--dependence", type=float, default=0.7, help="warn about pairs with |Spearman rank correlation| above (0.7)"
    )
    p.add_argument("--group-dependent", action="store_true", help="write the suggested groups of dependent inputs")
    p.add_argument(
        "--group",
        metavar="NAME=INPUT,...",
        action="append",
        default=[],
        help="write this group of inputs into the spec's [groups] (repeat for several)",
    )
    p.add_argument("--knots", type=int, default=1025, help="most knots of an empirical law (1025)")
    p.add_argument("--seed", type=int, default=0, help="seed of the goodness-of-fit bootstrap (0)")
    p.add_argument("--debug", action="store_true", help="show tracebacks of errors")
    p.add_argument("--quiet", "-q", action="store_true", help="print nothing but errors")


def _names(text: str | None) -> tuple[str, ...]:
    return tuple(n.strip() for n in text.split(",") if n.strip()) if text else ()


def _groups(items: list[str]) -> tuple[tuple[str, tuple[str, ...]], ...]:
    out = []
    for item in items:
        name, _, members = item.partition("=")
        if not name.strip() or not _names(members):
            raise UserError(f"--group takes NAME=INPUT,INPUT,..., e.g. --group weather=t,w; got '{item}'.")
        out.append((name.strip(), _names(members)))
    return tuple(out)


def _write(path: Path, text: str, force: bool) -> None:
    if path.exists() and not force:
        raise UserError(f"'{path}' exists; choose another `out` or add --force to overwrite it.")
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise UserError(f"The folder of '{path}' does not exist; create it or choose another `out`.")
    fd, tmp = tempfile.mkstemp(prefix=".netdim-", suffix=".toml", dir=folder)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as f:
            f.write(text)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def _summary(made: Any, out: Path) -> Any:
    from ..report.document import Column, Field, Fields, Note, Paragraph, Report, Section, Table
    from ..report.text import fmt

    rows = []
    for c in made.columns:
        law = c.law.describe() if c.law is not None else c.note
        span = "" if math.isnan(c.low) else f"{fmt(c.low)} to {fmt(c.high)}"
        rows.append((c.name, law, span, str(c.distinct), str(c.missing) if c.missing else "", c.note if c.law else ""))
    columns = (
        Column("feature", "name"),
        Column("law", "text"),
        Column("range"),
        Column("distinct"),
        Column("missing"),
        Column("note", "note"),
    )
    head = Fields(
        (
            Field("table", f"{made.source} ({made.rows} rows, {len(made.columns)} columns)"),
            Field("spec", str(out)),
        )
    )
    blocks: list[Any] = [head, Table(columns, tuple(rows))]
    for name, cols, _ in made.one_hot:
        blocks.append(Note(f"one-hot block '{name}': {', '.join(cols)} are one categorical input."))
    blocks += [Paragraph(w, "warning") for w in made.warnings]
    if not made.pairs:
        blocks.append(Note(f"No pair of inputs has a Spearman rank correlation above {made.dependence:g} in size."))
    return Report("inputs", f"Input spec from {made.source}", (Section("Input spec from data", tuple(blocks)),))


def cmd_inputs_from_data(args: argparse.Namespace) -> int:
    """Read the table, make the spec, print its summary, write it."""
    from ..inputs.fromdata import spec_from_table
    from ..inputs.tables import read_table

    alpha = check_number(args.alpha, "alpha", 0.0, 1.0, low_open=True)
    levels = check_int(args.max_levels, "max_levels", 1)
    dependence = check_number(args.dependence, "dependence", 0.0, 1.0)
    knots = check_int(args.knots, "knots", 2)
    table = read_table(args.table)
    out = Path(args.out) if args.out else Path(args.table).with_suffix(".toml")
    if out.resolve() == Path(args.table).resolve():
        raise UserError("The spec would overwrite the table itself; choose another `out`.")
    if out.exists() and not args.force:
        raise UserError(f"'{out}' exists; choose another `out` or add --force to overwrite it.")
    made = spec_from_table(
        table,
        drop=_names(args.drop),
        fit=_names(args.fit),
        alpha=alpha,
        max_levels=levels,
        dependence=dependence,
        knots=knots,
        group_dependent=args.group_dependent,
        groups=_groups(args.group),
        seed=args.seed,
    )
    _write(out, made.text, args.force)
    if not args.quiet:
        from ..report.terminal import to_renderable
        from .output import console

        console(False).print(to_renderable(_summary(made, out)))
        print(f"Spec written to {out}. Next: netdim audit MODEL --inputs {out}")
    return 0
