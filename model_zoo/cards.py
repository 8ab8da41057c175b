"""Write the zoo's input specs (TOML), model cards (Markdown) and README table.

Everything here is text formatting of records made by :mod:`model_zoo.build`;
no numbers are computed.
"""

from __future__ import annotations

import json
import math
import tomllib
from pathlib import Path
from typing import Any

__all__ = ["CAUTION", "dump_toml", "write_card", "write_readme", "write_spec"]

CAUTION = (
    "An audit of a model's sensitivity is not a safety validation. Where a model informs or "
    "controls equipment, defer to the applicable codes and to qualified engineers."
)

REBUILD = "python -m model_zoo.build"


def _value(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if not math.isfinite(v):
            raise ValueError(f"TOML values must be finite, got {v}")
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, list | tuple):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{k} = {_value(x)}" for k, x in v.items()) + " }"
    raise TypeError(f"cannot write {type(v).__name__} as TOML")


def _is_table_array(v: Any) -> bool:
    return isinstance(v, list) and bool(v) and all(isinstance(x, dict) for x in v)


def _table(lines: list[str], prefix: str, table: dict[str, Any]) -> None:
    scalars = {k: v for k, v in table.items() if not isinstance(v, dict) and not _is_table_array(v)}
    if prefix and (scalars or not table):
        lines.append(f"\n[{prefix}]")
    for k, v in scalars.items():
        lines.append(f"{k} = {_value(v)}")
    for k, v in table.items():
        key = f"{prefix}.{k}" if prefix else k
        if isinstance(v, dict) and k not in ("arguments",):
            _table(lines, key, v)
        elif isinstance(v, dict):
            lines.append(f"{k} = {_value(v)}")
        elif _is_table_array(v):
            for item in v:
                lines.append(f"\n[[{key}]]")
                for ik, iv in item.items():
                    lines.append(f"{ik} = {_value(iv)}")


def dump_toml(data: dict[str, Any], header: str = "") -> str:
    """Format nested dicts as TOML (tables, arrays of tables, inline ``arguments``).

    Parameters
    ----------
    data : dict
        Top-level scalars first, then tables.
    header : str
        Comment lines put at the top (without ``#``).

    Returns
    -------
    str
        TOML text; it is parsed back and compared with ``data`` before returning.
    """
    lines = [f"# {line}" if line else "#" for line in header.splitlines()]
    _table(lines, "", data)
    text = "\n".join(lines).lstrip("\n") + "\n"
    if tomllib.loads(text) != json.loads(json.dumps(data)):
        raise AssertionError("TOML round trip changed the data")
    return text


def write_spec(path: Path, spec: dict[str, Any], header: str = "") -> Path:
    """Write an input spec (see the input-spec format) as TOML."""
    path.write_text(dump_toml(spec, header), encoding="utf-8")
    return path


def _fmt(v: Any) -> str:
    if isinstance(v, float):
        return f"{v:.4f}"
    return str(v)


def write_card(path: Path, name: str, record: dict[str, Any]) -> Path:
    """Write the model card ``NAME.md`` of one zoo model from its record."""
    lines = [f"# Model card: {name}", "", record["summary"], ""]
    lines += ["## Model", ""]
    lines.append(f"- Architecture: {record['architecture']}")
    lines.append(f"- Network class: `{record['class']}` with arguments `{record['arguments']}`")
    lines.append(f"- Inputs: {record['inputs']}")
    lines.append(f"- Outputs: {record['outputs']}")
    lines.append(f"- Input spec: `{name}.toml`")
    files = ", ".join(f"`{f}` ({fmt})" for fmt, f in record["formats"].items())
    lines.append(f"- Files: {files}")
    lines += ["", "## Training data", "", record["training"]["data"], ""]
    for k, v in record["training"].items():
        if k != "data":
            lines.append(f"- {k.replace('_', ' ')}: {_fmt(v)}")
    lines += ["", "## Metrics", "", record["held_out"]["description"], ""]
    lines += ["| metric | value |", "|---|---|"]
    lines += [f"| {k} | {_fmt(v)} |" for k, v in record["metrics"].items()]
    if record.get("exact"):
        ex = record["exact"]
        lines += ["", "## Exact ANOVA (inputs independent N(0, 1))", ""]
        lines += [f"- Parameters: `{json.dumps(record['parameters'])}`"]
        lines += [f"- Variance: {ex['variance']:.8g}; mean: {ex['mean']:.8g}"]
        lines += [f"- Mean dimension: {ex['mean_dimension']:.8g}"]
        tot = ", ".join(f"{v:.6f}" for v in ex["total_index"])
        first = ", ".join(f"{v:.6f}" for v in ex["first_order"])
        lines += [
            f"- Normalised total indices: {tot}",
            f"- Normalised first-order indices: {first}",
        ]
        lines += ["- Method: see `model_zoo/exact.py`; values also in `validation.json`."]
    lines += ["", "## Intended use", "", record["intended_use"], ""]
    lines += ["## Limitations", ""]
    lines += [f"- {item}" for item in record["limitations"]]
    lines += ["", "## Caution", "", CAUTION, ""]
    lines += ["## Rebuild", "", f"`{REBUILD} --only {name}` (CPU, fixed seeds).", ""]
    path.write_text("\n".join(lines), encoding="utf-8")
    return path


def write_readme(path: Path, cards: dict[str, Any]) -> Path:
    """Write ``model_zoo/README.md``: one table row per model, and how to rebuild."""
    lines = [
        "# netdim model zoo",
        "",
        "Small networks for trying and testing netdim. Every model ships with an input spec",
        "(`NAME.toml`) and a model card (`NAME.md`); `cards.json` holds the same metrics in",
        "machine-readable form, `validation.json` the exact answers of the validation networks.",
        "The greenhouse scenario is fictional: `model_zoo.greenhouse:simulate` is a closed-form",
        "toy simulator, and `greenhouse_v1` / `greenhouse_v2` are surrogates trained on it.",
        "",
        "| model | inputs | outputs | formats | metric (held out) |",
        "|---|---|---|---|---|",
    ]
    for name, rec in cards["models"].items():
        metric = "; ".join(f"{k} {_fmt(v)}" for k, v in rec["metrics"].items())
        fmts = ", ".join(f"`{f}`" for f in rec["formats"].values())
        lines.append(f"| {name} | {rec['inputs']} | {rec['outputs']} | {fmts} | {metric} |")
    lines += [
        "",
        "Try one:",
        "",
        "```",
        "netdim audit model_zoo/greenhouse_v1.onnx --inputs model_zoo/greenhouse_v1.toml",
        "netdim audit model_zoo.greenhouse:simulate --inputs model_zoo/greenhouse_v1.toml",
        "netdim compare model_zoo/greenhouse_v1.onnx model_zoo/greenhouse_v2.onnx "
        "--inputs model_zoo/greenhouse_v1.toml",
        "```",
        "",
        "## Rebuild",
        "",
        "Everything is rebuilt on the CPU with fixed seeds from data made by our own code",
        "(the greenhouse simulator) or bundled with scikit-learn (`load_digits`,",
        "`load_diabetes`; nothing is downloaded):",
        "",
        "```",
        f"{REBUILD}                 # every model",
        f"{REBUILD} --only digits_mlp",
        "```",
        "",
        f"Held-out splits use seed {cards['split_seed']}; `tests/unit/test_model_zoo.py` recomputes every",
        "metric from the shipped files. Needs the `build` extra (scikit-learn).",
        "",
        "## Caution",
        "",
        CAUTION,
        "",
    ]
    path.write_text("\n".join(lines), encoding="utf-8")
    return path
