"""Assessments: residual correction classes via windows and the Operating column."""

from __future__ import annotations

import math

import pytest
from conftest import build_survey, local_ms

from surveytools.assessment import assess
from surveytools.settings import Assessment, Settings


def window_survey(total: float, residual: float, operating: bool = False):
    # 22:00-23:00 source on (4 x 15 min at `total`), 23:30-00:30 residual at `residual`.
    # Background night LAF90 33 dB from 23:00.
    t = local_ms("2026-07-03 22:00")
    starts = [t + 900_000 * k for k in range(12)]
    levels = [total] * 4 + [residual] * 2 + [residual] * 6
    laf90 = [33.0] * 12
    op = [True] * 4 + [None] * 2 + [False] * 6 if operating else None
    return build_survey(starts, 900, {"LAeq": levels, "LAF90": laf90}, operating=op,
                        metadata={"position": "NW-2"})


WINDOWS = dict(source_on=(("2026-07-03 22:00", "2026-07-03 23:00"),),
               residual=(("2026-07-03 23:30", "2026-07-04 00:30"),))


@pytest.mark.parametrize("operating", [False, True], ids=["windows", "operating-column"])
def test_corrected_liptak_example(operating: bool) -> None:
    # Liptak, Environmental Engineers' Handbook (standards.md §4/§12): total 93, background
    # 89 -> 90.7 from the chart; exact 10 lg(10^9.3 - 10^8.9) = 90.80.
    if operating:
        assessment = Assessment(name="Plant", position="NW-2", use_operating_column=True,
                                corrections_db={"tonal": 2.0})
    else:
        assessment = Assessment(name="Plant", position="NW-2", corrections_db={"tonal": 2.0},
                                **WINDOWS)
    result = assess(window_survey(93.0, 89.0, operating), Settings(assessments=(assessment,)))
    (a,) = result["assessments"]
    assert a["selection"] == ("operating column" if operating else "windows")
    assert a["LAeq_total"] == 93.0 and a["LAeq_residual"] == 89.0
    assert a["level_difference"] == 4.0
    assert a["specific_level"] == pytest.approx(90.80, abs=0.005)
    assert a["specific_basis"] == "corrected"
    # BS 4142 rating = specific + corrections: 90.80 + 2 = 92.80; excess over the
    # background 33 dB = 59.80 -> likely significant adverse (>= +10 dB, clause 11).
    assert a["rating_level"] == pytest.approx(92.80, abs=0.005)
    # 22:00 lies in the BS 4142 day (07:00-23:00, secondary source): the day background
    # applies. Its only reference interval, 22-23 h, is the source-on time, and a background
    # is the sound *without* the source (BS 4142:2014 8.1, from memory; design.md §9): it is
    # left out, so the LA90 of the residual time is used: the logged LAF90 of the residual
    # readings, all 33 dB, mode of whole dB = 33 (hand-evaluated).
    assert a["background_period"] == "day" and a["background_LA90"] == 33.0
    assert a["background_basis"] == "residual time"
    assert a["excess_over_background"] == pytest.approx(59.80, abs=0.005)
    assert a["impact_indication"] == "likely significant adverse impact"
    assert a["valid_s_total"] == 3600.0
    assert a["source_on"][0] == ["2026-07-03T22:00:00+02:00", "2026-07-03T23:00:00+02:00"]
    if operating:
        # The plant ran in the day period only and was off at night: the residual had to come
        # from the other period, and the note says so.
        assert "residual comes from the other period" in a["note"]
    else:
        assert a["note"] == ("no sufficient day-time background without the source: the "
                             "LA90 of the residual time is used")


def test_operating_column_compares_like_with_like() -> None:
    # Plant on 02:00-03:00 (night) and off 03:00-04:00 (night) and 10:00-11:00 (day, louder).
    # Hand-evaluated: the night residual alone is 40 dB; including the 60 dB day hour would
    # give 10 lg((10^4 + 10^6)/2) = 57.03 dB and swamp a 50 dB total.
    t = local_ms("2026-07-04 02:00")
    starts = [t, t + 3_600_000, t + 8 * 3_600_000]
    survey = build_survey(starts, 3600, {"LAeq": [50.0, 40.0, 60.0], "LAF90": [38.0] * 3},
                          operating=[True, False, False], metadata={"position": "NW-2"})
    a = Assessment(name="Plant", position="NW-2", use_operating_column=True)
    (res,) = assess(survey, Settings(assessments=(a,)))["assessments"]
    assert res["background_period"] == "night"
    assert res["LAeq_residual"] == 40.0
    # ISO 1996-2 class: dL = 10 dB -> corrected: 10 lg(10^5 - 10^4) = 49.54 (hand-evaluated).
    assert res["specific_basis"] == "corrected"
    assert res["specific_level"] == pytest.approx(10 * math.log10(1e5 - 1e4), abs=0.005)
    assert "night-time only" in res["note"]


