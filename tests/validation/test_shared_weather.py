"""A shared weather file (--weather) applied to positions with different clocks."""

from __future__ import annotations

from datetime import datetime, timedelta
from pathlib import Path
from typing import Any

import numpy as np
import openpyxl
import pytest

from surveytools.inputs.shared_weather import read_weather_file
from surveytools.pipeline import build_document
from surveytools.settings import Settings
from surveytools.validation.weather_merge import clip_outside, coverage_gaps
from tests.workbooks import survey_workbook

HOUR_MS = 3_600_000


def station_workbook(path: Path, first: datetime, wind: list[float], *,
                     skip: tuple[int, ...] = (), clock: str = "UTC+01:00") -> Path:
    """A weather station export: Survey (its clock) + hourly Weather rows."""
    wb = openpyxl.Workbook()
    ws = wb.active
    assert ws is not None
    ws.title = "Survey"
    ws.append(["Field", "Value"])
    ws.append(["Clock", clock])
    ws.append(["Time zone", clock])
    weather = wb.create_sheet("Weather")
    weather.append(["Start", "Wind speed (m/s)", "Rain (mm)"])
    for k, value in enumerate(wind):
        if k not in skip:
            weather.append([first + timedelta(hours=k), value, 0.0])
    wb.save(path)
    return path


def add_own_weather(path: Path, rows: list[tuple[datetime, float]]) -> None:
    wb = openpyxl.load_workbook(path)
    weather = wb.create_sheet("Weather")
    weather.append(["Start", "Wind speed (m/s)", "Rain (mm)"])
    for start, wind in rows:
        weather.append([start, wind, 0.0])
    wb.save(path)


def wind_rows(doc: dict[str, Any]) -> list[tuple[int, int]]:
    return [(s["first_row"], s["last_row"]) for s in doc["exclusion_spans"]
            if s["reason"] == "wind"]


def codes(doc: dict[str, Any], code: str) -> list[str]:
    return [f["message"] for f in doc["findings"] if f["code"] == code]


@pytest.fixture
def station(tmp_path: Path) -> Path:
    # Station clock UTC+01:00; hourly rows from 06:00 (+01:00) = 05:00Z for 24 h; wind
    # 8 m/s (above the 5 m/s limit) in the rows of 10:00 and 11:00 (+01:00) = 09:00Z and
    # 10:00Z; the row of 16:00 (+01:00) = 15:00Z is missing (a one-hour gap).
    wind = [2.0] * 24
    wind[4] = wind[5] = 8.0
    return station_workbook(tmp_path / "station.xlsx", datetime(2026, 6, 1, 6, 0), wind,
                            skip=(10,))


def test_shared_weather_excludes_readings_at_two_positions_with_different_clocks(
        tmp_path: Path, station: Path) -> None:
    settings = Settings()
    weather = read_weather_file(station, settings)
    # North: local clock in Europe/Berlin (CEST, +02:00 in June), hourly from 07:00 local
    # = 05:00Z. Hand-evaluated: windy 09:00Z-11:00Z = 11:00-13:00 local = readings 5 and 6
    # (07:00 + 4 h, + 5 h) -> spreadsheet rows 6 and 7 (header is row 1).
    north = survey_workbook(tmp_path / "north.xlsx", position="North",
                            time_zone="Europe/Berlin", start=datetime(2026, 6, 1, 7, 0))
    # South: clock UTC, hourly from 03:00Z. Windy 09:00Z-11:00Z = readings 7 and 8 (03:00 +
    # 6 h, + 7 h) -> rows 8 and 9. Its first two hours (03:00Z-05:00Z) have no weather.
    south = survey_workbook(tmp_path / "south.xlsx", position="South", time_zone="UTC",
                            start=datetime(2026, 6, 1, 3, 0))
    north_doc, _ = build_document(north, settings, weather=weather)
    south_doc, _ = build_document(south, settings, weather=weather)
    assert wind_rows(north_doc) == [(6, 7)]
    assert wind_rows(south_doc) == [(8, 9)]
    # Gaps, once each: the missing station row 15:00Z-16:00Z (17:00-18:00 in Berlin) at
    # both; the two hours before the station's first row at South.
    assert codes(north_doc, "weather-gap") == [
        "no weather from 2026-06-01 17:00 to 2026-06-01 18:00 (1.0 h): readings then are not "
        "checked for wind and rain — add the station's rows for that time or check the "
        "conditions by hand"]
    assert [m[:52] for m in codes(south_doc, "weather-gap")] == [
        "no weather from 2026-06-01 03:00 to 2026-06-01 05:00",
        "no weather from 2026-06-01 15:00 to 2026-06-01 16:00"]
    (source,) = codes(north_doc, "weather-source")
    assert "shared weather file station.xlsx (UTC+01:00)" in source


