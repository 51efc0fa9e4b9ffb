"""Tests of read_workbook (surveytools.inputs.read).

Reference reader: openpyxl (a general-purpose library) gives the spreadsheet row numbers,
column letters and cell values we compare against. Pitfalls tested are the ones measured in
shared/reference/performance.md §3 (text cell beyond the type-inference sample) and
reliability.md §4-§5 (midnight dates, 1904 system, error cells, formulas without cache,
dimension lies, merged cells, NA-like strings).
"""

from __future__ import annotations

import datetime as dt
import hashlib
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest
import xlsxwriter
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from surveytools.inputs.columns import READINGS_COLUMNS, match_columns
from surveytools.inputs.raw import RawTable
from surveytools.inputs.read import read_workbook
from surveytools.settings import Settings
from tests.inputs.hostile import build_xlsx, sheet_xml


def _col(table: RawTable | None, header: str):
    assert table is not None
    return next(c for c in table.columns if c.header == header)


def _codes(wb) -> list[tuple[str, str | None, int | None, str | None]]:
    return [(f.code, f.sheet, f.row, f.column) for f in wb.findings]


def test_table_at_c5_below_title_matches_openpyxl(tmp_path: Path) -> None:
    p = tmp_path / "c5.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Readings"
    ws["A1"] = "Noise survey - East yard (invented)"
    ws["A2"] = "Exported 2026-07-02"
    for j, h in enumerate(["Start", "LAeq (dB)", "LAFmax", "Note"]):
        ws.cell(5, 3 + j, h)
    t0 = dt.datetime(2026, 7, 1, 22, 0)
    for i in range(40):
        ws.cell(6 + i, 3, t0 + dt.timedelta(minutes=15 * i))
        ws.cell(6 + i, 4, 40.0 + i / 10)
        ws.cell(6 + i, 5, 60.0 + i / 10)
    ws.cell(6 + 7, 6, "lorry passing")
    wb.save(p)

    raw = read_workbook(p)
    t = raw.readings
    assert t is not None
    assert t.header_row == 5 and t.first_data_row == 6 and t.n_rows == 40
    assert [c.letter for c in t.columns] == ["C", "D", "E", "F"]
    ref = openpyxl.load_workbook(p)["Readings"]
    for c in t.columns:
        assert ref[f"{c.letter}{t.header_row}"].value == c.header
        for i in (0, 7, 39):
            expected = ref[f"{c.letter}{t.first_data_row + i}"].value
            got = c.values.iloc[i]
            if expected is None:
                assert got is None or pd.isna(got)
            elif isinstance(expected, dt.datetime):
                assert pd.Timestamp(got).to_pydatetime() == expected
            else:
                assert got == expected
    rows = t.spreadsheet_rows()
    assert rows.iloc[0] == 6 and rows.iloc[-1] == 45


def test_columns_any_order_and_spelling_variants(tmp_path: Path) -> None:
    p = tmp_path / "v.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "READINGS "
    ws.append(["Notes", "LAeq (dB)", "LAeq,T", "Start time", "LA90", "1 kHz"])
    ws.append(["", 50.1, 50.2, dt.datetime(2026, 7, 1), 40.0, 33.3])
    wb.save(p)
    t = read_workbook(p).readings
    assert t is not None
    headers = [c.header for c in t.columns]
    assert headers == ["Notes", "LAeq (dB)", "LAeq,T", "Start time", "LA90", "1 kHz"]
    matched, unknown, dups = match_columns(headers, READINGS_COLUMNS)
    assert matched == {"Note": 0, "LAeq": 1, "Start": 3, "LAF90": 4, "LZeq_1000Hz": 5}
    assert dups == [("LAeq", [1, 2])]
    assert unknown == []
    assert _col(t, "1 kHz").kind == "number"


