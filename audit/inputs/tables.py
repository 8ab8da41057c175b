"""Tables of training inputs: CSV with a header, ``.npy`` / ``.npz``, and Parquet (with ``pyarrow``).

:func:`read_table` returns a :class:`Table`: column names and one array per
column, numbers as float64 (missing entries NaN) and text as str. Nothing in a
file runs code: NumPy files are read with ``allow_pickle=False``.

* CSV: the first row names the columns; an entry that is empty, ``NA``, ``NaN``
  or ``null`` is missing; a column with any other entry that is not a number
  is a column of text.
* ``.npy``: a 2-d array (columns ``x0, x1, ...``), a 1-d array (one column
  ``x0``) or a structured array (columns named by its fields).
* ``.npz``: 1-d arrays of one length, one column each, named by their keys; or a
  single 2-d array.
* ``.parquet``: every column, by name (needs ``pyarrow``: ``pip install netdim[data]``).
"""

from __future__ import annotations

import csv
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import UserError, suggest

__all__ = ["FORMATS", "MISSING", "Table", "read_column", "read_table"]

#: File suffixes read, and what they hold.
FORMATS = {".csv": "CSV with a header", ".npy": "NumPy array", ".npz": "NumPy archive", ".parquet": "Parquet"}
#: CSV entries read as missing.
MISSING = ("", "na", "nan", "null", "none")


@dataclass(frozen=True)
class Table:
    """Named columns of equal length: float64 arrays (NaN where missing) or arrays of str.

    Attributes
    ----------
    names : list of str
    columns : list of ndarray
    source : str
        The file.
    """

    names: list[str]
    columns: list[np.ndarray]
    source: str

    @property
    def rows(self) -> int:
        return len(self.columns[0]) if self.columns else 0

    def column(self, key: str | int) -> np.ndarray:
        """A column by name or 0-based position."""
        if isinstance(key, bool) or not isinstance(key, str | int):
            raise UserError(f"A column of '{self.source}' is named by its header text or its 0-based position.")
        if isinstance(key, int):
            if not 0 <= key < len(self.names):
                raise UserError(f"'{self.source}' has {len(self.names)} columns; column {key} is not one (0-based).")
            return self.columns[key]
        if key not in self.names:
            shown = ", ".join(self.names[:12]) + (" ..." if len(self.names) > 12 else "")
            raise UserError(
                f"'{self.source}' has no column '{key}'." + suggest(key, self.names) + f" Columns: {shown}."
            )
        return self.columns[self.names.index(key)]


def _numbers(values: list[str]) -> np.ndarray | None:
    """The entries as float64 (missing: NaN), or None when one is not a number."""
    out = np.empty(len(values))
    for i, v in enumerate(values):
        t = v.strip()
        if t.lower() in MISSING:
            out[i] = np.nan
            continue
        try:
            out[i] = float(t)
        except ValueError:
            return None
    return out


def _read_csv(path: Path) -> Table:
    try:
        with path.open(newline="", encoding="utf-8-sig") as f:
            rows = list(csv.reader(f))
    except (OSError, UnicodeDecodeError, csv.Error) as exc:
        raise UserError(f"The table '{path}' could not be read as UTF-8 CSV: {exc}.") from exc
    rows = [r for r in rows if any(c.strip() for c in r)]
    if len(rows) < 2:
        raise UserError(f"The table '{path}' needs a header row and at least one row of data.")
    header = [h.strip() for h in rows[0]]
    if not all(header) or len(set(header)) != len(header):
        raise UserError(
            f"The header of '{path}' must name every column once (got {', '.join(repr(h) for h in header)})."
        )
    for i, r in enumerate(rows[1:], start=2):
        if len(r) != len(header):
            raise UserError(f"Row {i} of '{path}' has {len(r)} entries but the header names {len(header)} columns.")
    columns = []
    for j in range(len(header)):
        raw = [r[j] for r in rows[1:]]
        nums = _numbers(raw)
        columns.append(nums if nums is not None else np.array([v.strip() for v in raw], dtype=str))
    return Table(header, columns, str(path))


