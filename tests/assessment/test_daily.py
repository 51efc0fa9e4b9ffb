"""Days and survey averages: Lden / Ldn / CNEL / LAeq,16h / 8h, splitting, DST, coverage."""

from __future__ import annotations

import math

import numpy as np
import pytest
from conftest import build_survey, local_ms

from surveytools.assessment import assess
from surveytools.settings import Settings

HOUR_MS = 3600_000


def hourly_day(zone: str = "Europe/Berlin",
               day: str = "2026-06-10") -> tuple[list[int], list[float]]:
    """24 hourly readings from 07:00: 12 h at 60, 4 h at 55, 8 h at 50 dB."""
    t0 = local_ms(f"{day} 07:00", zone)
    return [t0 + h * HOUR_MS for h in range(24)], [60.0] * 12 + [55.0] * 4 + [50.0] * 8


def test_full_day_lden_ldn_cnel_laeq16_8() -> None:
    starts, levels = hourly_day()
    result = assess(build_survey(starts, 3600, {"LAeq": levels}), Settings())
    (day,) = result["days"]
    assert day["date"] == "2026-06-10"
    assert (day["Lday"], day["Levening"], day["Lnight"]) == (60.0, 55.0, 50.0)
    # Directive 2002/49/EC Annex I identity (standards.md §2): Lden(L, L-5, L-10) = L exactly.
    assert day["Lden"] == pytest.approx(60.00, abs=0.005)
    # hand-evaluated: Ldn (07-22 / 22-07, +10 dB; National Academies glossary, ANSI):
    # 10 lg[(12*10^6 + 3*10^5.5 + 10*(1*10^5.5 + 8*10^5)) / 24] = 10 lg(24.110961e6/24) = 60.02
    assert day["Ldn"] == pytest.approx(60.02, abs=0.005)
    # hand-evaluated: CNEL (07-19 / 19-22 / 22-07, +5 / +10; ASA/ANSI terminology):
    # 10 lg[(12*10^6 + 3*10^6 + 10*(10^5.5 + 8*10^5)) / 24] = 10 lg(26.162278e6/24) = 60.3746
    assert day["CNEL"] == pytest.approx(60.3746, abs=0.0005)  # JSON keeps 0.001 dB
    # hand-evaluated: LAeq,16h 07-23 = 10 lg[(12*10^6 + 4*10^5.5)/16] = 59.19; LAeq,8h = 50.
    assert day["LAeq_16h"] == pytest.approx(59.19, abs=0.005)
    assert day["LAeq_8h"] == pytest.approx(50.0, abs=0.005)
    assert day["period_hours"] == {"day": 12.0, "evening": 4.0, "night": 8.0}
    assert all(day["sufficient"].values())
    assert result["survey_average"]["Lden"] == pytest.approx(60.00, abs=0.005)


def test_constant_level_published_ldn_cnel() -> None:
    # Town of Truckee Draft EIR (standards.md §3/§12): a 60 dBA 24 h Leq gives
    # Ldn 66.4 and CNEL 66.7 (published to 0.1 dB); Lden = L + 6.395 (computed, §3).
    starts, _ = hourly_day()
    day = assess(build_survey(starts, 3600, {"LAeq": [60.0] * 24}), Settings())["days"][0]
    assert day["Ldn"] == pytest.approx(66.4, abs=0.05)
    assert day["CNEL"] == pytest.approx(66.7, abs=0.05)
    assert day["Lden"] == pytest.approx(66.40, abs=0.01)


def test_reading_straddling_a_boundary_is_split_in_proportion() -> None:
    # One 2-h reading 18:00-20:00 at 70 dB plus 1-h readings at 40 dB around it.
    # Lden evening starts 19:00: 1 h of the 70 dB reading is day, 1 h evening.
    t18 = local_ms("2026-06-10 18:00")
    starts = [local_ms("2026-06-10 17:00"), t18, local_ms("2026-06-10 20:00")]
    survey = build_survey(starts, [3600, 7200, 3600], {"LAeq": [40.0, 70.0, 40.0]})
    day = assess(survey, Settings())["days"][0]
    # hand-evaluated: day part 17-19 = 1 h @40 + 1 h @70
    # -> 10 lg((10^4 + 10^7)/2) = 10 lg(5.005e6) = 66.99
    assert day["Lday"] == pytest.approx(10 * math.log10((1e4 + 1e7) / 2), abs=0.005)
    # evening 19-21 = 1 h @70 + 1 h @40 -> the same 66.99
    assert day["Levening"] == pytest.approx(66.99, abs=0.005)
    # coverage: 2 h of 12 h day, 2 h of 4 h evening -> insufficient, still shown.
    assert day["coverage"]["day"] == pytest.approx(2 / 12, abs=1e-4)
    assert day["coverage"]["evening"] == pytest.approx(0.5, abs=1e-4)
    assert day["sufficient"]["Lday"] is False and day["sufficient"]["Levening"] is False
    assert day["Lnight"] is None and day["Lden"] is None


