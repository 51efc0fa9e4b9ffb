"""Extreme cell values become located findings, never internal errors or runaway grids.

Workbooks are built at test time from ``tests.workbooks.survey_workbook`` with one cell
changed. Expected behaviour (issue: never crash): a reading whose time cannot be when it
was logged is a located error and its row is left out; the rest of the survey is assessed.
"""

from __future__ import annotations

import json
import re
import zipfile
from datetime import datetime
from pathlib import Path

import openpyxl
import pytest

from surveytools.pipeline import build_document, check_file
from surveytools.settings import Settings
from tests.workbooks import survey_workbook

#: Wording that betrays a library's raw exception text in a message.
RAW_TEXT = re.compile(r"BadZipFile|CalamineError|PanicException|Traceback|zlib|Expat|"
                      r"\b(Value|Type|Key|Overflow|OS|Zip)Error\b|invalid literal")


def _with_cell(tmp_path: Path, sheet: str, cell: str, value: object,
               number_format: str | None = None) -> Path:
    path = survey_workbook(tmp_path / "survey.xlsx")
    wb = openpyxl.load_workbook(path)
    wb[sheet][cell] = value
    if number_format:
        wb[sheet][cell].number_format = number_format
    wb.save(path)
    return path


def _located(doc: dict, code: str) -> list[tuple[str, int, str]]:
    return [(f["sheet"], f["row"], f["column"]) for f in doc["findings"] if f["code"] == code]


@pytest.mark.parametrize(("value", "number_format"), [
    ("9999-12-31 23:59:59", None),               # text date at the calendar's end
    (3_000_000, "yyyy-mm-dd hh:mm:ss"),          # a date serial in the year 10113
    (datetime(1926, 6, 1, 10, 0), None),         # 1926 typed for 2026
])
def test_a_reading_outside_the_plausible_years_is_left_out(tmp_path: Path, value: object,
                                                           number_format: str | None) -> None:
    path = _with_cell(tmp_path, "Readings", "A5", value, number_format)
    doc, _ = build_document(path, Settings())
    assert doc["status"] == "errors"
    assert _located(doc, "timestamp-invalid") == [("Readings", 5, "A")]
    message = next(f["message"] for f in doc["findings"] if f["code"] == "timestamp-invalid")
    assert "1980" in message and "left out" in message
    assert [u["row"] for u in doc["unplaced"]] == [5]
    # The other 23 hourly readings are assessed: 23 h measured (hand-evaluated: 24 - 1).
    assert doc["coverage"]["measured_s"] == 23 * 3600
    assert len(doc["intervals"]) < 200  # no grid stretched over decades


def test_a_wrong_year_inside_the_plausible_years_is_a_stray_reading(tmp_path: Path) -> None:
    path = _with_cell(tmp_path, "Readings", "A5", datetime(2016, 6, 1, 10, 0))
    doc, _ = build_document(path, Settings())
    assert _located(doc, "timestamp-stray") == [("Readings", 5, "A")]
    message = next(f["message"] for f in doc["findings"] if f["code"] == "timestamp-stray")
    assert "2016-06-01 10:00:00" in message and "3,652 days" in message  # 2016-06-01..2026-06-01
    assert [u["reason"] for u in doc["unplaced"]] == ["timestamp-stray"]
    assert doc["coverage"]["measured_s"] == 23 * 3600
    from surveytools.outputs.results_json import validate_results

    assert validate_results(json.loads(json.dumps(doc))) == []  # the JSON contract holds


def test_a_survey_resumed_after_a_long_break_is_kept_whole(tmp_path: Path) -> None:
    # Two halves of 12 readings, 60 days apart: neither half is stray (50 % each).
    from tests.workbooks import survey_workbook as make

    path = make(tmp_path / "two.xlsx", levels=[55.0] * 12)
    wb = openpyxl.load_workbook(path)
    ws = wb["Readings"]
    for r in range(2, 8):
        ws[f"A{r}"].value = ws[f"A{r}"].value.replace(month=8)
    wb.save(path)
    doc, _ = build_document(path, Settings())
    assert _located(doc, "timestamp-stray") == []
    assert doc["coverage"]["measured_s"] == 12 * 3600


def test_a_date_serial_beyond_any_calendar_is_refused_naming_the_cell(tmp_path: Path) -> None:
    # -1E+308 in a date-formatted cell made the native reader panic (an internal error).
    path = _with_cell(tmp_path, "Readings", "A5", -1e308, "yyyy-mm-dd hh:mm:ss")
    outcome = check_file(path, Settings()).to_json()
    assert outcome["status"] == "unreadable"
    (finding,) = outcome["findings"]
    assert finding["code"] == "cell-date-out-of-range"
    assert "Readings!A5" in finding["message"]
    assert not RAW_TEXT.search(finding["message"])


