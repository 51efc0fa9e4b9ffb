"""Tests of the batch reader's fast conversions (surveytools.inputs.batches).

A long CSV's time-stamp column of plain ISO 8601 text is converted by pyarrow; every other
spelling goes through the whole-file reader's rules. References: hand-evaluated
milliseconds of ISO 8601 text, and pandas' own ISO 8601 parser (``pd.to_datetime(...,
format="ISO8601")``), which the whole-file reader uses; the fast path must give the same
column or step aside.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from surveytools.inputs.batches import _plain_times
from surveytools.inputs.csv_input import convert_text_column


def _whole_reader(texts: list[str]):
    return convert_text_column(pd.Series(texts, dtype=object), "Start", "A", "Start")


def test_plain_iso_text_becomes_milliseconds() -> None:
    texts = ["2026-07-01T00:00:00", "2026-07-01 00:00:01.5", "2024-02-29T23:59:59.999",
             "2026-07-01T00:02"]
    col = _plain_times(pa.array(texts), "Start", "A", "Start")
    assert col is not None and col.kind == "datetime" and not col.text_cells
    # hand-evaluated: 2026-07-01 is day 20,635 after 1970-01-01 (ISO 8601 calendar)
    day_ms = 20_635 * 86_400_000
    got = col.values.to_numpy().astype("datetime64[ms]").astype(np.int64)
    assert got[0] == day_ms
    assert got[1] == day_ms + 1_500
    assert got[3] == day_ms + 120_000
    # 2024-02-29 23:59:59.999 is one millisecond before 2024-03-01 (day 19,783)
    assert got[2] == 19_783 * 86_400_000 - 1


@pytest.mark.parametrize("odd", [
    "2026-07-01T24:00:00",  # hour 24
    "2026-07-01T23:59:60",  # a 60th second
    "2026-02-29T00:00:00",  # no 29 February in 2026
    "2026-07-01T00:00:00Z",  # a zone marker: the whole-file rules handle it
    "2026-07-01T00:00:00+02:00",
    "2026-07-01T00:00:00.1234",  # four decimals
    " 2026-07-01T00:00:00",  # a space before
    "2026-07-01",  # a date alone
    "01/07/2026 00:00:00",
    "",
    "OVL",
])
def test_other_spellings_step_aside(odd: str) -> None:
    assert _plain_times(pa.array(["2026-07-01T00:00:00", odd]), "Start", "A", "Start") is None


def test_only_time_stamp_columns() -> None:
    plain = pa.array(["2026-07-01T00:00:00"])
    assert _plain_times(plain, "Time", "A", "Time") is None  # a time of day alone
    assert _plain_times(plain, "LAeq", "B", "LAeq") is None
    assert _plain_times(plain, "Note", "C", None) is None


_stamps = st.tuples(
    st.integers(1980, 2099), st.integers(1, 12), st.integers(1, 31), st.integers(0, 24),
    st.integers(0, 59), st.integers(0, 60), st.sampled_from(["", ".5", ".25", ".125"]),
    st.sampled_from(["T", " "]), st.booleans(),
).map(lambda t: (f"{t[0]:04d}-{t[1]:02d}-{t[2]:02d}{t[7]}{t[3]:02d}:{t[4]:02d}"
                 + (f":{t[5]:02d}{t[6]}" if t[8] else "")))


@settings(max_examples=300, deadline=None)
@given(st.lists(_stamps, min_size=1, max_size=8))
def test_same_column_as_the_whole_file_reader(texts: list[str]) -> None:
    # reference: pandas' ISO 8601 parser through the whole-file reader's conversion
    fast = _plain_times(pa.array(texts), "Start", "A", "Start")
    whole = _whole_reader(texts)
    if fast is None:  # stepping aside is always allowed; when all is valid it must not
        assert whole.kind != "datetime" or whole.text_cells or whole.values.isna().any()
        return
    assert whole.kind == "datetime" and not whole.text_cells
    np.testing.assert_array_equal(fast.values.to_numpy(), whole.values.to_numpy())
    assert fast.values.dtype == whole.values.dtype
