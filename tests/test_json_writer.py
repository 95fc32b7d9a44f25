"""The JSON writer (planner.commands.common.json_text): json.dumps straight from the
core's results gives the same text as the careful walk through ``to_jsonable``.

Reference: Python's json module on values already made plain by ``to_jsonable``
(NaN and infinities null, numpy scalars and arrays plain numbers and lists, dates
ISO 8601) — the writer's previous form; common practice, no source.
"""

from __future__ import annotations

import datetime as dt
import json
import math

import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from planner.commands.common import _INDENT_LIMIT_CHARS, json_text, to_jsonable


def _reference(obj, compact_above=None):
    data = to_jsonable(obj)
    if compact_above is not None:
        text = json.dumps(data, ensure_ascii=False, allow_nan=False, separators=(",", ":"))
        if len(text) > compact_above:
            return text
    return json.dumps(data, indent=2, ensure_ascii=False, allow_nan=False)


_scalars = st.one_of(
    st.none(), st.booleans(), st.integers(-10**12, 10**12), st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=8), st.sampled_from(["NaN", "Infinity", 'say "NaN"', "\\", "-Infinity", "true", "é"]),
    st.floats(allow_nan=True, allow_infinity=True).map(np.float64),
    st.floats(allow_nan=True, allow_infinity=True, width=32).map(np.float32),
    st.integers(-2**40, 2**40).map(np.int64), st.booleans().map(np.bool_),
    st.dates().map(lambda d: d), st.datetimes(timezones=st.just(dt.timezone.utc)),
)
_values = st.recursive(
    _scalars,
    lambda inner: st.one_of(
        st.lists(inner, max_size=4), st.lists(inner, max_size=3).map(tuple),
        st.dictionaries(st.one_of(st.text(max_size=5), st.integers(0, 9)), inner, max_size=4),
        st.lists(st.floats(allow_nan=True, allow_infinity=True), max_size=5).map(np.array),
        st.lists(st.integers(-5, 5), max_size=5).map(lambda v: np.array(v, dtype=np.int64)),
    ),
    max_leaves=30,
)


@given(_values)
def test_same_text_as_through_to_jsonable(value):
    assert json_text(value) == _reference(value)
    assert json_text(value, 10) == _reference(value, 10)


def test_awkward_keys_and_large_output():
    odd = {True: 1, None: 2, np.int64(3): [math.nan], dt.date(2027, 1, 2): "x", 1.5: np.inf}
    assert json_text(odd) == _reference(odd)
    big = {"hours": np.linspace(0.0, 1.0, 40_000).reshape(200, 200), "name": "NaN", "gap": [math.nan] * 9}
    text = json_text(big, _INDENT_LIMIT_CHARS)
    assert len(text) > _INDENT_LIMIT_CHARS and "\n" not in text
    assert text == _reference(big, _INDENT_LIMIT_CHARS)
    assert json.loads(text)["gap"] == [None] * 9 and json.loads(text)["name"] == "NaN"
