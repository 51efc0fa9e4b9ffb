"""Reporting intervals and overall figures: LN basis rules, exclusions, coverage."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import build_survey, local_ms

from surveytools.assessment import assess
from surveytools.settings import Background, Settings

# standards.md §10: twenty equal-duration samples and their levels.
TWENTY = [45, 47, 52, 48, 46, 60, 58, 49, 47, 46, 45, 44, 50, 55, 62, 48, 47, 46, 45, 44]


def test_ln_from_samples_matches_numpy_weighted_quantile() -> None:
    # 20 one-minute LAeq samples in one 20-min interval (reporting interval 1200 s).
    # design §5: LN = np.quantile(levels, 1 - N/100, weights, method="inverted_cdf")
    # (numpy >= 2 as independent reference); standards.md §10 "strictly exceeded":
    # L10 = 58, L50 = 47, L90 = 44.
    t = local_ms("2026-06-10 10:00")
    survey = build_survey([t + 60_000 * k for k in range(20)], 60, {"LAeq": TWENTY})
    result = assess(survey, Settings(reporting_interval_s=1200))
    (interval,) = result["intervals"]
    for n, published in ((10, 58.0), (50, 47.0), (90, 44.0)):
        reference = np.quantile(np.array(TWENTY, float), 1 - n / 100,
                                weights=np.ones(20), method="inverted_cdf")
        assert interval[f"LA{n}"] == reference == published
    assert result["intervals_basis"] == {"LA10": "samples", "LA50": "samples",
                                         "LA90": "samples", "method": None}
    # standards.md §10: energetic Leq of the same samples 53.44 dB.
    assert interval["LAeq"] == pytest.approx(53.44, abs=0.005)
    assert result["overall"]["LAeq"] == pytest.approx(53.44, abs=0.005)
    assert result["overall"]["LA90"] == 44.0


def test_logged_laf90_same_interval_used_directly() -> None:
    # 15-min log with the meter's own LAF90 = reporting interval: values as logged, no method.
    t = local_ms("2026-06-10 10:00")
    laf90 = [41.3, 42.6, 40.4, 43.5]
    survey = build_survey([t + 900_000 * k for k in range(4)], 900,
                          {"LAeq": [50.0] * 4, "LAF90": laf90})
    result = assess(survey, Settings())
    assert [i["LA90"] for i in result["intervals"]] == laf90
    assert result["intervals_basis"]["LA90"] == "logged"
    assert result["intervals_basis"]["LA10"] == "samples"  # no LAF10 column
    assert result["intervals_basis"]["method"] is None


@pytest.mark.parametrize(
    ("method", "expected"),
    [
        # 1-min logged LAF90 values 40.2, 40.4, 41.6 (x), ... combined per 15-min interval.
        # hand-evaluated: values [40.2]*7 + [41.6]*5 + [44.0]*3:
        # median = 8th of 15 sorted = 41.6; mode of whole dB (40:7, 42:5, 44:3) = 40;
        # mean = (7*40.2 + 5*41.6 + 3*44.0)/15 = (281.4 + 208 + 132)/15 = 41.4267
        ("median", 41.6),
        ("mode", 40.0),
        ("mean", 41.43),
    ],
)
def test_logged_laf90_finer_log_combined_by_method(method: str, expected: float) -> None:
    t = local_ms("2026-06-10 10:00")
    values = [40.2] * 7 + [41.6] * 5 + [44.0] * 3
    survey = build_survey([t + 60_000 * k for k in range(15)], 60,
                          {"LAeq": [50.0] * 15, "LAF90": values})
    result = assess(survey, Settings(background=Background(method=method)))
    assert result["intervals"][0]["LA90"] == pytest.approx(expected, abs=0.005)
    assert result["intervals_basis"]["method"] == method
    assert result["overall"]["basis"]["LA90"] == "logged"


def test_exclusions_carried_into_intervals_and_coverage() -> None:
    # 4 readings of 15 min; the 2nd is wind-excluded, the 3rd rain and wind; the 4th
    # background-only (technician). Valid time for LAeq excludes rows 2 and 3 only.
    t = local_ms("2026-06-10 10:00")
    survey = build_survey(
        [t + 900_000 * k for k in range(4)], 900, {"LAeq": [50.0, 80.0, 80.0, 50.0]},
        exclusions=[("wind", "all", [False, True, True, False]),
                    ("rain", "all", [False, False, True, False]),
                    ("technician", "background", [False, False, False, True])],
    )
    result = assess(survey, Settings())
    intervals = result["intervals"]
    assert [i["excluded"] for i in intervals] == [[], ["wind"], ["rain", "wind"], ["technician"]]
    assert [i["LAeq"] for i in intervals] == [50.0, None, None, 50.0]
    assert [i["sufficient"] for i in intervals] == [True, False, False, True]
    coverage = result["coverage"]
    # a reading excluded by several reasons counts under each
    assert coverage["excluded_s"] == {"rain": 900.0, "technician": 900.0, "wind": 1800.0}
    assert coverage["measured_s"] == 3600.0 and coverage["valid_s"] == 1800.0
    assert result["overall"]["LAeq"] == 50.0


def test_interval_coverage_below_threshold_marked_insufficient() -> None:
    # 10 of 15 one-minute readings present: 600/900 = 0.667 < 0.75 (default threshold).
    t = local_ms("2026-06-10 10:00")
    survey = build_survey([t + 60_000 * k for k in range(10)], 60, {"LAeq": [50.0] * 10})
    (interval,) = assess(survey, Settings())["intervals"]
    assert interval["valid_fraction"] == pytest.approx(600 / 900, abs=1e-4)
    assert interval["sufficient"] is False
    assert interval["LAeq"] == 50.0  # still shown


def test_interval_grid_aligned_to_local_midnight_and_lafmax() -> None:
    # A reading at 10:07 for 16 min crosses 10:15 (grid from local midnight); its LAFmax
    # shows in both intervals it touches; time splits 8 min / 8 min.
    t = local_ms("2026-06-10 10:07")
    survey = build_survey([t], 960, {"LAeq": [50.0], "LAFmax": [71.2]})
    intervals = assess(survey, Settings())["intervals"]
    assert [i["start"] for i in intervals] == ["2026-06-10T10:00:00+02:00",
                                              "2026-06-10T10:15:00+02:00"]
    assert [i["valid_s"] for i in intervals] == [480.0, 480.0]
    assert [i["LAFmax"] for i in intervals] == [71.2, 71.2]
    assert [i["period"] for i in intervals] == ["day", "day"]
