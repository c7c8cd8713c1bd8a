"""The fast paths of the outputs give what the general library calls give, for every input.

``activolt.io.record.json_text`` must write the bytes of ``json.dumps(indent=2,
ensure_ascii=False, allow_nan=False)`` (the archive and the HTML report name a record by its
SHA-256), and ``activolt.report.numbers.frame_records`` the rows of
``DataFrame.to_dict("records")``; both are checked against those library calls (hypothesis),
errors included. Reference behaviour: the Python standard library and pandas themselves
(common practice: an optimisation is checked against the code it replaces).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from activolt.io.record import json_text
from activolt.report.numbers import frame_records

_scalars = (st.none() | st.booleans() | st.integers(-10**20, 10**20)
            | st.floats(allow_nan=False, allow_infinity=False) | st.text(max_size=12))
_keys = st.text(max_size=8)
_documents = st.recursive(
    _scalars,
    lambda inner: (st.lists(inner, max_size=5) | st.tuples(inner, inner)
                   | st.dictionaries(_keys, inner, max_size=5)),
    max_leaves=40)


@settings(max_examples=300, deadline=None)
@given(_documents)
def test_json_text_is_json_dumps_byte_for_byte(document):
    assert json_text(document) == json.dumps(document, ensure_ascii=False, indent=2,
                                             allow_nan=False) + "\n"


@pytest.mark.parametrize("bad", [float("nan"), float("inf"), -float("inf")])
def test_json_text_refuses_what_json_dumps_refuses(bad):
    for document in ({"a": [1.0, bad]}, [bad], bad):
        with pytest.raises(ValueError):
            json_text(document)


def test_json_text_leaves_unusual_values_to_json_dumps():
    """Keys that are not strings, numpy scalars, deep nesting: the library's own text."""
    deep: list = [1]
    for _ in range(70):
        deep = [deep]
    for document in ({1: "a", 2.5: None, False: 0, None: 1}, {"x": np.float64(0.1)}, deep):
        assert json_text(document) == json.dumps(document, ensure_ascii=False, indent=2,
                                                 allow_nan=False) + "\n"
    with pytest.raises(TypeError):
        json_text({"x": np.int64(1)})
    with pytest.raises(TypeError):
        json_text({"x": {1, 2}})


def _same(a, b) -> bool:
    if type(a) is not type(b):
        return False
    if isinstance(a, float) and math.isnan(a):
        return math.isnan(b)
    return a == b


@settings(max_examples=100, deadline=None)
@given(st.lists(st.tuples(st.floats(allow_infinity=False), st.integers(-10**6, 10**6),
                          st.none() | st.text(max_size=6), st.booleans(),
                          st.none() | st.just("flag")),
                max_size=8))
def test_frame_records_are_to_dict_records(rows):
    frame = pd.DataFrame(rows, columns=["m", "line", "electrode", "used", "flag"])
    if rows:
        frame["line"] = frame["line"].astype("int64")
        frame["electrode"] = frame["electrode"].astype("str")
    expected = frame.to_dict("records")
    got = frame_records(frame)
    assert len(got) == len(expected)
    for mine, theirs in zip(got, expected, strict=True):
        assert list(mine) == list(theirs)
        assert all(_same(mine[k], theirs[k]) for k in theirs), (mine, theirs)