def test_text_beyond_inference_sample_kept(tmp_path: Path) -> None:
    # performance.md §3 probe_mixed: "OVL" at row 2,001 and a blank at row 2,501 of 3,000.
    p = tmp_path / "ovl.xlsx"
    wb = xlsxwriter.Workbook(str(p))
    ws = wb.add_worksheet("Readings")
    ws.write_row(0, 0, ["Start", "LAeq"])
    fmt = wb.add_format({"num_format": "yyyy-mm-dd hh:mm"})
    for i in range(3000):
        ws.write_datetime(i + 1, 0, dt.datetime(2026, 7, 1) + dt.timedelta(minutes=i), fmt)
        if i == 2000:
            ws.write_string(i + 1, 1, "OVL")
        elif i != 2500:
            ws.write_number(i + 1, 1, 45.0)
    wb.close()
    t = read_workbook(p).readings
    laeq = _col(t, "LAeq")
    assert laeq.kind == "number"
    assert laeq.text_cells == {2000: "OVL"}
    assert np.isnan(laeq.values.iloc[2000]) and np.isnan(laeq.values.iloc[2500])
    assert t is not None and t.first_data_row + 2000 == 2002  # spreadsheet row of "OVL"
    assert int(laeq.values.notna().sum()) == 2998


def test_midnight_datetimes_one_type(tmp_path: Path) -> None:
    # reliability.md R7 / D3: python-calamine returns date for midnight cells; we do not.
    p = tmp_path / "mid.xlsx"
    wb = xlsxwriter.Workbook(str(p))
    ws = wb.add_worksheet("Readings")
    fmt = wb.add_format({"num_format": "yyyy-mm-dd hh:mm:ss"})
    ws.write_row(0, 0, ["Start", "LAeq"])
    stamps = [dt.datetime(2026, 3, 31, 23, 30), dt.datetime(2026, 4, 1, 0, 0),
              dt.datetime(2026, 4, 1, 0, 30)]
    for i, s in enumerate(stamps):
        ws.write_datetime(i + 1, 0, s, fmt)
        ws.write_number(i + 1, 1, 50)
    wb.close()
    start = _col(read_workbook(p).readings, "Start")
    assert start.kind == "datetime" and str(start.values.dtype) == "datetime64[ms]"
    assert [v.to_pydatetime() for v in start.values] == stamps
    assert (start.values.diff().dropna() == pd.Timedelta(minutes=30)).all()


def _date_system_file(path: Path, date_1904: bool) -> Path:
    wb = xlsxwriter.Workbook(str(path), {"date_1904": date_1904})
    ws = wb.add_worksheet("Readings")
    fmt = wb.add_format({"num_format": "yyyy-mm-dd hh:mm:ss.000"})
    tfmt = wb.add_format({"num_format": "hh:mm:ss"})
    ws.write_row(0, 0, ["Start", "Time", "LAeq"])
    for i in range(20):
        ws.write_datetime(i + 1, 0, dt.datetime(2026, 7, 1, 23, 59, 58, 100_000)
                          + dt.timedelta(milliseconds=100 * i), fmt)
        ws.write_datetime(i + 1, 1, dt.time(1, 2, 3), tfmt)
        ws.write_number(i + 1, 2, 50)
    wb.close()
    return path


def test_both_date_systems_identical(tmp_path: Path) -> None:
    # reliability.md D1: the same data saved with date_1904 on and off.
    a = read_workbook(_date_system_file(tmp_path / "a.xlsx", False))
    b = read_workbook(_date_system_file(tmp_path / "b.xlsx", True))
    assert (a.date_system, b.date_system) == (1900, 1904)
    for name in ("Start", "Time"):
        va, vb = _col(a.readings, name).values, _col(b.readings, name).values
        assert va.equals(vb)
    # 100 ms steps survive exactly (performance.md §3: readers round to 1 ms).
    steps = _col(a.readings, "Start").values.diff().dropna()
    assert (steps == pd.Timedelta(milliseconds=100)).all()
    # Time-of-day cells are placed on 1899-12-31 (documented in RawColumn).
    assert _col(a.readings, "Time").values.iloc[0] == pd.Timestamp("1899-12-31 01:02:03")