def test_own_weather_sheet_wins_for_the_time_it_covers(tmp_path: Path, station: Path) -> None:
    # South (UTC clock) with its own calm rows 09:00-10:00Z and 10:00-11:00Z (wind 1 m/s):
    # its sheet covers 09:00Z-11:00Z, so the station's 8 m/s there is not used -> no wind
    # exclusion at all (hand-evaluated from the rule "own sheet wins for its time").
    south = survey_workbook(tmp_path / "south.xlsx", position="South", time_zone="UTC",
                            start=datetime(2026, 6, 1, 3, 0))
    add_own_weather(south, [(datetime(2026, 6, 1, 9, 0), 1.0),
                            (datetime(2026, 6, 1, 10, 0), 1.0)])
    doc, _ = build_document(south, Settings(), weather=read_weather_file(station, Settings()))
    assert wind_rows(doc) == []
    (source,) = codes(doc, "weather-source")
    assert "own Weather sheet from 2026-06-01 09:00 to 2026-06-01 11:00" in source
    # without the shared file, the own sheet alone: same (calm) result, no source finding
    alone, _ = build_document(south, Settings())
    assert wind_rows(alone) == [] and codes(alone, "weather-source") == []


def test_weather_csv_with_the_settings_clock(tmp_path: Path) -> None:
    # A CSV has no Survey sheet: its times are in the settings' clock (default: local time
    # of the default zone); here given as UTC via [survey] in the settings object.
    from dataclasses import replace

    settings = Settings()
    settings = replace(settings, survey=replace(settings.survey, clock="UTC", time_zone="UTC"))
    csv = tmp_path / "station.csv"
    csv.write_text("Start,Wind speed (m/s),Rain (mm)\n" + "".join(
        f"2026-06-01 {h:02d}:00,{8.0 if h == 9 else 2.0},0\n" for h in range(3, 24)))
    south = survey_workbook(tmp_path / "south.xlsx", position="South", time_zone="UTC",
                            start=datetime(2026, 6, 1, 3, 0), levels=[60.0] * 12)
    doc, _ = build_document(south, settings, weather=read_weather_file(csv, settings))
    assert wind_rows(doc) == [(8, 8)]  # 09:00Z = 03:00 + 6 h -> reading 7 -> row 8


def test_an_unusable_weather_file_is_a_finding_on_every_input(tmp_path: Path) -> None:
    bad = tmp_path / "station.xlsx"
    bad.write_bytes(b"not a workbook")
    weather = read_weather_file(bad, Settings())
    south = survey_workbook(tmp_path / "south.xlsx")
    doc, _ = build_document(south, Settings(), weather=weather)
    (message,) = codes(doc, "weather-file-unreadable")
    assert message.startswith("the shared weather file station.xlsx cannot be used")
    assert doc["status"] == "errors"


def test_clip_and_gap_arithmetic() -> None:
    # hand-evaluated: [0, 10) and [4, 6) cut by [3, 5): [0, 3), [5, 10), [5, 6)
    s, e, idx = clip_outside(np.array([0, 4]), np.array([10, 6]), 3, 5)
    assert (s.tolist(), e.tolist(), idx.tolist()) == ([0, 5, 5], [3, 10, 6], [0, 0, 1])
    # coverage [2, 4) and [6, 8) over the survey [0, 10): gaps [0,2), [4,6), [8,10)
    assert coverage_gaps(np.array([2, 6]), np.array([4, 8]), 0, 10) == [(0, 2), (4, 6),
                                                                         (8, 10)]
    assert coverage_gaps(np.array([0]), np.array([10]), 0, 10) == []


def test_weather_csv_in_local_time_of_the_settings_time_zone(tmp_path: Path) -> None:
    # Settings: site in Europe/Berlin, clock not given (local). A weather CSV has no
    # Survey sheet, so its times are local Berlin time too (the same rule as a CSV log):
    # wind 8 m/s in the 09:00 row excludes the reading that starts at 09:00 local. Berlin
    # is UTC+02:00 on 1 June 2026 (summer time, from memory); reading the CSV as UTC
    # would exclude the 11:00 local reading instead.
    from dataclasses import replace

    settings = Settings()
    settings = replace(settings, survey=replace(settings.survey, time_zone="Europe/Berlin"))
    csv = tmp_path / "station.csv"
    csv.write_text("Start,Wind speed (m/s),Rain (mm)\n" + "".join(
        f"2026-06-01 {h:02d}:00,{8.0 if h == 9 else 2.0},0\n" for h in range(3, 24)))
    south = survey_workbook(tmp_path / "south.xlsx", position="South",
                            time_zone="Europe/Berlin",
                            start=datetime(2026, 6, 1, 3, 0), levels=[60.0] * 12)
    doc, _ = build_document(south, settings, weather=read_weather_file(csv, settings))
    assert wind_rows(doc) == [(8, 8)]  # 09:00 local = 03:00 + 6 h -> reading 7 -> row 8
    (source,) = codes(doc, "weather-source")
    assert "Europe/Berlin" in source
