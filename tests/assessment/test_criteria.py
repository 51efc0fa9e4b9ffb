"""Criteria: pass/fail counts per day, interval and assessment."""

from __future__ import annotations

import pytest
from conftest import build_survey, local_ms

from surveytools.assessment import assess
from surveytools.errors import SettingsError
from surveytools.settings import Criterion, Settings

HOUR_MS = 3600_000


def two_days():
    # Day 1 daytime at 52 dB, day 2 daytime at 58 dB (12 hourly readings each, 07-19).
    a, b = local_ms("2026-06-10 07:00"), local_ms("2026-06-11 07:00")
    starts = [a + h * HOUR_MS for h in range(12)] + [b + h * HOUR_MS for h in range(12)]
    return build_survey(starts, 3600, {"LAeq": [52.0] * 12 + [58.0] * 12,
                                       "LAFmax": [60.0] * 23 + [80.0]})


def test_day_criterion_counts() -> None:
    # WHO 1999 Table 4.1: 55 dB LAeq,16h outdoor living area (serious annoyance), used as
    # a limit on Lday here. Day 1 (52) passes, day 2 (58) fails.
    result = assess(two_days(), Settings(criteria=(Criterion("Lday", 55.0, name="WHO"),)))
    (c,) = result["criteria"]
    assert (c["applies_to"], c["checked"], c["failed"], c["passed"]) == ("day", 2, 1, False)
    assert c["failures"] == [{"when": "2026-06-11", "value": 58.0, "reported": 58.0,
                              "sufficient": True}]
    assert c["highest"] == {"when": "2026-06-11", "value": 58.0, "reported": 58.0,
                            "sufficient": True}


@pytest.mark.parametrize(("level", "fails", "reported"),
                         [(45.04, False, 45.0), (45.049, False, 45.0), (45.0496, False, 45.0),
                          (45.05, True, 45.1), (45.1, True, 45.1)])
def test_a_figure_is_judged_at_its_reported_precision(level: float, fails: bool,
                                                      reported: float) -> None:
    # Common practice: compliance is judged on the figure as reported (0.1 dB, rounded once,
    # half up, from the unrounded level; design.md §9): 45.049 -> 45.0 meets a 45 dB limit
    # (rounding first to 45.05 and then to 45.1 would not), 45.05 -> 45.1 does not.
    t = local_ms("2026-06-10 23:00")
    survey = build_survey([t + h * HOUR_MS for h in range(8)], 3600, {"LAeq": [level] * 8})
    result = assess(survey, Settings(criteria=(Criterion("Lnight", 45.0),)))
    (c,) = result["criteria"]
    assert c["failed"] == (1 if fails else 0)
    assert c["highest"]["reported"] == reported
    # the JSON figure rounds once more to the same reported value
    (day,) = result["days"]
    from surveytools.indicators.reporting import reported_level
    assert reported_level(day["Lnight"]) == reported
    assert day["Lnight"] == pytest.approx(level, abs=0.0005)


def test_laeq_over_one_hour_from_quarter_hours() -> None:
    # An LAeq,1h criterion with 15-min reporting: each hour is the energy average of its four
    # quarters. Hand-evaluated: quarters 50, 50, 50, 62 dB -> 10 lg((3*10^5 + 10^6.2)/4)
    # = 10 lg(1 884 893 / 4) = 56.73 dB > 55 (fails), though only one quarter is above 55.
    t = local_ms("2026-06-10 10:00")
    starts = [t + k * 900_000 for k in range(8)]
    survey = build_survey(starts, 900, {"LAeq": [50.0, 50.0, 50.0, 62.0] + [50.0] * 4})
    crit = Criterion("LAeq", 55.0, period="day", interval_s=3600.0, name="LAeq,1h day")
    (c,) = assess(survey, Settings(criteria=(crit,)))["criteria"]
    assert (c["checked"], c["failed"], c["interval_s"]) == (2, 1, 3600.0)
    (failure,) = c["failures"]
    assert failure["when"].startswith("2026-06-10T10:00:00")
    assert failure["value"] == pytest.approx(56.73, abs=0.005)
    assert failure["reported"] == 56.7  # hand-evaluated 56.7348 -> 56.7


def test_longer_interval_must_be_a_multiple_of_the_reporting_interval() -> None:
    crit = Criterion("LAeq", 55.0, interval_s=1000.0, name="odd")
    with pytest.raises(SettingsError, match="whole multiple of the reporting interval"):
        assess(two_days(), Settings(criteria=(crit,)))


def test_percentile_criteria_cannot_use_a_longer_interval() -> None:
    crit = Criterion("LA90", 40.0, interval_s=3600.0, name="bg")
    with pytest.raises(SettingsError, match="only LAeq and LAFmax"):
        assess(two_days(), Settings(criteria=(crit,)))


def test_interval_criterion_with_period_filter_and_pass() -> None:
    crit = (Criterion("LAFmax", 75.0, period="day"), Criterion("LAFmax", 75.0, period="night"),
            Criterion("LAeq", 60.0))
    day_max, night_max, laeq = assess(two_days(), Settings(criteria=crit))["criteria"]
    assert day_max["checked"] == 96 and day_max["failed"] == 4  # last hour: 4 x 15 min at 80
    assert night_max["checked"] == 0 and night_max["passed"] is None
    assert laeq["failed"] == 0 and laeq["passed"] is True


def test_unknown_indicator_raises() -> None:
    with pytest.raises(SettingsError, match="unknown indicator 'Lfoo'"):
        assess(two_days(), Settings(criteria=(Criterion("Lfoo", 55.0),)))


def test_criterion_for_other_position_skipped() -> None:
    result = assess(two_days(), Settings(criteria=(Criterion("Lday", 55.0, position="X"),)))
    assert result["criteria"] == []