def test_a_duration_of_1e15_seconds_is_a_located_finding(tmp_path: Path) -> None:
    path = _with_cell(tmp_path, "Readings", "B5", 1e15)
    doc, _ = build_document(path, Settings())
    assert _located(doc, "duration-invalid") == [("Readings", 5, "B")]
    assert "7 days" in next(f["message"] for f in doc["findings"]
                            if f["code"] == "duration-invalid")
    assert not _located(doc, "interval-overlap")


def test_a_300_character_time_zone_is_an_unknown_zone_not_a_file_error(tmp_path: Path) -> None:
    path = _with_cell(tmp_path, "Survey", "B4", "Europe/" + "x" * 300)
    doc, _ = build_document(path, Settings())
    (finding,) = [f for f in doc["findings"] if f["code"] == "survey-time-zone-unknown"]
    assert (finding["sheet"], finding["row"], finding["column"]) == ("Survey", 4, "B")
    assert len(finding["message"]) < 300


# --- a library's raw exception text never reaches a message ---------------------------

def _rezip(src: Path, dst: Path, member: str, data: bytes) -> Path:
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for name in zin.namelist():
            zout.writestr(name, data if name == member else zin.read(name))
    return dst


def test_damaged_files_are_described_in_our_words(tmp_path: Path) -> None:
    base = survey_workbook(tmp_path / "base.xlsx")
    data = base.read_bytes()
    with zipfile.ZipFile(base) as z:
        sheet = z.read("xl/worksheets/sheet2.xml")
    cases = {
        "cut.xlsx": data[: len(data) // 2],
        "flipped.xlsx": data[:40] + bytes(b ^ 0x5A for b in data[40:400]) + data[400:],
    }
    for name, content in cases.items():
        (tmp_path / name).write_bytes(content)
    _rezip(base, tmp_path / "markup.xlsx", "xl/worksheets/sheet2.xml", sheet[: len(sheet) // 2])
    _rezip(base, tmp_path / "style.xlsx", "xl/worksheets/sheet2.xml",
           sheet.replace(b'r="A2"', b'r="A2" s="x1"', 1))
    (tmp_path / "bad.csv").write_bytes(b"Start,LAeq\n2026-06-01 07:00,\"50\n" + b"\xff\xfe" * 10)
    for path in sorted(tmp_path.glob("*")):
        if path.name == "base.xlsx":
            continue
        outcome = check_file(path, Settings()).to_json()
        for f in outcome["findings"]:
            assert f["code"] != "internal-error", (path.name, f)
            assert not RAW_TEXT.search(f["message"]), (path.name, f["message"])


def test_the_raw_text_goes_to_the_debug_log(tmp_path: Path, monkeypatch: pytest.MonkeyPatch
                                            ) -> None:
    from surveytools.debuglog import DEBUG_LOG_ENV

    log = tmp_path / "debug.log"
    monkeypatch.setenv(DEBUG_LOG_ENV, str(log))
    base = survey_workbook(tmp_path / "base.xlsx")
    (tmp_path / "cut.xlsx").write_bytes(base.read_bytes()[:-200])
    outcome = check_file(tmp_path / "cut.xlsx", Settings()).to_json()
    assert outcome["status"] == "unreadable"
    assert not RAW_TEXT.search(outcome["findings"][0]["message"])
    assert "Traceback" in log.read_text()


def test_a_grid_beyond_the_workbook_row_limit_is_refused_naming_the_key(tmp_path: Path) -> None:
    from dataclasses import replace

    # 40 daily readings span 40 days = 3,456,000 s; at 1 s that is 3,456,000 intervals,
    # above MAX_GRID_INTERVALS (1,000,000, under Excel's 1,048,576 rows); hand-evaluated:
    # the shortest step that fits is ceil(3,456,000 / 1,000,000) = 4 s.
    path = survey_workbook(tmp_path / "span.xlsx", levels=[50.0] * 40, step_s=86_400)
    doc, _ = build_document(path, replace(Settings(), reporting_interval_s=1.0))
    assert doc["status"] == "unreadable"
    finding = doc["findings"][0]
    assert finding["code"] == "grid-too-large"
    assert "reporting_interval = 1 s" in finding["message"]
    assert "at least 4 s" in finding["message"]
    from surveytools.outputs.results_json import validate_results

    assert validate_results(json.loads(json.dumps(doc))) == []
    # The default 15 min grid holds 3,840 intervals: assessed as usual.
    ok, _ = build_document(path, Settings())
    assert ok["status"] in ("ok", "warnings")
