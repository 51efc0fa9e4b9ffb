"""Tests of the CSV readings reader (surveytools.inputs.csv_input).

Expected values are hand-evaluated from the CSV text written in each test (RFC 4180 field
rules; ISO 8601 time stamps).
"""

from __future__ import annotations

import hashlib
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from surveytools.errors import WorkbookError
from surveytools.inputs.csv_input import read_csv_table
from surveytools.settings import Settings


def _col(wb, header: str):
    return next(c for c in wb.readings.columns if c.header == header)


def _write(tmp_path: Path, text: str, name: str = "east_gate.csv", bom: bool = False) -> Path:
    p = tmp_path / name
    p.write_bytes((b"\xef\xbb\xbf" if bom else b"") + text.encode("utf-8"))
    return p


@pytest.mark.parametrize("delimiter", [",", ";", "\t"])
@pytest.mark.parametrize("bom", [False, True])
def test_header_below_title_any_delimiter(tmp_path: Path, delimiter: str, bom: bool) -> None:
    d = delimiter
    text = (f"Invented site log{d}{d}\n{d}{d}\nNote{d}LAeq (dB){d}Start time\n"
            f"{d}55.2{d}2026-07-01 22:00:00\n"
            f"NA{d}OVL{d}2026-07-01T22:00:01.100\n"
            f"{d}{d}\n"
            f"{d}56{d}2026-07-01 22:00:02\n"
            f"{d}{d}\n{d}{d}\n")
    wb = read_csv_table(_write(tmp_path, text, bom=bom))
    t = wb.readings
    assert t is not None
    assert (t.sheet, t.header_row, t.first_data_row, t.n_rows) == ("east_gate", 3, 4, 4)
    assert [c.header for c in t.columns] == ["Note", "LAeq (dB)", "Start time"]
    assert [c.letter for c in t.columns] == ["A", "B", "C"]
    laeq = _col(wb, "LAeq (dB)")
    assert laeq.kind == "number"
    np.testing.assert_array_equal(laeq.values.to_numpy(), [55.2, np.nan, np.nan, 56.0])
    assert laeq.text_cells == {1: "OVL"}  # spreadsheet row 5
    start = _col(wb, "Start time")
    assert start.kind == "datetime" and str(start.values.dtype) == "datetime64[ms]"
    assert start.values.iloc[1] == pd.Timestamp("2026-07-01 22:00:01.100")
    assert pd.isna(start.values.iloc[2])  # the empty middle row is kept as a position
    assert _col(wb, "Note").values.tolist() == [None, "NA", None, None]  # "NA" stays "NA"
    assert wb.survey is None


def test_decimal_comma_and_thousands_are_text(tmp_path: Path) -> None:
    # reliability.md §5: thousands="." turns 55.2 into 552; we never guess separators.
    text = ('Start,LAeq\n2026-07-01 00:00,"55,2"\n2026-07-01 00:01,"1,234.5"\n'
            "2026-07-01 00:02,54.9\n")
    wb = read_csv_table(_write(tmp_path, text))
    laeq = _col(wb, "LAeq")
    assert laeq.text_cells == {0: "55,2", 1: "1,234.5"}
    assert laeq.values.iloc[2] == 54.9


def test_time_column_on_day_zero_and_non_iso_text(tmp_path: Path) -> None:
    text = "Date,Time,LAeq\n01/07/2026,22:00:00,50\n2026-07-01,22:15,51\n"
    wb = read_csv_table(_write(tmp_path, text))
    assert _col(wb, "Time").values.tolist() == [pd.Timestamp("1899-12-31 22:00:00"),
                                                pd.Timestamp("1899-12-31 22:15:00")]
    date = _col(wb, "Date")
    assert date.text_cells == {0: "01/07/2026"}  # day/month order is never guessed
    assert date.values.iloc[1] == pd.Timestamp("2026-07-01")


def test_control_characters_replaced(tmp_path: Path) -> None:
    wb = read_csv_table(_write(tmp_path, "Start,LAeq,Note\n2026-07-01 00:00,50,a\x07b\n"))
    assert _col(wb, "Note").values.iloc[0] == "a\ufffdb"
    assert [(f.code, f.row, f.column) for f in wb.findings] == [
        ("text-control-characters", 2, "C")]


def test_column_map(tmp_path: Path) -> None:
    wb = read_csv_table(_write(tmp_path, "Zeit;Pegel\n2026-07-01 00:00;50\n"),
                        Settings(column_map={"Zeit": "Start", "Pegel": "LAeq"}))
    assert _col(wb, "Pegel").kind == "number" and _col(wb, "Zeit").kind == "datetime"


def test_no_header(tmp_path: Path) -> None:
    wb = read_csv_table(_write(tmp_path, "a,b\n1,2\n"))
    assert wb.readings is None
    assert [f.code for f in wb.findings] == ["header-missing"]


def test_not_utf8_and_empty(tmp_path: Path) -> None:
    p = tmp_path / "latin.csv"
    p.write_bytes("Start,LAeq,Note\n2026-07-01 00:00,50,Stra\xdfe\n".encode("latin-1"))
    with pytest.raises(WorkbookError, match="UTF-8") as info:
        read_csv_table(p)
    assert info.value.code == "csv-encoding"
    e = tmp_path / "e.csv"
    e.write_bytes(b"")
    with pytest.raises(WorkbookError, match="empty"):
        read_csv_table(e)


def test_input_unchanged_and_source(tmp_path: Path) -> None:
    p = _write(tmp_path, "Start,LAeq\n2026-07-01 00:00,50\n")
    before = hashlib.sha256(p.read_bytes()).hexdigest()
    wb = read_csv_table(p)
    assert wb.source.sha256 == before == hashlib.sha256(p.read_bytes()).hexdigest()


def test_time_stamps_with_an_offset_in_some_rows_only(tmp_path: Path) -> None:
    # Some cells carry a UTC offset (ISO 8601), others none: pandas refuses to parse such a
    # column as one ("Mixed timezones"), which made the whole file an internal error. The
    # column is kept as text and every cell read with its own offset (or the clock).
    from surveytools.settings import settings_from_mapping
    from surveytools.validation import build_survey

    text = ("Start,LAeq (dB)\n"
            "2026-07-01 10:00:00,50.0\n"
            "2026-07-01T12:00:01+02:00,51.0\n"
            "2026-07-01 10:00:02,52.0\n")
    wb = read_csv_table(_write(tmp_path, text), Settings())
    assert _col(wb, "Start").kind == "text"
    settings = settings_from_mapping({"survey": {"position": "Yard", "clock": "UTC",
                                                 "time_zone": "Europe/Berlin"}})
    survey = build_survey(wb, settings)
    # hand-evaluated: 12:00:01+02:00 is 10:00:01 UTC, between the two clock-UTC readings
    starts = survey.readings["start_ms"].to_numpy()
    base = int(np.datetime64("2026-07-01T10:00:00", "ms").astype(np.int64))
    assert (starts - base).tolist() == [0, 1_000, 2_000]
    assert not [f for f in survey.findings if f.code.startswith("timestamp")]