def test_error_cells_and_formula_without_value(tmp_path: Path) -> None:
    rows = '<row r="1"><c r="A1" t="inlineStr"><is><t>LAeq</t></is></c></row>'
    rows += "".join(f'<row r="{i}"><c r="A{i}"><v>50</v></c></row>' for i in range(2, 10))
    rows += ('<row r="10"><c r="A10" t="e"><f>1/0</f><v>#DIV/0!</v></c></row>'
             '<row r="11"><c r="A11"><f>A2*2</f></c></row>'
             '<row r="12"><c r="A12" t="e"><v>#N/A</v></c></row>')
    p = build_xlsx(tmp_path / "e.xlsx", {"Readings": sheet_xml(rows)})
    raw = read_workbook(p)
    laeq = _col(raw.readings, "LAeq")
    assert laeq.error_cells == {8: "#DIV/0!", 10: "#N/A"}
    assert laeq.formula_without_value == {9}
    assert ("formula-without-value", "Readings", 11, "A") in _codes(raw)
    assert raw.readings is not None and raw.readings.n_rows == 11


def test_openpyxl_formula_located(tmp_path: Path) -> None:
    # reliability.md §5 P1: openpyxl writes <f> with an empty <v>: no cached value.
    p = tmp_path / "f.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Readings"
    ws.append(["Start", "LAeq"])
    for i in range(5):
        ws.append([dt.datetime(2026, 7, 1, i), 50.0])
    ws["B4"] = "=B3+1"
    wb.save(p)
    raw = read_workbook(p)
    assert _col(raw.readings, "LAeq").formula_without_value == {2}
    assert [f for f in _codes(raw) if f[0] == "formula-without-value"] == [
        ("formula-without-value", "Readings", 4, "B")]


def test_dimension_lie_reads_all_rows(tmp_path: Path) -> None:
    # reliability.md R6 / Z6: <dimension A1:A1> with 100 rows of data -> all 100 rows.
    rows = '<row r="1"><c r="A1" t="inlineStr"><is><t>LAeq</t></is></c></row>'
    rows += "".join(f'<row r="{i}"><c r="A{i}"><v>{i}</v></c></row>' for i in range(2, 102))
    p = build_xlsx(tmp_path / "d.xlsx", {"Readings": sheet_xml(rows, dimension="A1:A1")})
    t = read_workbook(p).readings
    assert t is not None and t.n_rows == 100
    assert _col(t, "LAeq").values.tolist() == [float(i) for i in range(2, 102)]


def test_trailing_empty_rows_cut_middle_empty_rows_kept(tmp_path: Path) -> None:
    p = tmp_path / "t.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Readings"
    ws.append(["Start", "LAeq"])
    ws.append([dt.datetime(2026, 7, 1, 0), 50.0])
    ws.append([None, None])
    ws.append([dt.datetime(2026, 7, 1, 2), 52.0])
    for r in range(5, 30):  # formatted but empty trailing rows
        ws.cell(r, 2).number_format = "0.0"
        ws.cell(r, 1).value = ""
    wb.save(p)
    t = read_workbook(p).readings
    assert t is not None and t.n_rows == 3
    assert np.isnan(_col(t, "LAeq").values.iloc[1])


def test_sheet_chosen_by_signature_and_hidden(tmp_path: Path) -> None:
    p = tmp_path / "s.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Cover"
    ws["A1"] = "Survey export"
    data = wb.create_sheet("Log 1")
    data.append(["Start", "LAeq"])
    data.append([dt.datetime(2026, 7, 1), 50.0])
    wb.save(p)
    raw = read_workbook(p)
    assert raw.readings is not None and raw.readings.sheet == "Log 1"
    assert ("readings-sheet-chosen", "Log 1", None, None) in _codes(raw)

    wb = openpyxl.load_workbook(p)
    wb["Log 1"].title = "readings"
    wb["readings"].sheet_state = "hidden"
    wb.save(p)
    raw = read_workbook(p)
    assert raw.readings is not None and raw.readings.sheet == "readings"
    assert ("sheet-hidden", "readings", None, None) in _codes(raw)


def test_no_readings_sheet(tmp_path: Path) -> None:
    p = tmp_path / "n.xlsx"
    wb = openpyxl.Workbook()
    wb.active["A1"] = "nothing here"
    wb.save(p)
    raw = read_workbook(p)
    assert raw.readings is None
    assert [f.code for f in raw.findings] == ["readings-sheet-missing"]


