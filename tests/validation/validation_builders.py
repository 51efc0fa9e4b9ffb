"""Builders for RawWorkbook objects, so validation tests do not depend on the reader."""

from __future__ import annotations

from collections.abc import Sequence
from datetime import datetime
from typing import Any

import numpy as np
import pandas as pd

from surveytools.inputs.raw import (
    KeyValue,
    KeyValueSheet,
    RawColumn,
    RawTable,
    RawWorkbook,
)
from surveytools.provenance import SourceInfo
from surveytools.settings import Settings
from surveytools.survey import Survey
from surveytools.validation import build_survey

SOURCE = SourceInfo(path="/invented/meadow_lane.xlsx", file="meadow_lane.xlsx",
                    sha256="0" * 64, size_bytes=1)


def dt_col(header: str, letter: str, values: Sequence[str | None], **cells: Any) -> RawColumn:
    """A date-time column from ISO text (None = empty)."""
    s = pd.Series(pd.to_datetime(list(values), format="ISO8601"), dtype="datetime64[ms]")
    return RawColumn(header, letter, "datetime", s.reset_index(drop=True), **cells)


def num_col(header: str, letter: str, values: Sequence[float | None], **cells: Any) -> RawColumn:
    s = pd.Series([np.nan if v is None else v for v in values], dtype="float64")
    return RawColumn(header, letter, "number", s, **cells)


def text_col(header: str, letter: str, values: Sequence[str | None], **cells: Any) -> RawColumn:
    return RawColumn(header, letter, "text", pd.Series(list(values), dtype=object), **cells)


def bool_col(header: str, letter: str, values: Sequence[bool | None]) -> RawColumn:
    return RawColumn(header, letter, "bool", pd.Series(list(values), dtype="boolean"))


def table(sheet: str, columns: list[RawColumn], header_row: int = 1) -> RawTable:
    n = max(len(c.values) for c in columns)
    return RawTable(sheet, header_row, columns, n)


def survey_sheet(pairs: Sequence[tuple[str, Any]], sheet: str = "Survey",
                 first_row: int = 2) -> KeyValueSheet:
    return KeyValueSheet(sheet, [KeyValue(k, v, first_row + i, "A", "B")
                                 for i, (k, v) in enumerate(pairs)])


#: A Survey sheet without any problem: UTC clock, drift 0.1 dB, 94 dB calibrator.
GOOD_SURVEY = (("Position", "MP-1"), ("Site", "Invented Quarry"), ("Time zone", "UTC"),
               ("Clock", "UTC"), ("Meter class", 1), ("Calibration before (dB)", 94.0),
               ("Calibration after (dB)", 94.1), ("Calibrator level (dB)", 94.0),
               ("Microphone", "free-field"), ("Height (m)", 1.5))


def survey_with(**changes: Any) -> KeyValueSheet:
    """GOOD_SURVEY with some keys replaced (value None removes the row)."""
    pairs = []
    keys = {"position": "Position", "site": "Site", "time_zone": "Time zone", "clock": "Clock",
            "meter_class": "Meter class", "before": "Calibration before (dB)",
            "after": "Calibration after (dB)", "calibrator": "Calibrator level (dB)",
            "microphone": "Microphone", "height": "Height (m)"}
    replaced = {keys[k]: v for k, v in changes.items()}
    for k, v in GOOD_SURVEY:
        v = replaced.get(k, v)
        if v is not None:
            pairs.append((k, v))
    return survey_sheet(pairs)


def minutes(start: str, n: int, step_s: float = 60.0) -> list[str]:
    t0 = datetime.fromisoformat(start)
    return [str(pd.Timestamp(t0) + pd.Timedelta(seconds=i * step_s)) for i in range(n)]


def readings(starts: Sequence[str | None], laeq: Sequence[float | None], *extra: RawColumn,
             sheet: str = "Readings", header_row: int = 1) -> RawTable:
    return table(sheet, [dt_col("Start", "A", starts), num_col("LAeq", "B", laeq), *extra],
                 header_row)


def build(readings_table: RawTable | None, survey: KeyValueSheet | None = None,
          settings: Settings | None = None, weather: RawTable | None = None,
          exclusions: RawTable | None = None) -> Survey:
    wb = RawWorkbook(SOURCE, readings_table,
                     survey if survey is not None else survey_sheet(GOOD_SURVEY),
                     weather, exclusions)
    return build_survey(wb, settings or Settings())


def located(survey: Survey, *, skip_info: bool = False) -> list[tuple[Any, ...]]:
    """(sheet, row, column, code) of every finding, in the survey's (sorted) order."""
    return [(f.sheet, f.row, f.column, f.code) for f in survey.findings
            if not (skip_info and f.severity.value == "info")]


def reasons(survey: Survey) -> dict[str, list[int]]:
    """Exclusion reason -> spreadsheet rows excluded."""
    rows = survey.readings["row"].to_numpy()
    out: dict[str, list[int]] = {}
    for ex in survey.exclusions:
        out.setdefault(ex.reason, []).extend(rows[ex.mask].tolist())
    return out


def canon(items: Sequence[tuple[Any, ...]]) -> list[tuple[Any, ...]]:
    """Sort (sheet, row, column, code, ...) tuples that may hold None."""
    return sorted(items, key=lambda t: tuple((x is None, "" if x is None else str(x).zfill(9)
                                              if isinstance(x, int) else x) for x in t))
