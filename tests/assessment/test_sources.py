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
    # 22:00 lies in the BS 4142 day (07:00-23:00, secondary source): the day LA90 applies,
    # the mode of the four whole-dB 33 values of the 22-23 h reference interval = 33.
    assert a["background_period"] == "day" and a["background_LA90"] == 33.0
    assert a["excess_over_background"] == pytest.approx(59.80, abs=0.005)
    assert a["impact_indication"] == "likely significant adverse impact"
    assert a["valid_s_total"] == 3600.0
    assert a["source_on"][0] == ["2026-07-03T22:00:00+02:00", "2026-07-03T23:00:00+02:00"]
    if operating:
        # The plant ran in the day period only and was off at night: the residual had to come
        # from the other period, and the note says so.
        assert "residual comes from the other period" in a["note"]
    else:
        assert a["note"] is None


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
