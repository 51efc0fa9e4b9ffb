"""Timestamps to UTC: strict ISO text, clocks, DST by row order, modal steps.

Outside references: Python's ``datetime``/``zoneinfo`` (PEP 495 ``fold`` for the repeated
hour, PEP 615 IANA zones) and the IANA tz database rules for Europe/Berlin (EU summer time:
last Sunday of March 01:00 UTC forward, last Sunday of October 01:00 UTC back).
"""

from datetime import UTC, datetime, timedelta
from zoneinfo import ZoneInfo

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st
from validation_builders import build, canon, dt_col, located, readings, survey_with, text_col

from surveytools.validation import timebase as tb

BERLIN = ZoneInfo("Europe/Berlin")


def utc_ms(*args: int, tzinfo=UTC, fold: int = 0) -> int:
    """Reference: stdlib datetime -> epoch ms."""
    return round(datetime(*args, tzinfo=tzinfo, fold=fold).timestamp() * 1000)


# --------------------------------------------------------------------------------------
# strict ISO 8601 text
# --------------------------------------------------------------------------------------

ISO_CASES = [
    ("2026-07-03T22:00:00", utc_ms(2026, 7, 3, 22), False, 0),
    ("2026-07-03 22:00:00", utc_ms(2026, 7, 3, 22), False, 0),
    ("2026-07-03 22:00", utc_ms(2026, 7, 3, 22), False, 0),
    ("2026-07-03 22:00:00.125", utc_ms(2026, 7, 3, 22) + 125, False, 0),
    # hand-evaluated: .1234 s rounds to 123 ms; .9996 s to 1000 ms (next second)
    ("2026-07-03 22:00:00.1234", utc_ms(2026, 7, 3, 22) + 123, False, 0),
    ("2026-07-03 22:00:59.9996", utc_ms(2026, 7, 3, 22, 1), False, 0),
    ("2026-07-03T22:00:00Z", utc_ms(2026, 7, 3, 22), True, 0),
    ("2026-07-03T22:00:00+02:00", utc_ms(2026, 7, 3, 22), True, 7200),
    ("2026-07-03T22:00:00-0330", utc_ms(2026, 7, 3, 22), True, -12600),
]


@pytest.mark.parametrize(("text", "naive_ms", "has_offset", "offset_s"), ISO_CASES)
def test_iso_text_parses_strictly(text, naive_ms, has_offset, offset_s):
    ms, ok, has_off, off = tb.parse_iso_text(pd.Series([text]))
    assert ok.tolist() == [True]
    assert int(ms[0]) == naive_ms
    assert (bool(has_off[0]), int(off[0])) == (has_offset, offset_s)


@pytest.mark.parametrize("text", [
    "03/07/2026 22:00",        # day-first text is never guessed (reliability.md §4)
    "2026-02-30 10:00",        # no 30 February (Gregorian calendar)
    "2026-07-03 24:00",        # hour 24 not accepted
    "2026-07-03 22:60",
    "2026-13-01 10:00",
    "22:00:00",
    "yesterday",
])
def test_iso_text_rejects(text):
    _, ok, _, _ = tb.parse_iso_text(pd.Series([text]))
    assert ok.tolist() == [False]


def test_explicit_offset_overrides_clock():
    # 22:00+02:00 is 20:00 UTC whatever the Survey clock says
    t = readings(["2026-07-03 21:00:00", None], [50.0, 51.0])
    t.columns[0].text_cells = {1: "2026-07-03T22:00:00+02:00"}
    s = build(t, survey_with(clock="UTC+05:00", time_zone="Europe/Berlin"))
    assert s.readings["start_ms"].tolist() == [utc_ms(2026, 7, 3, 16), utc_ms(2026, 7, 3, 20)]
    # offset_s is the site's civil time (Europe/Berlin, CEST in July; design.md §9)
    assert s.readings["offset_s"].tolist() == [7200, 7200]


# --------------------------------------------------------------------------------------
# clocks
# --------------------------------------------------------------------------------------


def test_parse_clock_forms():
    assert tb.parse_clock("UTC", "Europe/Berlin") == tb.Clock("utc")
    assert tb.parse_clock("UTC+01:00", "Europe/Berlin") == tb.Clock("fixed", 3600)
    assert tb.parse_clock("UTC-03:30", "UTC") == tb.Clock("fixed", -12600)
    assert tb.parse_clock("local", "UTC") == tb.Clock("utc")
    assert tb.parse_clock("local", "UTC+02:00") == tb.Clock("fixed", 7200)
    assert tb.parse_clock("local", "Europe/Berlin") == tb.Clock("local", 0, "Europe/Berlin")
    with pytest.raises(ValueError, match="unknown time zone"):
        tb.parse_clock("local", "Nowhere/Invented")
    with pytest.raises(ValueError, match="clock must be"):
        tb.parse_clock("summer", "UTC")