def _from_array(a: np.ndarray, path: Path) -> Table:
    if a.dtype.names:
        return Table(list(a.dtype.names), [_as_column(a[n], path) for n in a.dtype.names], str(path))
    if a.ndim == 1:
        a = a[:, None]
    if a.ndim != 2:
        raise UserError(f"'{path}' holds an array of shape {a.shape}; a table is 2-d (rows, columns).")
    return Table(
        [f"x{j}" for j in range(a.shape[1])], [_as_column(a[:, j], path) for j in range(a.shape[1])], str(path)
    )


def _as_column(a: np.ndarray, path: Path) -> np.ndarray:
    if a.dtype.kind in "fiub":
        return a.astype(np.float64)
    if a.dtype.kind in "US":
        return a.astype(str)
    raise UserError(f"'{path}' holds a column of type {a.dtype}; only numbers and text can be read.")


def _read_numpy(path: Path) -> Table:
    try:
        data = np.load(path, allow_pickle=False)
    except (OSError, ValueError) as exc:
        raise UserError(f"'{path}' could not be read as a NumPy file without pickles: {exc}.") from exc
    if isinstance(data, np.ndarray):
        return _from_array(data, path)
    with data:
        keys = list(data.files)
        arrays = {k: data[k] for k in keys}
    if len(keys) == 1 and arrays[keys[0]].ndim == 2:
        return _from_array(arrays[keys[0]], path)
    lengths = {a.shape[0] if a.ndim else -1 for a in arrays.values()}
    if not keys or any(a.ndim != 1 for a in arrays.values()) or len(lengths) != 1:
        raise UserError(
            f"'{path}' must hold one 2-d array, or 1-d arrays of one length (a column each, named by its key)."
        )
    return Table(keys, [_as_column(arrays[k], path) for k in keys], str(path))


def _read_parquet(path: Path) -> Table:
    try:
        import pyarrow.parquet as pq
    except ImportError:
        raise UserError(
            f"Reading '{path}' needs pyarrow: pip install 'netdim[data]' (or save the table as CSV or .npz)."
        ) from None
    try:
        table = pq.read_table(path)
    except Exception as exc:  # pyarrow raises its own error types
        raise UserError(f"'{path}' could not be read as Parquet: {exc}.") from exc
    columns = []
    for name in table.column_names:
        a = table.column(name).to_numpy(zero_copy_only=False)
        if a.dtype.kind == "O":
            a = np.array(["" if v is None else str(v) for v in a], dtype=str)
        columns.append(_as_column(a, path))
    return Table(list(table.column_names), columns, str(path))


def read_table(path: str | Path) -> Table:
    """Read a table of training inputs (see the module docstring for the formats).

    Raises
    ------
    UserError
        Missing file, unknown suffix, unreadable content, or an empty table.

    Examples
    --------
    >>> import numpy as np, tempfile, os
    >>> from audit.inputs.tables import read_table
    >>> path = os.path.join(tempfile.mkdtemp(), "t.npz")
    >>> np.savez(path, a=np.arange(3.0), b=np.ones(3))
    >>> read_table(path).names
    ['a', 'b']
    """
    p = Path(path)
    if not p.is_file():
        raise UserError(f"The table '{path}' does not exist or is not a file.")
    suffix = p.suffix.lower()
    readers = {".csv": _read_csv, ".npy": _read_numpy, ".npz": _read_numpy, ".parquet": _read_parquet}
    if suffix not in readers:
        raise UserError(
            f"'{path}' is not a table netdim reads; valid suffixes: "
            + ", ".join(f"{k} ({v})" for k, v in FORMATS.items())
            + "."
        )
    table = readers[suffix](p)
    if not table.names or table.rows == 0:
        raise UserError(f"The table '{path}' has no rows or no columns.")
    return table


def read_column(path: str | Path, column: str | int) -> np.ndarray:
    """The numbers of one column of a table, missing entries left out.

    Raises
    ------
    UserError
        When the column holds text or no numbers.
    """
    table = read_table(path)
    values = table.column(column)
    if values.dtype.kind != "f":
        raise UserError(f"Column '{column}' of '{path}' holds text; an empirical law needs numbers.")
    values = values[np.isfinite(values)]
    if values.size < 2:
        raise UserError(f"Column '{column}' of '{path}' has fewer than 2 numbers; an empirical law needs more.")
    return values
