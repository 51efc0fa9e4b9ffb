"""Whole-document checks: strict JSON on sparse data, empty survey, a week of 1-s data."""

from __future__ import annotations

import json
import time

import numpy as np
from conftest import build_survey, local_ms

from surveytools.assessment import assess
from surveytools.settings import Assessment, Criterion, Settings

SECTIONS = {"survey", "coverage", "overall", "intervals", "intervals_basis", "days",
            "survey_average", "background", "assessments", "criteria", "exclusion_spans",
            "unplaced", "spectral"}


def test_no_nan_with_empty_periods() -> None:
    # Two short daytime bursts two days apart, one fully excluded, NaN levels mixed in.
    a, b = local_ms("2026-06-10 12:00"), local_ms("2026-06-12 12:00")
    starts = [a, a + 60_000, b, b + 60_000]
    survey = build_survey(starts, 60, {"LAeq": [50.0, float("nan"), 52.0, 53.0],
                                       "LAFmax": [60.0, float("nan"), float("nan"), 70.0]},
                          exclusions=[("rain", "all", [False, False, True, True])])
    settings = Settings(
        assessments=(Assessment(name="A", position="NW-2",
                                source_on=(("2026-06-11 22:00", "2026-06-11 23:00"),)),),
        criteria=(Criterion("Lden", 55.0), Criterion("LA90", 40.0, period="night"),
                  Criterion("rating_level", 40.0)),
    )
    result = assess(survey, settings)
    assert set(result) == SECTIONS
    json.dumps(result, allow_nan=False)
    assert [d["date"] for d in result["days"]] == ["2026-06-10", "2026-06-12"]
    assert result["days"][1]["Lday"] is None  # only excluded readings that day
    assert result["survey_average"]["Lnight"] is None
    assert result["assessments"][0]["LAeq_total"] is None


def test_empty_survey() -> None:
    survey = build_survey([], 60, {"LAeq": []})
    result = assess(survey, Settings())
    json.dumps(result, allow_nan=False)
    assert result["intervals"] == [] and result["days"] == [] and result["overall"] is None


def test_week_of_one_second_readings_runs() -> None:
    # 604,800 1-s readings (a week); no timing assert: the time is printed (pytest -s).
    n = 604_800
    t = local_ms("2026-06-08 00:00")
    rng = np.random.default_rng(7)
    laeq = 45.0 + 10.0 * rng.random(n)
    mask = np.zeros(n, dtype=bool)
    mask[100_000:103_600] = True
    survey = build_survey(t + 1000 * np.arange(n), 1, {"LAeq": laeq, "LAFmax": laeq + 3},
                          exclusions=[("wind", "all", mask)])
    begin = time.perf_counter()
    result = assess(survey, Settings())
    elapsed = time.perf_counter() - begin
    print(f"assess() on {n} 1-s readings: {elapsed:.3f} s")
    assert len(result["intervals"]) == 7 * 96
    assert len(result["days"]) == 8  # Jun 7 (00-07 belongs to the day before) .. Jun 14
    assert result["coverage"]["valid_s"] == n - 3600