@pytest.mark.parametrize(("clock", "offset_s"), [("UTC", 0), ("UTC+01:00", 3600),
                                                 ("UTC-05:00", -18000)])
def test_fixed_offset_and_utc_clocks(clock, offset_s):
    s = build(readings(["2026-01-10 12:00", "2026-07-10 12:00"], [50.0, 50.0]),
              survey_with(clock=clock, time_zone="Europe/Berlin"))
    # a fixed clock ignores the zone's summer time: both rows have the same offset
    fixed = ZoneInfo("UTC") if offset_s == 0 else None
    ref = [utc_ms(2026, 1, 10, 12) - offset_s * 1000, utc_ms(2026, 7, 10, 12) - offset_s * 1000]
    assert fixed is None or ref[0] == utc_ms(2026, 1, 10, 12, tzinfo=fixed)
    assert s.readings["start_ms"].tolist() == ref
    # local times shown follow the site (Europe/Berlin: CET in January, CEST in July),
    # not the meter's clock (design.md §9; zone rules from the IANA tz database)
    assert s.readings["offset_s"].tolist() == [3600, 7200]


# --------------------------------------------------------------------------------------
# daylight saving on a local clock
# --------------------------------------------------------------------------------------


def autumn_day_rows() -> tuple[list[str], list[int]]:
    """10-min wall-clock rows of 2026-10-25 in Berlin, 02:00-02:50 written twice.

    Reference instants from zoneinfo with fold=0 (first pass) / fold=1 (second pass).
    """
    texts, ref = [], []
    for h in range(24):
        for fold in (0, 1) if h == 2 else (0,):
            for m in range(0, 60, 10):
                texts.append(f"2026-10-25 {h:02d}:{m:02d}:00")
                ref.append(utc_ms(2026, 10, 25, h, m, tzinfo=BERLIN, fold=fold))
    return texts, ref


def test_dst_autumn_repeated_hour_placed_by_order():
    texts, ref = autumn_day_rows()
    s = build(readings(texts, [50.0] * len(texts)),
              survey_with(clock="local", time_zone="Europe/Berlin"))
    starts = s.readings["start_ms"].to_numpy()
    assert len(s.readings) == 150 and s.unplaced.empty           # all readings kept
    assert starts.tolist() == ref                                 # zoneinfo fold reference
    assert np.all(np.diff(starts) > 0)                            # strictly increasing
    # 25-hour day: hand-evaluated 150 readings x 600 s = 90,000 s = 25 h
    assert int(s.readings["duration_ms"].sum()) == 25 * 3600 * 1000
    assert (s.readings["duration_ms"] == 600_000).all()
    assert set(s.readings["offset_s"]) == {7200, 3600}
    assert located(s) == [("Readings", None, None, "dst-policy-applied")]
    assert "2026-10-25" in s.findings[0].message


def test_dst_autumn_one_pass_only_uses_earlier_offset_with_warning():
    texts = [f"2026-10-25 01:{m}0" for m in range(6)] + [f"2026-10-25 02:{m}0" for m in range(6)]
    s = build(readings(texts, [50.0] * 12), survey_with(clock="local", time_zone="Europe/Berlin"))
    # earlier offset = summer time (fold=0)
    assert s.readings["start_ms"].tolist()[6:] == [
        utc_ms(2026, 10, 25, 2, m, tzinfo=BERLIN, fold=0) for m in range(0, 60, 10)]
    assert canon(located(s)) == canon(
        [("Readings", r, "A", "timestamp-ambiguous") for r in range(8, 14)])


def test_dst_autumn_out_of_order_cannot_be_placed():
    # the repeated hour jumps back twice: not the forward-back-forward pattern
    texts = ["2026-10-25 02:00", "2026-10-25 02:30", "2026-10-25 02:10", "2026-10-25 02:40",
             "2026-10-25 02:20"]
    s = build(readings(texts, [50.0] * 5), survey_with(clock="local", time_zone="Europe/Berlin"))
    codes = {c for *_, c in located(s)}
    assert "timestamp-ambiguous" in codes
    assert sorted(r for _, r, _, c in located(s) if c == "timestamp-ambiguous") == [2, 3, 4, 5, 6]


