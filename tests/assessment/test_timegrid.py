"""The site's civil time: zone choice, wall-clock boundaries on DST days, ISO text."""

from __future__ import annotations

from datetime import date, datetime
from zoneinfo import ZoneInfo

import numpy as np
import pytest

from surveytools.assessment.timegrid import (
    day_offset_boundaries,
    format_local,
    local_text_to_utc_ms,
    site_tz,
)
from surveytools.errors import SettingsError

BERLIN = ZoneInfo("Europe/Berlin")


def test_site_tz_follows_the_time_zone_whatever_the_clock() -> None:
    # design.md §9: Time zone is where the site is; Clock is how the meter stamped.
    for clock in ("UTC", "UTC+00:00", "UTC+05:30", "local"):
        assert site_tz({"clock": clock, "time_zone": "Europe/Berlin"}) == BERLIN
    assert site_tz({"clock": "UTC", "time_zone": "UTC"}).utcoffset(None).total_seconds() == 0
    fixed = site_tz({"clock": "local", "time_zone": "UTC+05:30"})
    assert fixed.utcoffset(None).total_seconds() == 5.5 * 3600
    # no time zone at all (validation warns and fills one): a fixed clock's offset, else UTC
    assert site_tz({"clock": "UTC+05:30"}).utcoffset(None).total_seconds() == 5.5 * 3600
    assert site_tz({"clock": "local"}).utcoffset(None).total_seconds() == 0
    with pytest.raises(SettingsError, match="not an IANA zone"):
        site_tz({"clock": "local", "time_zone": "Mars/Olympus"})


def test_format_local_offsets_and_milliseconds() -> None:
    # 2026-06-10 10:00 UTC = 12:00 CEST (+02:00); 2026-01-10 10:00 UTC = 11:00 CET.
    summer = int(datetime(2026, 6, 10, 10, 0, tzinfo=ZoneInfo("UTC")).timestamp() * 1000)
    winter = int(datetime(2026, 1, 10, 10, 0, tzinfo=ZoneInfo("UTC")).timestamp() * 1000)
    assert format_local(np.array([summer, summer + 100, winter]), BERLIN) == [
        "2026-06-10T12:00:00+02:00", "2026-06-10T12:00:00.100+02:00",
        "2026-01-10T11:00:00+01:00"]


def test_dst_boundaries_real_lengths() -> None:
    # Lden scheme days 2026-10-24 and 2026-03-28 in Berlin: night lengths 9 h and 7 h
    # (EU summer time ends/starts at 01:00 UTC on the last Sunday of Oct/Mar).
    for day, night_h in ((date(2026, 10, 24), 9), (date(2026, 3, 28), 7)):
        bounds = day_offset_boundaries([day], ["07:00", "19:00", "23:00"], BERLIN)
        assert np.diff(bounds).tolist() == [12 * 3600_000, 4 * 3600_000, night_h * 3600_000]


def test_window_text() -> None:
    expected = int(datetime(2026, 7, 3, 22, 0, tzinfo=BERLIN).timestamp() * 1000)
    assert local_text_to_utc_ms("2026-07-03 22:00", BERLIN) == expected
    with pytest.raises(SettingsError, match="is not a date and time"):
        local_text_to_utc_ms("tomorrow", BERLIN)
