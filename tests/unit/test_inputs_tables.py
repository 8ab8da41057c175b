"""Reading tables of training inputs (audit.inputs.tables)."""

import numpy as np
import pytest

from audit.errors import UserError
from audit.inputs.tables import read_column, read_table


def test_csv_numbers_text_and_missing(tmp_path):
    p = tmp_path / "t.csv"
    p.write_text("a,b,soil\n1,2.5,clay\n,3,loam\nNA,4e1,clay\n", encoding="utf-8")
    t = read_table(p)
    assert t.names == ["a", "b", "soil"] and t.rows == 3
    np.testing.assert_array_equal(t.column("b"), [2.5, 3.0, 40.0])
    assert np.isnan(t.column("a")[1:]).all()
    assert t.column(2).tolist() == ["clay", "loam", "clay"]
    assert read_column(p, "b").tolist() == [2.5, 3.0, 40.0]
    with pytest.raises(UserError, match="fewer than 2 numbers"):
        read_column(p, "a")
    with pytest.raises(UserError, match="holds text"):
        read_column(p, "soil")
    with pytest.raises(UserError, match=r"no column 'soli'\. Did you mean 'soil'"):
        t.column("soli")


def test_numpy_files(tmp_path):
    np.save(tmp_path / "a.npy", np.arange(6.0).reshape(3, 2))
    assert read_table(tmp_path / "a.npy").names == ["x0", "x1"]
    np.savez(tmp_path / "b.npz", height=np.ones(4), width=np.arange(4))
    t = read_table(tmp_path / "b.npz")
    assert t.names == ["height", "width"] and t.column("width").dtype == np.float64
    np.save(tmp_path / "o.npy", np.array([{"a": 1}], dtype=object))
    with pytest.raises(UserError, match="without pickles"):
        read_table(tmp_path / "o.npy")


def test_parquet_when_pyarrow_is_installed(tmp_path):
    pa = pytest.importorskip("pyarrow")
    import pyarrow.parquet as pq

    pq.write_table(pa.table({"x": [1.0, 2.0, 3.0], "c": ["a", "b", "a"]}), tmp_path / "t.parquet")
    t = read_table(tmp_path / "t.parquet")
    assert t.names == ["x", "c"] and t.column("c").tolist() == ["a", "b", "a"]


def test_bad_files_are_refused_with_the_formats(tmp_path):
    with pytest.raises(UserError, match="does not exist"):
        read_table(tmp_path / "none.csv")
    (tmp_path / "t.xlsx").write_text("x")
    with pytest.raises(UserError, match=r"valid suffixes: \.csv"):
        read_table(tmp_path / "t.xlsx")
    (tmp_path / "r.csv").write_text("a,b\n1\n")
    with pytest.raises(UserError, match="Row 2"):
        read_table(tmp_path / "r.csv")
