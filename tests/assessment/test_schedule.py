"""Schedules: day lists, windows across midnight, holidays and DST, judged intervals."""

from __future__ import annotations

from datetime import date
from zoneinfo import ZoneInfo

import numpy as np
import pytest
from conftest import local_ms

from surveytools.assessment.schedule import (
    parse_days,
    parse_holidays,
    parse_schedule,
    window_spans,
    within_schedule,
)

BERLIN = ZoneInfo("Europe/Berlin")
HOUR_MS = 3_600_000

WORKING_HOURS = parse_schedule([{"days": "Mon-Fri", "from": "07:00", "to": "19:00"},
                                {"days": "Sat", "from": "08:00", "to": "13:00"}])


@pytest.mark.parametrize(("text", "expected"), [
    ("Mon-Fri", {0, 1, 2, 3, 4}),
    ("Sat", {5}),
    ("sat, SUN", {5, 6}),
    ("Mon,Wed-Thu", {0, 2, 3}),
    ("Fri-Mon", {4, 5, 6, 0}),          # a range wraps through the weekend
    ("Sunday", {6}),
])
def test_day_lists(text: str, expected: set[int]) -> None:
    # hand-evaluated: ISO 8601 weekday order, Monday = 0 ... Sunday = 6
    assert parse_days(text) == frozenset(expected)


@pytest.mark.parametrize("text", ["", "Mon-", "Funday", "Mon--Fri", "Mon,,Tue"])
def test_bad_day_lists_are_refused(text: str) -> None:
    with pytest.raises(ValueError):
        parse_days(text)


@pytest.mark.parametrize(("entries", "phrase"), [
    ([{"days": "Mon", "from": "7:00"}], "[1].missing 'to'"),
    ([{"days": "Mon", "from": "25:00", "to": "07:00"}], "[1].from:"),
    ([{"days": "Mon", "from": "07:00", "to": "19:00"},
      {"days": "Xyz", "from": "07:00", "to": "19:00"}], "[2].days:"),
    ([{"days": "Mon", "from": "07:00", "to": "19:00", "until": "x"}], "unknown key 'until'"),
    ([], "at least one window"),
])
def test_bad_schedules_name_the_key(entries: list[dict[str, str]], phrase: str) -> None:
    with pytest.raises(ValueError) as info:
        parse_schedule(entries)
    assert phrase in str(info.value)


def test_a_week_with_a_holiday() -> None:
    # Hand-evaluated, Europe/Berlin in December (UTC+01:00 all week): hourly intervals from
    # Mon 2026-12-21 00:00 to Sun 2026-12-27 24:00. Mon-Thu: 07:00-19:00 -> 12 each (48);
    # Fri 2026-12-25 is a holiday -> counts as Sunday -> none; Sat 26th (a holiday too, but
    # a Saturday window does not apply to a Sunday) -> none; Sun -> none.
    holidays = parse_holidays(["2026-12-25", "2026-12-26"])
    starts = local_ms("2026-12-21 00:00") + HOUR_MS * np.arange(7 * 24)
    judged = within_schedule(starts, starts + HOUR_MS, WORKING_HOURS, BERLIN, holidays)
    per_day = judged.reshape(7, 24)
    assert per_day.sum(axis=1).tolist() == [12, 12, 12, 12, 0, 0, 0]
    assert np.flatnonzero(per_day[0]).tolist() == list(range(7, 19))
    # Without holidays: Friday 12 and Saturday 08:00-13:00 -> 5, Sunday still none.
    plain = within_schedule(starts, starts + HOUR_MS, WORKING_HOURS, BERLIN).reshape(7, 24)
    assert plain.sum(axis=1).tolist() == [12, 12, 12, 12, 12, 5, 0]
    assert np.flatnonzero(plain[5]).tolist() == [8, 9, 10, 11, 12]


def test_only_intervals_wholly_inside_are_judged() -> None:
    # hand-evaluated: 15-min intervals from Mon 06:45; 06:45-07:00 is outside, 07:00-07:15
    # inside; an hour 06:30-07:30 straddles 07:00 and is not judged.
    t = local_ms("2026-12-21 06:45")
    q = HOUR_MS // 4
    starts = np.array([t, t + q, t - q])
    ends = np.array([t + q, t + 2 * q, t - q + HOUR_MS])
    assert within_schedule(starts, ends, WORKING_HOURS, BERLIN).tolist() == [False, True, False]


def test_window_across_midnight_belongs_to_its_start_day() -> None:
    # Fri 23:00-07:00 runs Fri 23:00 to Sat 07:00; Thursday night (starting Thu) is not in it.
    night = parse_schedule([{"days": "Fri", "from": "23:00", "to": "07:00"}])
    starts = local_ms("2026-12-24 00:00") + HOUR_MS * np.arange(4 * 24)  # Thu .. Sun
    judged = within_schedule(starts, starts + HOUR_MS, night, BERLIN)
    hours = [h for h in np.flatnonzero(judged).tolist()]
    # Fri is day index 1 -> hours 24+23 = 47; Sat 00:00-07:00 -> 48..54
    assert hours == [47, *range(48, 55)]
    # the Friday window as one span: 8 h from Fri 23:00 local
    s, e = window_spans(night, [date(2026, 12, 25)], BERLIN)
    assert (s.tolist(), e.tolist()) == ([local_ms("2026-12-25 23:00")],
                                        [local_ms("2026-12-26 07:00")])


def test_window_keeps_wall_clock_bounds_across_dst_changes() -> None:
    # Europe/Berlin: 2026-03-29 02:00 CET -> 03:00 CEST, 2026-10-25 03:00 CEST -> 02:00 CET
    # (EU summer time, last Sunday of March / October). Hand-evaluated: Sun 00:00-06:00 lasts
    # 5 h in March and 7 h in October, so 5 and 7 hourly intervals are judged.
    early = parse_schedule([{"days": "Sun", "from": "00:00", "to": "06:00"}])
    for day, hours in (("2026-03-29", 5), ("2026-10-25", 7)):
        start = local_ms(f"{day} 00:00")
        starts = start + HOUR_MS * np.arange(10)
        judged = within_schedule(starts, starts + HOUR_MS, early, BERLIN)
        assert judged.tolist() == [True] * hours + [False] * (10 - hours)


def test_touching_windows_merge() -> None:
    # Sat 22:00-00:00 and Sun 00:00-06:00 touch at midnight: an hour 23:30-00:30 lies wholly
    # inside their union (hand-evaluated), and a whole day window (from == to) is 24 h.
    windows = parse_schedule([{"days": "Sat", "from": "22:00", "to": "00:00"},
                              {"days": "Sun", "from": "00:00", "to": "06:00"}])
    t = local_ms("2026-12-26 23:30")
    assert within_schedule([t], [t + HOUR_MS], windows, BERLIN).tolist() == [True]
    whole = parse_schedule([{"days": "Sun", "from": "00:00", "to": "00:00"}])
    s, e = window_spans(whole, [date(2026, 12, 27)], BERLIN)
    assert (e - s).tolist() == [24 * HOUR_MS]


def test_holiday_list_is_checked() -> None:
    assert parse_holidays(["2026-12-26", "2026-12-25", "2026-12-25"]) == (
        date(2026, 12, 25), date(2026, 12, 26))
    with pytest.raises(ValueError, match=r"\[2\]"):
        parse_holidays(["2026-12-25", "25/12/2026"])
