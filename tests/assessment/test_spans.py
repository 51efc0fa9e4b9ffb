"""Exclusion spans, coverage, survey section and reading annotations."""

from __future__ import annotations

from conftest import build_survey, local_ms

from surveytools.assessment import assess, reading_annotations
from surveytools.settings import Settings


def test_exclusion_spans_run_length() -> None:
    t = local_ms("2026-06-10 10:00")
    mask = [False, True, True, False, True, False]
    survey = build_survey([t + 600_000 * k for k in range(6)], 600, {"LAeq": [50.0] * 6},
                          exclusions=[("wind", "all", mask)])
    spans = assess(survey, Settings())["exclusion_spans"]
    assert spans == [
        {"from": "2026-06-10T10:10:00+02:00", "to": "2026-06-10T10:30:00+02:00",
         "first_row": 3, "last_row": 4, "rows": 2, "reason": "wind", "scope": "all",
         "label": "wind label"},
        {"from": "2026-06-10T10:40:00+02:00", "to": "2026-06-10T10:50:00+02:00",
         "first_row": 6, "last_row": 6, "rows": 1, "reason": "wind", "scope": "all",
         "label": "wind label"},
    ]


def test_coverage_and_survey_section() -> None:
    t = local_ms("2026-06-10 10:00")
    survey = build_survey([t, t + 60_000, t + 120_000], [60, 60, 120], {"LAeq": [50.0] * 3},
                          metadata={"calibration_before_db": 93.8, "calibration_after_db": 94.1})
    result = assess(survey, Settings())
    cov = result["coverage"]
    assert cov["first"] == "2026-06-10T10:00:00+02:00"
    assert cov["last"] == "2026-06-10T10:04:00+02:00"
    assert cov["logging_interval_s"] == 60.0  # modal duration
    assert result["survey"]["calibration_drift_db"] == 0.3  # 94.1 - 93.8
    assert result["survey"]["level_columns"] == {"LAeq": "B"}


def test_reading_annotations() -> None:
    t = local_ms("2026-06-10 10:00") + 250
    survey = build_survey([t, t + 1000], 1, {"LAeq": [50.0, 51.0]},
                          exclusions=[("rain", "all", [False, True]),
                                      ("technician", "background", [False, True])])
    table = reading_annotations(survey)
    assert table["row"].tolist() == [2, 3]
    assert table["start"].tolist() == ["2026-06-10T10:00:00.250+02:00",
                                       "2026-06-10T10:00:01.250+02:00"]
    assert table["reason"].tolist() == ["", "rain; technician (background only)"]
    assert table["duration_s"].tolist() == [1.0, 1.0]


def test_reading_annotations_keep_every_level_column_read() -> None:
    # The Readings sheet of the workbook must let a person check each row against the
    # input: every level column read is carried, unchanged, beside the exclusion reason.
    t = local_ms("2026-06-10 10:00")
    survey = build_survey([t, t + 1000], 1, {"LAeq": [50.0, 51.25], "LAFmax": [60.5, 62.0]},
                          exclusions=[("rain", "all", [False, True])])
    table = reading_annotations(survey)
    assert list(table.columns)[:3] == ["row", "start", "duration_s"]
    assert list(table.columns)[-1] == "reason"
    assert table["LAeq"].tolist() == [50.0, 51.25]
    assert table["LAFmax"].tolist() == [60.5, 62.0]
    assert "LAeq" not in reading_annotations(survey, with_levels=False).columns