def test_dst_spring_23_hour_day_and_nonexistent_time():
    texts = [f"2026-03-29 {h:02d}:{m:02d}" for h in range(24) if h != 2 for m in range(0, 60, 10)]
    texts.insert(15, "2026-03-29 02:30")  # after 01:50 (row 16): a time that does not exist
    s = build(readings(texts, [50.0] * len(texts)),
              survey_with(clock="local", time_zone="Europe/Berlin"))
    assert len(s.readings) == 138
    # hand-evaluated: 138 readings x 600 s = 82,800 s = 23 h
    assert int(s.readings["duration_ms"].sum()) == 23 * 3600 * 1000
    assert s.readings["start_ms"].tolist() == [
        utc_ms(2026, 3, 29, h, m, tzinfo=BERLIN) for h in range(24) if h != 2
        for m in range(0, 60, 10)]
    assert canon(located(s)) == canon([("Readings", None, None, "dst-policy-applied"),
                                       ("Readings", 17, "A", "timestamp-nonexistent")])
    assert s.unplaced[["row", "reason"]].values.tolist() == [[17, "timestamp-nonexistent"]]


# --------------------------------------------------------------------------------------
# other timestamp sources and steps
# --------------------------------------------------------------------------------------


def test_iso_text_and_datetime_cells_agree():
    starts = ["2026-07-03 22:00:00", "2026-07-03 22:15:00", "2026-07-03 22:30:00"]
    a = build(readings(starts, [50.0, 51.0, 52.0]))
    t = readings(starts, [50.0, 51.0, 52.0])
    t.columns[0] = text_col("Start", "A", [s.replace(" ", "T") for s in starts])
    b = build(t)
    ref = [utc_ms(2026, 7, 3, 22, m) for m in (0, 15, 30)]
    assert a.readings["start_ms"].tolist() == ref == b.readings["start_ms"].tolist()
    assert a.readings["duration_ms"].tolist() == [900_000] * 3   # modal step 15 min
    assert a.findings == b.findings == []


@pytest.mark.parametrize("step_ms", [100, 125])
def test_sub_second_steps_exact(step_ms):
    t0 = datetime(2026, 7, 3, 23, 59, 59)
    texts = [(t0 + timedelta(milliseconds=step_ms * i)).isoformat(sep=" ", timespec="milliseconds")
             for i in range(40)]
    t = readings(texts, [50.0] * 40)
    t.columns[0] = text_col("Start", "A", texts)
    s = build(t)
    base = utc_ms(2026, 7, 3, 23, 59, 59)
    assert s.readings["start_ms"].tolist() == [base + step_ms * i for i in range(40)]
    assert s.readings["duration_ms"].tolist() == [step_ms] * 40
    assert s.findings == []


def test_date_and_time_columns():
    date = dt_col("Date", "A", ["2026-07-03", "2026-07-03", "2026-07-04"])
    time = text_col("Time", "B", ["23:00:00", "23:30", None])
    time.values = pd.Series(["23:00:00", "23:30", None], dtype=object)
    from validation_builders import num_col, table
    # Excel's own time value: a fraction of a day (0.5 = 12:00) - the spreadsheet convention
    t3 = table("Readings", [date, time, num_col("LAeq", "C", [50.0, 51.0, 52.0])])
    s = build(t3)
    assert s.readings["start_ms"].tolist()[:2] == [utc_ms(2026, 7, 3, 23),
                                                   utc_ms(2026, 7, 3, 23, 30)]
    assert canon(located(s)) == canon([("Readings", 4, "B", "timestamp-invalid")])
    frac = num_col("Time", "B", [0.5, 0.75, 0.0])
    s2 = build(table("Readings", [date, frac, num_col("LAeq", "C", [50.0, 51.0, 52.0])]))
    assert s2.readings["start_ms"].tolist() == [utc_ms(2026, 7, 3, 12), utc_ms(2026, 7, 3, 18),
                                                utc_ms(2026, 7, 4, 0)]


def test_end_timestamps():
    from validation_builders import num_col, table

    from surveytools.settings import Settings, SurveyDefaults

    ends = dt_col("End", "A", ["2026-07-03 22:15", "2026-07-03 22:30", "2026-07-03 22:45"])
    dur = num_col("Duration (s)", "C", [900.0, 900.0, 600.0])
    t = table("Readings", [ends, num_col("LAeq", "B", [50.0, 51.0, 52.0]), dur])
    s = build(t, settings=Settings(survey=SurveyDefaults(timestamps="end")))
    # hand-evaluated: start = end - duration
    assert s.readings["start_ms"].tolist() == [utc_ms(2026, 7, 3, 22), utc_ms(2026, 7, 3, 22, 15),
                                               utc_ms(2026, 7, 3, 22, 35)]
    assert s.readings["duration_ms"].tolist() == [900_000, 900_000, 600_000]
    assert located(s) == []


