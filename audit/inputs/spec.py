"""The TOML input spec: names and laws of the inputs, output names, model class.

The input spec is a TOML file of netdim's own design::

    title = "Greenhouse surrogate"      # optional

    [inputs]
    law = "uniform"                     # default law of every feature not listed
    low = 0.0
    high = 1.0
    count = 8                           # optional, checked against the model
    names = ["a", "b"]                  # optional, in model input order

    [[inputs.feature]]                  # without `names`: the features, in order
    name = "outside_temperature"        # with `names`: overrides by name
    law = "uniform"
    low = -5.0
    high = 30.0
    unit = "°C"

    [[inputs.feature]]
    name = "window_opening"
    law = "empirical"                   # the quantile function of data:
    file = "train.csv"                  #   a column of a table (path relative to the spec)
    column = "window_opening"           #   or inline: quantiles = [...] (levels = [...])

    [[inputs.one_hot]]                  # k model columns holding one category, one-hot
    name = "soil"
    columns = ["soil_clay", "soil_loam", "soil_sand"]
    probabilities = [0.2, 0.5, 0.3]     # optional (default equal)

    [groups]                            # optional: indices of groups of inputs
    by = "list"                         # or "patch" (patch = "2x2"), "step", "channel"
    [[groups.group]]
    name = "weather"
    inputs = ["outside_temperature", "solar_radiation"]

    [outputs]
    names = ["inside_temperature", "inside_humidity"]
    units = ["°C", "%"]
    keep = ["inside_temperature"]       # optional: measure only these outputs (or output tensors)

    [model]                             # for state-dict files
    class = "package.module:Class"
    arguments = { hidden = 32 }

Laws and their parameters: ``normal`` (mean, sd), ``uniform`` (low, high),
``lognormal`` (log_mean, log_sd), ``triangular`` (low, mode, high),
``truncated_normal`` (mean, sd, low, high), ``log_uniform`` (low, high),
``discrete`` (values, probabilities, labels), ``empirical`` (quantiles, levels;
or file and column). See :mod:`audit.inputs.laws`; one-hot inputs in
:mod:`audit.inputs.variables`, groups in :mod:`audit.inputs.groups`.

A spec without any law (no spec at all, in the workflows) takes every input as
N(0, 1); :data:`ASSUMED_NOTICE` is the notice that says so.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import UserError, suggest
from .groups import GroupSpec, parse_groups
from .laws import LAWS, VECTOR_PARAMETERS, Law
from .variables import OneHot, Variables, build_variables, parse_one_hot

__all__ = ["ASSUMED_NOTICE", "InputSpec", "assumed_spec", "load_spec", "parse_spec", "uniform_spec"]

_FEATURE_META = ("name", "unit", "note")
_DATA_KEYS = ("file", "column")
_INPUT_KEYS = ("law", "count", "names", "feature", "one_hot")
_TOP_KEYS = ("title", "inputs", "outputs", "model", "groups")
#: The first words of the notice of a run whose input laws were assumed, not given.
ASSUMED_NOTICE = "Every input was taken as N(0, 1)"
_OUTPUT_KEYS = ("names", "units", "keep")
_MODEL_KEYS = ("class", "arguments", "input_shape")


@dataclass(frozen=True)
class InputSpec:
    """Names and laws of the d inputs, and optional output names.

    Attributes
    ----------
    names : list of str or None
        Feature names (``None``: take the model's own).
    laws : list of Law or None
        One law per feature (``None``: every feature takes ``default``).
    default : Law
        Law of features without an explicit one.
    count : int or None
        Number of features, when the spec fixes it.
    units : list of str
        Physical unit per feature ("" when not given).
    outputs : list of str or None
        Names of the flattened output units.
    output_units : list of str or None
    keep_outputs : list of str or None
        Output units or output tensors to measure (``[outputs] keep``); default all.
    model : dict
        The ``[model]`` table (``class``, ``arguments``, ``input_shape``).
    source : str
        File the spec came from, or a description.
    one_hot : list of OneHot
        Blocks of model columns that hold one category each (``[[inputs.one_hot]]``).
    groups : GroupSpec or None
        How inputs are grouped (``[groups]``), when the spec says.
    assumed : bool
        True when no spec and no law was given: every input N(0, 1) by default.
    """

    names: list[str] | None = None
    laws: list[Law] | None = None
    default: Law = field(default_factory=lambda: Law("normal"))
    count: int | None = None
    units: list[str] = field(default_factory=list)
    outputs: list[str] | None = None
    output_units: list[str] | None = None
    keep_outputs: list[str] | None = None
    model: dict[str, Any] = field(default_factory=dict)
    source: str = ""
    title: str = ""
    one_hot: list[OneHot] = field(default_factory=list)
    groups: GroupSpec | None = None
    assumed: bool = False

    @property
    def dim(self) -> int | None:
        """Number of features fixed by the spec, or None."""
        if self.count is not None:
            return self.count
        if self.laws is not None:
            return len(self.laws)
        if self.names is not None:
            return len(self.names)
        return None

    def resolve(self, d: int | None, default_names: list[str] | None = None) -> tuple[list[str], list[Law]]:
        """Names and laws for a model with ``d`` features.

        Raises
        ------
        UserError
            When the spec's feature count differs from the model's, or ``d`` is
            unknown on both sides.
        """
        own = self.dim
        where = f"The input spec {self.source}" if self.source else "The input spec"
        if d is None:
            d = own
        if d is None:
            raise UserError(
                f"{where} does not say how many inputs there are and the model does not either: "
                "give `dim` (the number of inputs), or `count = D` (or the features) under [inputs] in the spec."
            )
        if own is not None and own != d:
            raise UserError(
                f"{where} describes {own} input features but the model takes {d}. "
                "Make `count`, `names` or the [[inputs.feature]] entries match the model's input."
            )
        names = self.names or default_names or [f"x{i}" for i in range(d)]
        if len(names) != d:
            names = [f"x{i}" for i in range(d)]
        laws = self.laws or [self.default] * d
        return list(names), list(laws)

    def variables(self, d: int | None, default_names: list[str] | None = None) -> Variables:
        """The inputs of a model with ``d`` columns: names, laws and model columns of each.

        Every column is one input, except the columns of a one-hot block, which are
        one categorical input together (:func:`audit.inputs.variables.build_variables`).
        """
        names, laws = self.resolve(d, default_names)
        units = list(self.units) if self.units else [""] * len(names)
        where = f"The input spec {self.source}" if self.source else "The input spec"
        return build_variables(names, laws, units, self.one_hot, where)


def assumed_spec() -> InputSpec:
    """The spec of a run given no spec and no law: every input N(0, 1), marked as assumed."""
    return InputSpec(default=Law("normal"), source="", assumed=True)


def uniform_spec(law: str = "normal") -> InputSpec:
    """The spec of ``--law normal|uniform``: every input N(0, 1) or U[0, 1]."""
    if law not in ("normal", "uniform"):
        raise UserError(
            f"Unknown law '{law}' for `law`; valid choices: normal, uniform."
            + suggest(law, ["normal", "uniform"])
            + " Other laws (lognormal, triangular) can be set in an input spec file."
        )
    return InputSpec(default=Law(law), source=f"--law {law}")


def _unknown_keys(table: dict[str, Any], valid: tuple[str, ...], where: str) -> None:
    for key in table:
        if key not in valid:
            raise UserError(
                f"{where}: unknown key '{key}'." + suggest(key, valid) + f" Valid keys: {', '.join(valid)}."
            )


def _check_types(params: dict[str, Any], where: str) -> None:
    for k, v in params.items():
        if k in VECTOR_PARAMETERS:
            ok = isinstance(v, list) and all(isinstance(x, int | float) and not isinstance(x, bool) for x in v)
            if not ok:
                raise UserError(f"{where}: `{k}` must be a list of numbers, e.g. {k} = [0, 1, 2].")
        elif k == "labels":
            if not isinstance(v, list) or not all(isinstance(x, str) and x for x in v):
                raise UserError(f'{where}: `labels` must be a list of names, e.g. labels = ["clay", "loam"].')
        elif k == "source":
            if not isinstance(v, str):
                raise UserError(f"{where}: `source` must be text.")
        elif isinstance(v, bool) or not isinstance(v, (int, float)):
            raise UserError(f"{where}: `{k}` must be a number, got {v!r}.")


def _data_quantiles(entry: dict[str, Any], folder: Path, where: str) -> dict[str, Any]:
    """``quantiles`` (the sorted column) and ``source`` of an empirical law given by ``file`` and ``column``."""
    from .tables import read_column

    if "file" not in entry or "column" not in entry:
        raise UserError(f"{where}: an empirical law from data needs both `file` and `column`.")
    if "quantiles" in entry or "levels" in entry:
        raise UserError(f"{where}: give an empirical law either by `file` and `column` or by `quantiles`, not both.")
    file, column = entry["file"], entry["column"]
    if not isinstance(file, str) or not file:
        raise UserError(f"{where}: `file` must be the path of a table (CSV, .npy, .npz, .parquet).")
    path = Path(file) if Path(file).is_absolute() else folder / file
    try:
        values = read_column(path, column)
    except UserError as exc:
        raise UserError(f"{where}: {exc}") from exc
    return {"quantiles": np.sort(values).tolist(), "source": f"{file}:{column}"}


def _feature_law(entry: dict[str, Any], default: Law | None, where: str, folder: Path | None = None) -> Law | None:
    law_keys = {k for k in entry if k not in _FEATURE_META}
    if not law_keys:
        return default
    kind = entry.get("law")
    if kind is None:
        if default is None:
            raise UserError(f'{where}: parameters are given but no `law`; add law = "normal" or similar.')
        kind = default.kind
    if not isinstance(kind, str) or kind not in LAWS:
        raise UserError(f"{where}: unknown law {kind!r}; valid laws: {', '.join(LAWS)}." + suggest(str(kind), LAWS))
    extra = _DATA_KEYS if kind == "empirical" else ()
    valid = (*_FEATURE_META, "law", *LAWS[kind][0], *extra)
    _unknown_keys(entry, valid, where)
    params = {k: entry[k] for k in LAWS[kind][0] if k in entry}
    _check_types(params, where)
    if any(k in entry for k in _DATA_KEYS):
        params.update(_data_quantiles(entry, folder or Path.cwd(), where))
    if default is not None and kind == default.kind:
        params = {**default.params, **params}
    try:
        return Law(kind, params)
    except ValueError as exc:
        raise UserError(f"{where}: {exc}") from exc


def parse_spec(data: dict[str, Any], source: str = "") -> InputSpec:
    """Validate a parsed TOML document and build an :class:`InputSpec`.

    Parameters
    ----------
    data : dict
        The document, as returned by :func:`tomllib.loads`.
    source : str
        File name used in error messages.

    Raises
    ------
    UserError
        Naming the file, the key or feature, and what is wrong.
    """
    where = f"Input spec '{source}'" if source else "Input spec"
    if not isinstance(data, dict):
        raise UserError(f"{where}: the document must be a TOML table.")
    _unknown_keys(data, _TOP_KEYS, where)
    inputs = data.get("inputs", {})
    if not isinstance(inputs, dict):
        raise UserError(f"{where}: [inputs] must be a table.")
    all_params = {p for names, _ in LAWS.values() for p in names}
    _unknown_keys(inputs, (*_INPUT_KEYS, *sorted(all_params), *_DATA_KEYS), f"{where}, [inputs]")
    folder = Path(source).parent if source and Path(source).is_file() else Path.cwd()

    default_entry = {k: v for k, v in inputs.items() if k not in ("count", "names", "feature", "one_hot")}
    if default_entry and "law" not in default_entry:
        raise UserError(f"{where}, [inputs]: law parameters are given but no `law`.")
    default = _feature_law(default_entry, None, f"{where}, [inputs]", folder) or Law("normal")

    count = inputs.get("count")
    if count is not None and (isinstance(count, bool) or not isinstance(count, int) or count < 1):
        raise UserError(f"{where}, [inputs]: `count` must be a whole number ≥ 1, got {count!r}.")
    names = inputs.get("names")
    if names is not None:
        if not isinstance(names, list) or not all(isinstance(n, str) and n for n in names):
            raise UserError(f"{where}, [inputs]: `names` must be a list of non-empty strings.")
        if len(set(names)) != len(names):
            dup = next(n for n in names if names.count(n) > 1)
            raise UserError(f"{where}, [inputs]: feature name '{dup}' appears twice in `names`.")
        if count is not None and count != len(names):
            raise UserError(f"{where}, [inputs]: `count` is {count} but `names` lists {len(names)}.")

    entries = inputs.get("feature", [])
    if not isinstance(entries, list) or not all(isinstance(e, dict) for e in entries):
        raise UserError(f"{where}: features must be given as [[inputs.feature]] tables.")
    laws: list[Law] | None = None
    units: list[str] = []
    if entries:
        seen: set[str] = set()
        for i, e in enumerate(entries):
            name = e.get("name")
            if not isinstance(name, str) or not name:
                raise UserError(f"{where}, feature #{i + 1}: every [[inputs.feature]] needs a `name`.")
            if name in seen:
                raise UserError(f"{where}: feature '{name}' is listed twice.")
            seen.add(name)
        if names is None:
            if count is not None and count != len(entries):
                raise UserError(
                    f"{where}: `count` is {count} but {len(entries)} [[inputs.feature]] entries are "
                    "listed. Without `names`, list every feature (or add `names` to override some)."
                )
            names = [e["name"] for e in entries]
            laws = [_feature_law(e, default, f"{where}, feature '{e['name']}'", folder) for e in entries]
            units = [str(e.get("unit", "")) for e in entries]
        else:
            laws = [default] * len(names)
            units = [""] * len(names)
            for e in entries:
                if e["name"] not in names:
                    raise UserError(f"{where}: feature '{e['name']}' is not in `names`." + suggest(e["name"], names))
                k = names.index(e["name"])
                laws[k] = _feature_law(e, default, f"{where}, feature '{e['name']}'", folder)
                units[k] = str(e.get("unit", ""))

    outputs = data.get("outputs", {})
    if not isinstance(outputs, dict):
        raise UserError(f"{where}: [outputs] must be a table.")
    _unknown_keys(outputs, _OUTPUT_KEYS, f"{where}, [outputs]")
    out_names = outputs.get("names")
    if out_names is not None and (
        not isinstance(out_names, list) or not all(isinstance(n, str) and n for n in out_names)
    ):
        raise UserError(f"{where}, [outputs]: `names` must be a list of non-empty strings.")
    keep = outputs.get("keep")
    if keep is not None and (not isinstance(keep, list) or not keep or not all(isinstance(n, str) and n for n in keep)):
        raise UserError(f'{where}, [outputs]: `keep` must be a list of output names, e.g. keep = ["probabilities"].')
    out_units = outputs.get("units")
    if out_units is not None and out_names is not None and len(out_units) != len(out_names):
        raise UserError(f"{where}, [outputs]: `units` and `names` must have the same length.")

    model = data.get("model", {})
    if not isinstance(model, dict):
        raise UserError(f"{where}: [model] must be a table.")
    _unknown_keys(model, _MODEL_KEYS, f"{where}, [model]")
    if "arguments" in model and not isinstance(model["arguments"], dict):
        raise UserError(f"{where}, [model]: `arguments` must be a table, e.g. arguments = {{ hidden = 32 }}.")

    one_hot = parse_one_hot(inputs.get("one_hot", []), where)
    groups = data.get("groups")
    group_spec = None if groups is None else parse_groups(groups, f"{where}, [groups]")

    return InputSpec(
        names=names,
        laws=laws,
        default=default,
        count=count,
        units=units,
        outputs=out_names,
        output_units=out_units,
        keep_outputs=keep,
        model=dict(model),
        source=source,
        title=str(data.get("title", "")),
        one_hot=one_hot,
        groups=group_spec,
    )


def load_spec(path: str | Path) -> InputSpec:
    """Read and validate an input-spec TOML file.

    Raises
    ------
    UserError
        Missing file, TOML syntax error (with line and column), or an invalid spec.
    """
    p = Path(path)
    if not p.exists():
        raise UserError(f"The input spec file '{path}' does not exist. Check the path given to `inputs`.")
    if p.is_dir():
        raise UserError(f"'{path}' is a folder; `inputs` needs a TOML file.")
    try:
        text = p.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise UserError(f"The input spec file '{path}' could not be read as UTF-8 text: {exc}.") from exc
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise UserError(
            f"The input spec file '{path}' is not valid TOML: {exc}. Fix the syntax at that place."
        ) from exc
    return parse_spec(data, source=str(path))