def test_survey_weather_exclusions(tmp_path: Path) -> None:
    p = tmp_path / "all.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Readings"
    ws.append(["Start", "LAeq"])
    ws.append([dt.datetime(2026, 7, 1), 50.0])
    sv = wb.create_sheet("Survey")
    sv["A1"] = "Survey details (invented data)"
    sv["B3"], sv["C3"] = "Position", "NW-2"
    sv["B4"], sv["C4"] = "Site", "NA"  # a site code "NA" must stay "NA" (reliability.md P6)
    sv["B5"], sv["C5"] = "Calibration before (dB)", 93.8
    sv["B6"], sv["C6"] = "Start of survey", dt.datetime(2026, 7, 1)
    sv["B7"], sv["C7"] = "Notes", None
    we = wb.create_sheet("Weather")
    we.append(["Start", "Wind speed (m/s)", "Rain (mm)"])
    we.append([dt.datetime(2026, 7, 1), 3.5, 0.0])
    ex = wb.create_sheet("Exclusions")
    ex.append(["From", "To", "Reason", "Applies to"])
    ex.append([dt.datetime(2026, 7, 1, 1), dt.datetime(2026, 7, 1, 2), "dog barking", "all"])
    wb.save(p)
    raw = read_workbook(p)
    assert raw.survey is not None
    entries = {e.key: e for e in raw.survey.entries}
    assert entries["Position"].value == "NW-2"
    assert entries["Site"].value == "NA"
    assert entries["Calibration before (dB)"].value == 93.8
    assert entries["Start of survey"].value == dt.datetime(2026, 7, 1)
    assert entries["Notes"].value is None
    assert (entries["Site"].row, entries["Site"].key_column, entries["Site"].value_column) == (
        4, "B", "C")
    assert raw.weather is not None and [c.header for c in raw.weather.columns] == [
        "Start", "Wind speed (m/s)", "Rain (mm)"]
    assert _col(raw.weather, "Wind speed (m/s)").values.tolist() == [3.5]
    assert raw.exclusions is not None
    assert _col(raw.exclusions, "Reason").values.tolist() == ["dog barking"]
    assert _col(raw.exclusions, "From").kind == "datetime"


def test_control_characters_and_merged_cells(tmp_path: Path) -> None:
    rows = ('<row r="1"><c r="A1" t="inlineStr"><is><t>LAeq</t></is></c>'
            '<c r="B1" t="inlineStr"><is><t>Note</t></is></c></row>'
            '<row r="2"><c r="A2"><v>50</v></c>'
            '<c r="B2" t="inlineStr"><is><t>a_x0007_b</t></is></c></row>'
            '<row r="3"><c r="A3"><v>51</v></c></row><row r="4"><c r="A4"><v>52</v></c></row>')
    xml = sheet_xml(rows).replace("</sheetData>", '</sheetData><mergeCells count="1">'
                                  '<mergeCell ref="B3:B4"/></mergeCells>')
    p = build_xlsx(tmp_path / "cc.xlsx", {"Readings": xml})
    raw = read_workbook(p)
    note = _col(raw.readings, "Note")
    # ECMA-376 §22.9.2.19 ST_Xstring: _x0007_ escapes U+0007, which XML 1.0 forbids.
    assert note.values.iloc[0] == "a\ufffdb"
    assert ("text-control-characters", "Readings", 2, "B") in _codes(raw)
    assert ("merged-cells", "Readings", 3, "B") in _codes(raw)


def test_input_unchanged(tmp_path: Path) -> None:
    # reliability.md B2: hashes of inputs unchanged after reading.
    p = _date_system_file(tmp_path / "h.xlsx", False)
    before = hashlib.sha256(p.read_bytes()).hexdigest()
    raw = read_workbook(p)
    assert hashlib.sha256(p.read_bytes()).hexdigest() == before == raw.source.sha256
    assert raw.source.file == "h.xlsx" and raw.source.size_bytes == p.stat().st_size


def test_column_map_used_for_header_search(tmp_path: Path) -> None:
    p = tmp_path / "m.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Readings"
    ws.append(["Title"])
    ws.append(["Zeitpunkt", "Pegel"])
    ws.append([dt.datetime(2026, 7, 1), 50.0])
    wb.save(p)
    t = read_workbook(p, Settings(column_map={"Zeitpunkt": "Start", "Pegel": "LAeq"})).readings
    assert t is not None and t.header_row == 2
    assert _col(t, "Pegel").kind == "number"


