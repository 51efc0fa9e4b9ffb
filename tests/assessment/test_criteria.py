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
    assert c["failures"] == [{"when": "2026-06-11", "value": 58.0, "sufficient": True}]


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
