"""The TOML writer (audit.inputs.tomlwrite): everything it writes reads back with tomllib."""

import math
import tomllib

from hypothesis import given, settings
from hypothesis import strategies as st

from audit.inputs.tomlwrite import TomlWriter, toml_value

scalars = st.one_of(st.text(max_size=20), st.integers(-(2**62), 2**62), st.floats(allow_nan=False), st.booleans())


@settings(max_examples=150, deadline=None)
@given(
    st.dictionaries(
        st.text(min_size=1, max_size=12), st.one_of(scalars, st.lists(st.floats(allow_nan=False), max_size=60))
    )
)
def test_written_documents_read_back_exactly(doc):
    w = TomlWriter(width=40)
    w.comment("a comment\nover two lines")
    w.table("t")
    for k, v in doc.items():
        w.key(k, v)
    assert tomllib.loads(w.text())["t"] == doc


def test_special_floats_and_commented_keys():
    assert toml_value([math.inf, -math.inf, 1.0, 1e300]) == "[inf, -inf, 1.0, 1e+300]"
    assert math.isnan(tomllib.loads("x = " + toml_value(math.nan))["x"])
    w = TomlWriter(width=20)
    w.key("inputs", ["a", "b", "c", "d", "e", "f"], "# ")
    assert all(line.startswith("#") for line in w.lines)
    assert tomllib.loads(w.text()) == {}
