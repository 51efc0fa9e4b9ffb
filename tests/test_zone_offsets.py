"""Tests of surveytools.zone_offsets (UTC offsets of civil time, one hour at a time).

References: Directive 2000/84/EC (EU summer time from 01:00 UTC on the last Sunday of
March to 01:00 UTC on the last Sunday of October), and Python's own :mod:`zoneinfo`
asked one instant at a time (``datetime.fromtimestamp(t, zone).utcoffset()``).
"""

from __future__ import annotations

from datetime import datetime
from zoneinfo import ZoneInfo

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from surveytools.zone_offsets import utc_offsets_ms

BERLIN = ZoneInfo("Europe/Berlin")


def _zoneinfo_ms(ms: np.ndarray, zone: ZoneInfo) -> np.ndarray:
    out = [datetime.fromtimestamp(int(t) / 1000, zone).utcoffset() for t in ms.tolist()]
    return np.array([int(o.total_seconds() * 1000) for o in out], dtype=np.int64)


def test_eu_summer_time_switches_at_one_utc() -> None:
    # 2026-03-29 and 2026-10-25 are the last Sundays of March and October (Directive
    # 2000/84/EC): +01:00 up to 01:00 UTC, +02:00 from it, and back in October
    spring = int(np.datetime64("2026-03-29T01:00:00", "ms").astype(np.int64))
    autumn = int(np.datetime64("2026-10-25T01:00:00", "ms").astype(np.int64))
    ms = np.array([spring - 1, spring, autumn - 1, autumn], dtype=np.int64)
    assert utc_offsets_ms(ms, BERLIN).tolist() == [3_600_000, 7_200_000, 7_200_000, 3_600_000]


def test_every_second_of_a_day_with_a_switch_matches_zoneinfo() -> None:
    first = int(np.datetime64("2026-10-24T12:00:00", "ms").astype(np.int64))
    ms = first + np.arange(0, 86_400_000, 7_000, dtype=np.int64)
    np.testing.assert_array_equal(utc_offsets_ms(ms, BERLIN), _zoneinfo_ms(ms, BERLIN))


@settings(max_examples=60, deadline=None)
@given(st.lists(st.integers(315_532_800_000, 4_102_444_799_999), min_size=1, max_size=40),
       st.sampled_from(["Europe/Berlin", "America/New_York", "Australia/Lord_Howe",
                        "Asia/Kathmandu", "America/St_Johns", "UTC", "Pacific/Chatham"]))
def test_any_instants_any_order_match_zoneinfo(instants: list[int], name: str) -> None:
    # 1980-01-01 to 2099-12-31 (the instants validation accepts); zones with half-hour
    # summer time (Lord Howe) and quarter-hour offsets (Kathmandu, Chatham)
    zone = ZoneInfo(name)
    ms = np.array(instants, dtype=np.int64)
    np.testing.assert_array_equal(utc_offsets_ms(ms, zone), _zoneinfo_ms(ms, zone))


def test_empty() -> None:
    assert utc_offsets_ms(np.zeros(0, np.int64), BERLIN).size == 0