def test_no_correction_above_10_db() -> None:
    # ISO 1996-2 (from memory): dL = 12 dB > 10 -> no correction, specific = total.
    assessment = Assessment(name="Plant", position="NW-2", **WINDOWS)
    (a,) = assess(window_survey(60.0, 48.0), Settings(assessments=(assessment,)))["assessments"]
    assert a["specific_basis"] == "no correction needed"
    assert a["specific_level"] == 60.0 and a["level_difference"] == 12.0


def test_upper_bound_at_or_below_3_db() -> None:
    # ISO 1996-2 (from memory): dL = 2 dB <= 3 -> total reported as an upper bound, with note.
    assessment = Assessment(name="Plant", position="NW-2", **WINDOWS)
    (a,) = assess(window_survey(50.0, 48.0), Settings(assessments=(assessment,)))["assessments"]
    assert a["specific_basis"] == "upper bound"
    assert a["specific_level"] == 50.0
    assert "upper bound" in a["note"] and "cannot be separated" in a["note"]


def test_window_splits_reading_pieces() -> None:
    # A single 2-h reading 21:30-23:30 at 70 dB and a window 22:00-23:00: 3600 s inside.
    t = local_ms("2026-07-03 21:30")
    survey = build_survey([t], 7200, {"LAeq": [70.0]})
    assessment = Assessment(name="Plant", position="NW-2", **WINDOWS)
    (a,) = assess(survey, Settings(assessments=(assessment,)))["assessments"]
    assert a["valid_s_total"] == 3600.0 and a["LAeq_total"] == 70.0
    assert a["LAeq_residual"] is None and a["specific_basis"] == "not available"
    assert "no valid readings in the residual time" in a["note"]


def test_other_position_skipped() -> None:
    assessment = Assessment(name="Elsewhere", position="SE-9", **WINDOWS)
    result = assess(window_survey(60.0, 50.0), Settings(assessments=(assessment,)))
    assert result["assessments"] == []


def test_corrected_class_mid_range() -> None:
    # hand-evaluated: 55 - 50 -> 10 lg(10^5.5 - 10^5) = 53.35 (standards.md §4, computed).
    assessment = Assessment(name="Plant", position="NW-2", **WINDOWS)
    (a,) = assess(window_survey(55.0, 50.0), Settings(assessments=(assessment,)))["assessments"]
    assert a["specific_level"] == pytest.approx(10 * math.log10(10**5.5 - 10**5.0), abs=0.005)
    assert a["specific_level"] == pytest.approx(53.35, abs=0.005)


# --- the background is source-free (design.md §9; BS 4142:2014 8.1, from memory: the
# background sound level is the sound of the place without the specific sound) ---------


def day_log(operating=None):
    # 10:00-13:00, 15-min readings; logged LAF90 35 dB in 10-11 h, 50 dB in 11-13 h (the
    # source ran 11:00-13:00, raising the LAF90); LAeq 60 while on, 45 while off.
    t = local_ms("2026-07-03 10:00")
    starts = [t + 900_000 * k for k in range(12)]
    return build_survey(starts, 900, {"LAeq": [45.0] * 4 + [60.0] * 8,
                                      "LAF90": [35.0] * 4 + [50.0] * 8},
                        operating=operating, metadata={"position": "NW-2"})


def test_source_on_windows_are_left_out_of_the_background() -> None:
    assessment = Assessment(name="Plant", position="NW-2",
                            source_on=(("2026-07-03 11:00", "2026-07-03 13:00"),),
                            residual=(("2026-07-03 10:00", "2026-07-03 11:00"),))
    result = assess(day_log(), Settings(assessments=(assessment,)))
    # The survey's own day background still holds every hour: mode of the whole-dB hourly
    # values {35, 50, 50} = 50 (hand-evaluated, BS 4142 mode).
    assert result["background"]["day"]["LA90"] == 50.0
    (a,) = result["assessments"]
    # The assessment's background leaves the 11-13 h source time out: only 10-11 h, 35 dB.
    assert a["background_LA90"] == 35.0
    assert a["background_basis"] == "source-free period"
    # hand-evaluated: rating = specific: dL = 60 - 45 = 15 > 10 -> 60 (ISO 1996-2 class,
    # from memory); excess = 60 - 35 = 25 dB
    assert a["excess_over_background"] == 25.0