_levels = st.floats(-20, 160, allow_nan=False, allow_infinity=False)


@settings(max_examples=15, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(
    start=st.datetimes(min_value=dt.datetime(2000, 1, 1), max_value=dt.datetime(2040, 1, 1)),
    step_ms=st.sampled_from([100, 125, 1000, 60_000, 900_000]),
    levels=st.lists(_levels, min_size=1, max_size=60),
)
def test_round_trip_openpyxl(tmp_path: Path, start: dt.datetime, step_ms: int,
                             levels: list[float]) -> None:
    # reliability.md §8: write with openpyxl, read back: timestamps within 1 ms (the xlsx
    # resolution, openpyxl docs "Dates and Times") and levels within 1e-9 dB (openpyxl
    # writes floats with %.16g).
    p = tmp_path / "rt.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Readings"
    ws.append(["Start", "LAeq"])
    stamps = [start + dt.timedelta(milliseconds=step_ms * i) for i in range(len(levels))]
    for s, v in zip(stamps, levels, strict=True):
        ws.append([s, v])
    wb.save(p)
    t = read_workbook(p).readings
    got_t = _col(t, "Start").values
    got_v = _col(t, "LAeq").values.to_numpy()
    expected = np.array(stamps, dtype="datetime64[us]")
    diff_us = (got_t.to_numpy().astype("datetime64[us]") - expected).astype(np.int64)
    assert np.abs(diff_us).max() <= 1000
    np.testing.assert_allclose(got_v, levels, rtol=0, atol=1e-9)


def test_table_starting_at_c5_without_title(tmp_path: Path) -> None:
    # The header is the sheet's first non-empty row; row numbers still count from row 1.
    p = tmp_path / "c5only.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Readings"
    ws["C5"], ws["D5"] = "Start", "LAeq"
    for i in range(3):
        ws.cell(6 + i, 3, dt.datetime(2026, 7, 1, i))
        ws.cell(6 + i, 4, 50.0 + i)
    wb.save(p)
    t = read_workbook(p).readings
    assert t is not None and (t.header_row, t.n_rows) == (5, 3)
    ref = openpyxl.load_workbook(p)["Readings"]
    laeq = _col(t, "LAeq")
    assert laeq.letter == "D"
    assert laeq.values.tolist() == [ref[f"D{r}"].value for r in range(6, 9)]


def test_reader_failure_mapped(tmp_path: Path) -> None:
    # An undefined entity (no DTD, so the preflight passes) makes the readers fail: the
    # failure becomes one WorkbookError code, never a stray exception (reliability.md §5).
    from surveytools.errors import WorkbookError

    rows = ('<row r="1"><c r="A1" t="inlineStr"><is><t>LAeq</t></is></c></row>'
            '<row r="2"><c r="A2" t="inlineStr"><is><t>&undefined;</t></is></c></row>')
    p = build_xlsx(tmp_path / "u.xlsx", {"Readings": sheet_xml(rows)})
    with pytest.raises(WorkbookError, match="could not be read") as info:
        read_workbook(p)
    assert info.value.code == "reader-failed"


@pytest.mark.parametrize("name", ["readings", "Readings ", "READINGS", "Read-ings"])
def test_sheet_name_tolerant(tmp_path: Path, name: str) -> None:
    p = tmp_path / "n.xlsx"
    wb = openpyxl.Workbook()
    wb.active.title = "Other"
    wb.active.append(["Start", "LAeq"])  # a decoy with the same signature, listed first
    ws = wb.create_sheet(name)
    ws.append(["Start", "LAeq"])
    ws.append([dt.datetime(2026, 7, 1), 50.0])
    wb.save(p)
    raw = read_workbook(p)
    assert raw.readings is not None and raw.readings.sheet == name
    assert raw.findings == []


def test_misfits_located_when_table_is_right_of_the_range_start(tmp_path: Path) -> None:
    # A title in A1 makes the cell range start at column A while the table starts at C:
    # text and error cells must still land in the right column (checked against openpyxl).
    p = tmp_path / "off.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Readings"
    ws["A1"] = "Invented log"
    for j, h in enumerate(["Start", "LAeq", "LAFmax"]):
        ws.cell(5, 3 + j, h)
    for i in range(1200):
        ws.cell(6 + i, 3, dt.datetime(2026, 7, 1) + dt.timedelta(minutes=i))
        ws.cell(6 + i, 4, 50.0)
        ws.cell(6 + i, 5, 60.0)
    ws["D1106"] = "OVL"
    ws["E1107"] = "n/a"
    wb.save(p)
    t = read_workbook(p).readings
    assert t is not None
    ref = openpyxl.load_workbook(p)["Readings"]
    for header in ("LAeq", "LAFmax"):
        col = _col(t, header)
        assert col.kind == "number"
        for pos, text in col.text_cells.items():
            assert ref[f"{col.letter}{t.first_data_row + pos}"].value == text
    assert _col(t, "LAeq").text_cells == {1100: "OVL"}
    assert _col(t, "LAFmax").text_cells == {1101: "n/a"}


def test_styled_empty_cells_beyond_the_data(tmp_path: Path) -> None:
    # Formatted but empty cells (J1, B30) widen the preflight extent, not the table.
    rows = ('<row r="1"><c r="A1" t="inlineStr"><is><t>LAeq</t></is></c><c r="J1" s="0"/></row>'
            '<row r="2"><c r="A2"><v>5</v></c></row><row r="30"><c r="B30" s="0"/></row>')
    p = build_xlsx(tmp_path / "styled.xlsx", {"Readings": sheet_xml(rows)})
    t = read_workbook(p).readings
    assert t is not None and t.n_rows == 1
    assert [(c.header, c.letter, c.values.tolist()) for c in t.columns] == [("LAeq", "A", [5.0])]


def test_readings_sheet_by_other_name_noted(tmp_path: Path) -> None:
    p = tmp_path / "d.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Data"
    ws.append(["Start", "LAeq"])
    ws.append([dt.datetime(2026, 7, 1), 50.0])
    wb.save(p)
    raw = read_workbook(p)
    assert raw.readings is not None and raw.readings.sheet == "Data"
    assert _codes(raw) == [("readings-sheet-chosen", "Data", None, None)]


def test_text_cells_cleaned_and_counted_far_down_a_long_column(tmp_path: Path) -> None:
    # Text cells far below the first rows: an ESC escaped as _x001B_ (ECMA-376 §22.9.2.19
    # ST_Xstring; XML 1.0 §2.2 Char production excludes U+001B), a text longer than a cell
    # may hold (32,767 characters: Microsoft "Excel specifications and limits") and a last
    # row holding only text, 1,500 rows below the last level, which must still count (rows
    # are cut only after the last non-empty cell, not after a styled empty one).
    def text(ref: str, value: str) -> str:
        return f'<c r="{ref}" t="inlineStr"><is><t>{value}</t></is></c>'

    notes = {4002: text("B4002", "odd_x001B_char"), 5002: text("B5002", "y" * 40_000)}
    rows = f'<row r="1">{text("A1", "LAeq")}{text("B1", "Note")}</row>'
    rows += "".join(f'<row r="{r}"><c r="A{r}"><v>50</v></c>{notes.get(r, "")}</row>'
                    for r in range(2, 6002))
    rows += f'<row r="7501">{text("B7501", "last")}</row>'
    rows += '<row r="14000"><c r="B14000" s="0"/></row>'  # styled but empty: not a row
    p = build_xlsx(tmp_path / "long.xlsx", {"Readings": sheet_xml(rows)})
    raw = read_workbook(p)
    t = raw.readings
    assert t is not None and t.n_rows == 7500  # spreadsheet rows 2..7501
    note = _col(t, "Note")
    assert note.values.iloc[4000] == "odd\ufffdchar"
    assert note.values.iloc[5000] == "y" * 32_767
    assert note.values.iloc[7499] == "last" and note.values.iloc[7498] is None
    assert [(f.code, f.row, f.column) for f in raw.findings] == [
        ("text-control-characters", 4002, "B"), ("text-truncated", 5002, "B")]