def test_modal_step_ties_take_the_shortest():
    # steps 10, 10, 20, 20 (ms): a tie, the shorter wins
    assert tb.modal_step_ms(np.array([0, 10, 20, 40, 60], np.int64)) == 10
    assert tb.modal_step_ms(np.array([5], np.int64)) is None


def test_dst_autumn_hourly_log_repeats_the_same_wall_time():
    # hourly rows: 02:00 is written twice, once per pass (no backward jump, a repeat)
    texts = ["2026-10-25 01:00", "2026-10-25 02:00", "2026-10-25 02:00", "2026-10-25 03:00"]
    s = build(readings(texts, [50.0] * 4), survey_with(clock="local", time_zone="Europe/Berlin"))
    assert s.readings["start_ms"].tolist() == [
        utc_ms(2026, 10, 25, 1, tzinfo=BERLIN), utc_ms(2026, 10, 25, 2, tzinfo=BERLIN, fold=0),
        utc_ms(2026, 10, 25, 2, tzinfo=BERLIN, fold=1), utc_ms(2026, 10, 25, 3, tzinfo=BERLIN)]
    assert located(s) == [("Readings", None, None, "dst-policy-applied")]


def test_time_only_cells():
    from validation_builders import num_col, table
    # the reader puts a time-only Excel cell on the spreadsheet's day 0 (1899-12-31)
    date = dt_col("Date", "A", ["2026-07-03", "2026-07-03"])
    time = dt_col("Time", "B", ["1899-12-31 22:00:00", "1899-12-31 22:15:00.125"])
    s = build(table("Readings", [date, time, num_col("LAeq", "C", [50.0, 51.0])]))
    assert s.readings["start_ms"].tolist() == [utc_ms(2026, 7, 3, 22),
                                               utc_ms(2026, 7, 3, 22, 15) + 125]
    # ... but in a Start column a time without a date cannot be placed
    t = readings(["2026-07-03 22:00", "2026-07-03 22:01", "1899-12-31 22:02"], [50.0] * 3)
    s2 = build(t)
    assert located(s2) == [("Readings", 4, "A", "timestamp-invalid")]
    assert "time of day without a date" in s2.findings[0].message
    assert s2.unplaced["row"].tolist() == [4]


def test_number_in_start_column_is_not_guessed():
    from validation_builders import num_col, table
    t = table("Readings", [num_col("Start", "A", [46206.9, 46207.0]),
                           num_col("LAeq", "B", [50.0, 51.0])])
    s = build(t)
    assert canon(located(s)) == canon([("Readings", 2, "A", "timestamp-invalid"),
                                       ("Readings", 3, "A", "timestamp-invalid")])
    assert s.readings.empty and len(s.unplaced) == 2


@given(st.lists(st.integers(min_value=0, max_value=50), min_size=0, max_size=60),
       st.booleans())
def test_modal_step_matches_a_counter_reference(gaps, shuffle):
    # Reference: collections.Counter over the positive steps between sorted distinct
    # instants, most common first, ties to the shortest (the documented rule).
    from collections import Counter

    instants = np.cumsum(np.asarray([0, *gaps], dtype=np.int64) * 100)
    if shuffle:
        instants = instants[::-1].copy()
    ordered = np.sort(instants)
    steps = [int(x) for x in np.diff(ordered) if x > 0]
    if not steps:
        assert tb.modal_step_ms(instants) is None
        return
    counts = Counter(steps)
    top = max(counts.values())
    assert tb.modal_step_ms(instants) == min(s for s, c in counts.items() if c == top)


def test_a_number_in_a_time_column_is_quoted_as_written():
    # 1 (an integer column, read as 1.0) is quoted as 1; 45000.5 as it is
    from surveytools.inputs.raw import RawColumn

    col = RawColumn("Start", "A", "number", pd.Series([1.0, 45000.5, np.nan]))
    naive = tb.column_datetimes(col, 3)
    assert naive.raw[0] == "1" and naive.raw[1] == "45000.5"
    assert not naive.ok[:2].any() and naive.empty[2]
