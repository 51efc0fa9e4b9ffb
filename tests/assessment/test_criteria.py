"""Criteria: pass/fail counts per day, interval and assessment."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import build_survey, local_ms
from hypothesis import given
from hypothesis import strategies as st

from surveytools.assessment import assess
from surveytools.errors import SettingsError
from surveytools.settings import Calendar, Criterion, Settings

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


# --- schedules, warning levels and episodes ---------------------------------------------

WORKING_HOURS = ({"days": "Mon-Fri", "from": "07:00", "to": "19:00"},
                 {"days": "Sat", "from": "08:00", "to": "13:00"})


def hourly(first: str, levels: list[float]):
    t = local_ms(first)
    return build_survey([t + h * HOUR_MS for h in range(len(levels))], 3600,
                        {"LAeq": levels})


def test_warning_and_limit_episodes_merge_consecutive_hours() -> None:
    # Hand-evaluated: Mon 2026-12-21 from 07:00, hourly LAeq 68, 71, 76, 72, 69, 74, 70.04,
    # 70.05 dB; limit 75, warning 70 (reported at 0.1 dB half up: 70.04 -> 70.0 is not above
    # 70, 70.05 -> 70.1 is). Above 70: hours 08-11 (71, 76, 72) -> one episode, 3 intervals,
    # max 76.0, above the limit -> "limit"; hour 12 (74) -> "warning"; hour 14 (70.1).
    survey = hourly("2026-12-21 07:00", [68, 71, 76, 72, 69, 74, 70.04, 70.05])
    crit = Criterion("LAeq", 75.0, interval_s=3600.0, name="Working hours", warning_db=70.0,
                     schedule=WORKING_HOURS)
    (c,) = assess(survey, Settings(criteria=(crit,)))["criteria"]
    assert (c["checked"], c["failed"], c["outside_schedule"]) == (8, 1, 0)
    assert c["warning_db"] == 70.0
    assert [(e["start"][11:16], e["end"][11:16], e["intervals"], e["max_db"], e["severity"])
            for e in c["episodes"]] == [("08:00", "11:00", 3, 76.0, "limit"),
                                        ("12:00", "13:00", 1, 74.0, "warning"),
                                        ("14:00", "15:00", 1, 70.1, "warning")]


def test_without_warning_level_episodes_start_at_the_limit() -> None:
    # hand-evaluated: 76 and 77 dB in consecutive hours above a 75 dB limit -> one episode
    survey = hourly("2026-12-21 09:00", [74, 76, 77, 75])
    (c,) = assess(survey, Settings(criteria=(Criterion("LAeq", 75.0, interval_s=3600.0),))
                  )["criteria"]
    assert [(e["start"][11:16], e["intervals"], e["max_db"], e["severity"])
            for e in c["episodes"]] == [("10:00", 2, 77.0, "limit")]


def test_schedule_judges_weekdays_saturday_morning_and_not_sundays_or_holidays() -> None:
    # Hand-evaluated: hourly 80 dB (above a 75 dB limit) from Fri 2026-12-25 00:00 to
    # Mon 2026-12-28 24:00, Europe/Berlin. Fri 25th is a holiday (counts as Sunday): none;
    # Sat 08:00-13:00: 5 hours; Sun: none; Mon 07:00-19:00: 12 hours -> 17 judged, all
    # failing; 96 - 17 = 79 outside the schedule. Saturday's and Monday's runs are separate
    # episodes (not consecutive).
    survey = hourly("2026-12-25 00:00", [80.0] * 96)
    crit = Criterion("LAeq", 75.0, interval_s=3600.0, schedule=WORKING_HOURS)
    settings = Settings(criteria=(crit,), calendar=Calendar(holidays=("2026-12-25",)))
    (c,) = assess(survey, settings)["criteria"]
    assert (c["checked"], c["failed"], c["outside_schedule"]) == (17, 17, 79)
    assert [(e["start"], e["end"], e["intervals"]) for e in c["episodes"]] == [
        ("2026-12-26T08:00:00+01:00", "2026-12-26T13:00:00+01:00", 5),
        ("2026-12-28T07:00:00+01:00", "2026-12-28T19:00:00+01:00", 12)]


def test_day_indicator_schedule_and_consecutive_days() -> None:
    # Lden days run 07:00 to 07:00; consecutive days above the limit form one episode.
    # Hand-evaluated: 3 days of constant 70 dB -> Lden = 70 + 10 lg((12 + 4*10^0.5 +
    # 8*10^1)/24) = 70 + 6.39 = 76.4 dB each (Directive 2002/49/EC Annex I; 12/4/8 h).
    t = local_ms("2026-12-21 07:00")
    survey = build_survey([t + h * HOUR_MS for h in range(72)], 3600, {"LAeq": [70.0] * 72})
    (lden,) = assess(survey, Settings(criteria=(Criterion("Lden", 75.0),)))["criteria"]
    assert [(e["start"], e["end"], e["intervals"], e["max_db"]) for e in lden["episodes"]] == [
        ("2026-12-21T07:00:00+01:00", "2026-12-24T07:00:00+01:00", 3, 76.4)]
    # Lday (07-19) with a Tue-only schedule: only Tuesday's day is judged.
    crit = Criterion("Lday", 65.0, schedule=({"days": "Tue", "from": "07:00", "to": "19:00"},))
    (lday,) = assess(survey, Settings(criteria=(crit,)))["criteria"]
    assert (lday["checked"], lday["outside_schedule"]) == (1, 2)
    assert lday["failures"][0]["when"] == "2026-12-22"


def test_schedule_on_an_assessment_indicator_is_a_settings_error() -> None:
    crit = Criterion("rating_level", 45.0, schedule=WORKING_HOURS, name="rating")
    with pytest.raises(SettingsError, match=r"'rating'.*remove 'schedule'"):
        assess(two_days(), Settings(criteria=(crit,)))


@given(st.lists(st.one_of(st.none(), st.floats(60.0, 80.0)), max_size=40),
       st.lists(st.booleans(), min_size=40, max_size=40))
def test_episodes_partition_the_figures_above_the_warning_level(
        values: list[float | None], breaks: list[bool]) -> None:
    # Invariants of the definition (issue contract): every figure whose reported level is
    # above the warning level lies in exactly one episode; an episode's max is the highest
    # reported level in it; severity is "limit" exactly when that max is above the limit.
    from surveytools.assessment.criteria import find_episodes
    from surveytools.indicators.reporting import reported_level

    n = len(values)
    starts = np.cumsum([0] + [HOUR_MS * (2 if b else 1) for b in breaks[: max(n - 1, 0)]])
    starts = np.asarray(starts[:n], dtype=np.int64)
    ends = starts + HOUR_MS
    texts = [str(s) for s in starts.tolist()]
    episodes = find_episodes(starts, ends, texts, [str(e) for e in ends.tolist()], values,
                             75.0, 70.0)
    above = [v is not None and float(reported_level(v)) > 70.0 for v in values]
    assert sum(e["intervals"] for e in episodes) == sum(above)
    # maximal runs: a run starts at a figure above whose predecessor is not above or not
    # adjacent (a break of one hour between them)
    runs = sum(1 for i in range(n)
               if above[i] and not (i > 0 and above[i - 1] and not breaks[i - 1]))
    assert len(episodes) == runs
    for e in episodes:
        first = texts.index(e["start"])
        members = values[first: first + e["intervals"]]
        assert all(a for a in above[first: first + e["intervals"]])
        top = max(float(reported_level(v)) for v in members if v is not None)
        assert e["max_db"] == top
        assert e["severity"] == ("limit" if top > 75.0 else "warning")