def test_operating_yes_is_already_left_out() -> None:
    op = [False] * 4 + [True] * 8
    a = Assessment(name="Plant", position="NW-2", use_operating_column=True)
    (res,) = assess(day_log(op), Settings(assessments=(a,)))["assessments"]
    assert res["background_LA90"] == 35.0
    assert res["background_basis"] == "source-free period"


def test_no_source_free_background_and_no_residual() -> None:
    # The source ran through the whole log, and the residual window holds no reading:
    # no background is reported, and the note says why.
    assessment = Assessment(name="Plant", position="NW-2",
                            source_on=(("2026-07-03 10:00", "2026-07-03 13:00"),),
                            residual=(("2026-07-03 20:00", "2026-07-03 21:00"),))
    (a,) = assess(day_log(), Settings(assessments=(assessment,)))["assessments"]
    assert a["background_LA90"] is None
    assert a["background_basis"] == "not available"
    assert a["excess_over_background"] is None
    assert "no representative day background LA90 without the source" in a["note"]


def test_residual_time_la90_from_samples() -> None:
    # No logged LAF90, and the only source-free hour (10-11 h) holds 30 min of readings:
    # below the 75 % coverage threshold, so the day has no sufficient source-free interval
    # and the residual time's LA90 is used, from its LAeq samples (ISO 1996-1 LN, durations
    # as weights). Residual 10:00-10:30: 15 min at 44 dB, 15 min at 47 dB; hand-evaluated
    # LA90: time above 44 is 15 min <= 27 min (90 % of 30) -> 44.
    t = local_ms("2026-07-03 10:00")
    on = local_ms("2026-07-03 11:00")
    starts = [t, t + 900_000] + [on + 900_000 * k for k in range(8)]
    survey = build_survey(starts, 900, {"LAeq": [44.0, 47.0] + [60.0] * 8},
                          metadata={"position": "NW-2"})
    assessment = Assessment(name="Plant", position="NW-2",
                            source_on=(("2026-07-03 11:00", "2026-07-03 13:00"),),
                            residual=(("2026-07-03 10:00", "2026-07-03 10:30"),))
    (a,) = assess(survey, Settings(assessments=(assessment,)))["assessments"]
    assert a["background_LA90"] == 44.0
    assert a["background_basis"] == "residual time"
    assert "LA90 of the residual time is used" in a["note"]


def test_operating_column_splits_readings_at_the_period_bounds() -> None:
    # design.md §5 / Directive 2002/49/EC Annex I: a reading across 07:00 is split. Night
    # residual 05:00-06:00 (4 x 15 min, Operating = no, 40 dB); source on from 06:22: two
    # 15-min readings at 50 dB and one from 06:52 at 60 dB (8 min night, 7 min day).
    t = local_ms("2026-07-04 05:00")
    on0 = local_ms("2026-07-04 06:22")
    starts = [t + 900_000 * k for k in range(4)] + [on0, on0 + 900_000, on0 + 1_800_000]
    survey = build_survey(starts, 900, {"LAeq": [40.0] * 4 + [50.0, 50.0, 60.0]},
                          operating=[False] * 4 + [True] * 3, metadata={"position": "NW-2"})
    a = Assessment(name="Plant", position="NW-2", use_operating_column=True)
    (res,) = assess(survey, Settings(assessments=(a,)))["assessments"]
    assert res["background_period"] == "night"
    # hand-evaluated: night source-on time = 15 + 15 + 8 min = 38 min = 2280 s;
    # LAeq = 10 lg((30 * 10^5 + 8 * 10^6) / 38) = 10 lg(289 473.68) = 54.616 dB
    # (whole readings would give 45 min and 10 lg((30e5 + 15e6)/45) = 56.02 dB)
    assert res["valid_s_total"] == 2280.0
    assert res["LAeq_total"] == pytest.approx(54.616, abs=0.0005)
    assert res["source_on"] == [["2026-07-04T06:22:00+02:00", "2026-07-04T07:00:00+02:00"]]