@pytest.mark.parametrize(
    ("night", "real_hours"),
    [
        # Europe/Berlin: clocks go back 2026-10-25 03:00 CEST -> 02:00 CET (night of 9 h);
        # forward 2026-03-29 02:00 CET -> 03:00 CEST (night of 7 h). EU summer-time rule
        # (Directive 2000/84/EC: last Sunday of October / March, 01:00 UTC).
        ("2026-10-24", 9.0),
        ("2026-03-28", 7.0),
    ],
)
def test_dst_night_real_length(night: str, real_hours: float) -> None:
    start = local_ms(f"{night} 23:00")
    n = int(real_hours)
    # Night readings at 50 dB hour by hour in real elapsed time; plus 16 day/evening hours.
    day_start = local_ms(f"{night} 07:00")
    day_starts = [day_start + h * HOUR_MS for h in range(16)]
    starts = day_starts + [start + h * HOUR_MS for h in range(n)]
    levels = [60.0] * 12 + [55.0] * 4 + [50.0] * n
    day = assess(build_survey(starts, 3600, {"LAeq": levels}), Settings())["days"][0]
    assert day["date"] == night
    assert day["period_hours"]["night"] == real_hours
    assert day["coverage"]["night"] == pytest.approx(1.0)
    assert day["Lnight"] == pytest.approx(50.0, abs=0.005)
    # Lden uses the nominal 12/4/8 h (Directive Annex I), so the identity still holds.
    assert day["Lden"] == pytest.approx(60.00, abs=0.005)


def test_dst_night_half_covered_uses_real_length() -> None:
    # 4.5 h of readings in the 9 h autumn night -> coverage 0.5 (not 4.5/8).
    start = local_ms("2026-10-24 23:00")
    starts = [start + h * 1800_000 for h in range(9)]
    day = assess(build_survey(starts, 1800, {"LAeq": [45.0] * 9}), Settings())["days"][0]
    assert day["coverage"]["night"] == pytest.approx(0.5, abs=1e-4)


def test_levels_average_real_time_with_unequal_durations() -> None:
    # ISO 1996-1 LAeq,T: 10 lg[(600*10^5 + 300*10^7)/900] -> hand-evaluated 65.23
    t = local_ms("2026-06-10 10:00")
    survey = build_survey([t, t + 600_000], [600, 300], {"LAeq": [50.0, 70.0]})
    result = assess(survey, Settings())
    expected = 10 * math.log10((600 * 1e5 + 300 * 1e7) / 900)
    assert result["overall"]["LAeq"] == pytest.approx(expected, abs=0.005)
    assert result["intervals"][0]["LAeq"] == pytest.approx(expected, abs=0.005)


def test_night_events_count_and_nth_highest() -> None:
    # 12 night readings of 40 min: LAFmax 55..66 (one per dB). > 60 dB: 61..66 -> 6 events;
    # 10th highest of 66, 65, ..., 55 is 57 (counting down). WHO 1999 60 dB threshold.
    start = local_ms("2026-06-10 23:00")
    starts = [start + k * 2400_000 for k in range(12)]
    lafmax = [55.0 + k for k in range(12)]
    survey = build_survey(starts, 2400, {"LAeq": [45.0] * 12, "LAFmax": lafmax})
    events = assess(survey, Settings())["days"][0]["night_events"]
    assert events == {"threshold_db": 60.0, "count": 6, "nth_highest_LAFmax": 57.0, "n": 10}


def test_days_only_touched_and_survey_average_is_energy_average() -> None:
    # Two days of day-period readings: 60 dB on day 1, 70 dB on day 2 (07-19, 12 h each).
    a = local_ms("2026-06-10 07:00")
    b = local_ms("2026-06-11 07:00")
    starts = [a + h * HOUR_MS for h in range(12)] + [b + h * HOUR_MS for h in range(12)]
    result = assess(build_survey(starts, 3600, {"LAeq": [60.0] * 12 + [70.0] * 12}), Settings())
    assert [d["date"] for d in result["days"]] == ["2026-06-10", "2026-06-11"]
    # hand-evaluated: energy average 10 lg((10^6 + 10^7)/2) = 67.40 (not the mean 65).
    assert result["survey_average"]["Lday"] == pytest.approx(
        10 * math.log10((1e6 + 1e7) / 2), abs=0.005)
    assert result["survey_average"]["valid_s"]["day"] == 24 * 3600.0
    assert np.isclose(result["survey_average"]["valid_s"]["night"], 0.0)
