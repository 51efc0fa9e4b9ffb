"""One faulty .xlsx per finding code, read and validated for real: the exact located list.

Each workbook is written with openpyxl (a general-purpose writer, not our code), holds one
fault, and must give exactly the expected (sheet, row, column, code) findings of severity
error or warning. Rows are as the spreadsheet shows them (header = row 1).
"""

from __future__ import annotations

from collections.abc import Callable
from datetime import datetime, timedelta
from pathlib import Path
from typing import Any

import openpyxl
import pytest

from surveytools.inputs.read import read_workbook
from surveytools.settings import Settings
from surveytools.validation import build_survey

START = datetime(2026, 6, 1, 10, 0)


def workbook(path: Path, *, survey: dict[str, Any] | None = None,
             rows: list[list[Any]] | None = None,
             header: tuple[str, ...] = ("Start", "Duration (s)", "LAeq (dB)", "LAFmax (dB)"),
             edit: Callable[[Any], None] | None = None,
             sheets: dict[str, list[list[Any]]] | None = None) -> Path:
    wb = openpyxl.Workbook()
    ws = wb.active
    assert ws is not None
    ws.title = "Survey"
    fields = {"Position": "F1", "Time zone": "UTC", "Clock": "UTC",
              "Calibration before (dB)": 94.0, "Calibration after (dB)": 94.1,
              "Calibrator level (dB)": 94.0}
    fields.update(survey or {})
    ws.append(["Field", "Value"])
    for key, value in fields.items():
        if value is not None:
            ws.append([key, value])
    rd = wb.create_sheet("Readings")
    rd.append(list(header))
    if rows is None:
        rows = [[START + timedelta(minutes=15 * i), 900, 50.0 + i, 60.0 + i] for i in range(6)]
    for r in rows:
        rd.append(r)
    if edit is not None:
        edit(rd)
    for name, table in (sheets or {}).items():
        extra = wb.create_sheet(name)
        for r in table:
            extra.append(r)
    wb.save(path)
    return path


def located(path: Path) -> list[tuple[str | None, int | None, str | None, str]]:
    raw = read_workbook(path, Settings())
    survey = build_survey(raw, Settings())
    return sorted((f.sheet, f.row, f.column, f.code) for f in survey.findings
                  if f.severity.value in ("error", "warning"))


def _rows(change: Callable[[list[list[Any]]], None]) -> list[list[Any]]:
    rows = [[START + timedelta(minutes=15 * i), 900, 50.0 + i, 60.0 + i] for i in range(6)]
    change(rows)
    return rows


def _set(r: int, c: int, value: Any) -> Callable[[list[list[Any]]], None]:
    def change(rows: list[list[Any]]) -> None:
        rows[r][c] = value
    return change


CASES: list[tuple[str, dict[str, Any], list[tuple[str | None, int | None, str | None, str]]]] = [
    ("clean", {}, []),
    ("text in a level cell", {"rows": _rows(_set(2, 2, "n/a"))},
     [("Readings", 4, "C", "level-not-a-number")]),
    ("spreadsheet error value", {"rows": _rows(_set(1, 2, "#DIV/0!"))},
     [("Readings", 3, "C", "cell-error-value")]),
    ("implausible level", {"rows": _rows(_set(3, 2, 200.0))},
     [("Readings", 5, "C", "level-out-of-range")]),
    ("maximum below the equivalent level", {"rows": _rows(_set(4, 3, 40.0))},
     [("Readings", 6, "D", "level-order")]),
    ("not a time", {"rows": _rows(_set(2, 0, "yesterday"))},
     [("Readings", 4, "A", "timestamp-invalid")]),
    ("duplicated start", {"rows": _rows(_set(3, 0, START + timedelta(minutes=30)))},
     [("Readings", 5, "A", "timestamp-duplicate")]),
    ("zero duration", {"rows": _rows(_set(1, 1, 0))},
     [("Readings", 3, "B", "duration-invalid")]),
    ("missing position", {"survey": {"Position": None}},
     [("Survey", None, None, "survey-required")]),
    ("unknown microphone", {"survey": {"Microphone": "on a stick"}},
     [("Survey", 8, "B", "survey-enum")]),
    ("calibration drift", {"survey": {"Calibration after (dB)": 94.7}},
     [("Survey", 6, "B", "calibration-drift")]),
    ("exclusion ending before it starts",
     {"sheets": {"Exclusions": [["From", "To", "Reason", "Applies to"],
                                [START + timedelta(hours=1), START, "mower", "all"]]}},
     [("Exclusions", 2, "B", "exclusion-span-invalid")]),  # located at the To cell
    ("exclusion scope not all/background",
     {"sheets": {"Exclusions": [["From", "To", "Reason", "Applies to"],
                                [START, START + timedelta(hours=1), "mower", "some"]]}},
     [("Exclusions", 2, "D", "exclusion-scope-unknown")]),
    ("negative rain",
     {"sheets": {"Weather": [["Start", "Wind speed (m/s)", "Rain (mm)"],
                             [START, 2.0, -1.0]]}},
     [("Weather", 2, "C", "weather-out-of-range")]),
    ("overload flag that is not yes/no",
     {"header": ("Start", "Duration (s)", "LAeq (dB)", "LAFmax (dB)", "Overload"),
      "rows": [[START + timedelta(minutes=15 * i), 900, 50.0, 60.0,
                "maybe" if i == 2 else "no"] for i in range(6)]},
     [("Readings", 4, "E", "flag-not-yes-no")]),
    ("formula without a stored value",
     {"edit": lambda ws: ws.__setitem__("C3", "=50+1")},
     [("Readings", 3, "C", "formula-without-value")]),
]


@pytest.mark.parametrize(("kwargs", "expected"), [c[1:] for c in CASES],
                         ids=[c[0] for c in CASES])
def test_one_fault_one_exact_located_finding(tmp_path: Path, kwargs: dict[str, Any],
                                             expected: list[tuple[Any, ...]]) -> None:
    path = workbook(tmp_path / "f.xlsx", **kwargs)
    assert located(path) == sorted(expected)
