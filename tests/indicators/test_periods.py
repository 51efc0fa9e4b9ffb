"""Period splitting and Lden / Ldn / CNEL against the directive, published examples and
identities."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from surveytools import constants as c
from surveytools.indicators.levels import energy_average
from surveytools.indicators.periods import (
    cnel,
    lden,
    ldn,
    penalised_day_evening_night,
    scheme_hours,
    split_at_boundaries,
)

H_MS = 3_600_000

# --- split_at_boundaries --------------------------------------------------------------


def test_split_hand_evaluated():
    starts = [0, 10, 95]
    durations = [100, 5, 10]
    bounds = [10, 50, 100]
    index, piece_start, piece_dur, segment = split_at_boundaries(starts, durations, bounds)
    # hand-evaluated: [0,100) spans 10 and 50 (100 is its end: no split) -> 3 pieces;
    # [10,15) starts on a boundary: not split, segment 1; [95,105) split at 100.
    np.testing.assert_array_equal(index, [0, 0, 0, 1, 2, 2])
    np.testing.assert_array_equal(piece_start, [0, 10, 50, 10, 95, 100])
    np.testing.assert_array_equal(piece_dur, [10, 40, 50, 5, 5, 5])
    np.testing.assert_array_equal(segment, [0, 1, 2, 1, 2, 3])
    assert piece_start.dtype == np.int64 and piece_dur.dtype == np.int64


def test_boundary_exactly_at_start_is_not_a_split():
    index, _, piece_dur, segment = split_at_boundaries([7 * H_MS], [H_MS], [7 * H_MS])
    np.testing.assert_array_equal(index, [0])
    np.testing.assert_array_equal(piece_dur, [H_MS])
    np.testing.assert_array_equal(segment, [1])  # boundaries <= start: one


def test_interval_spanning_several_boundaries():
    # A 24 h block from 00:00 against 07:00 / 19:00 / 23:00 (Directive 2002/49/EC default
    # starts): hand-evaluated pieces 7 h, 12 h, 4 h, 1 h.
    bounds = [int(h * H_MS) for h in (7, 19, 23)]
    _, _, piece_dur, segment = split_at_boundaries([0], [24 * H_MS], bounds)
    np.testing.assert_array_equal(piece_dur / H_MS, [7, 12, 4, 1])
    np.testing.assert_array_equal(segment, [0, 1, 2, 3])


def test_repeated_boundary_gives_zero_length_piece():
    # A zero-length evening (evening start == night start) keeps segment numbering.
    _, _, piece_dur, segment = split_at_boundaries([0], [30], [10, 20, 20])
    np.testing.assert_array_equal(piece_dur, [10, 10, 0, 10])
    np.testing.assert_array_equal(segment, [0, 1, 2, 3])


def test_split_programming_errors():
    with pytest.raises(ValueError, match="sorted ascending"):
        split_at_boundaries([0], [10], [5, 3])
    with pytest.raises(ValueError, match="whole milliseconds"):
        split_at_boundaries([0.5], [10], [5])
    with pytest.raises(ValueError, match="same length"):
        split_at_boundaries([0, 1], [10], [5])


@given(
    st.lists(
        st.tuples(
            st.integers(min_value=0, max_value=10**7),
            st.integers(min_value=0, max_value=10**6),
            st.floats(min_value=20, max_value=110),
        ),
        min_size=1,
        max_size=30,
    ),
    st.lists(st.integers(min_value=0, max_value=11 * 10**6), max_size=20),
)
def test_split_then_merge_preserves_durations_and_laeq(intervals, bounds):
    # design.md §5 / style.md rule 10: splitting an interval set at arbitrary boundaries
    # and merging the pieces gives the same LAeq and the same total time.
    starts, durations, levels = (np.array(x) for x in zip(*intervals, strict=True))
    bounds_arr = np.sort(np.array(bounds, dtype=np.int64))
    index, piece_start, piece_dur, segment = split_at_boundaries(starts, durations, bounds_arr)
    np.testing.assert_array_equal(np.bincount(index, weights=piece_dur, minlength=len(starts)),
                                  durations)
    # pieces tile their interval: each piece starts where the previous one ended
    ends = piece_start + piece_dur
    same = index[1:] == index[:-1]
    np.testing.assert_array_equal(piece_start[1:][same], ends[:-1][same])
    # segment k lies between boundaries k-1 and k (zero-length pieces between repeated
    # boundaries take the intermediate segment numbers, so check pieces with length)
    real = piece_dur > 0
    np.testing.assert_array_equal(segment[real],
                                  np.searchsorted(bounds_arr, piece_start[real], "right"))
    # no boundary strictly inside a piece
    inside = np.searchsorted(bounds_arr, ends, "left") - np.searchsorted(
        bounds_arr, piece_start, "right")
    assert np.all(inside <= 0)
    if durations.sum() > 0:
        assert energy_average(levels[index], piece_dur) == pytest.approx(
            energy_average(levels, durations), abs=1e-9)


# --- scheme_hours ---------------------------------------------------------------------

@pytest.mark.parametrize(
    ("starts", "expected"),
    [
        # Directive 2002/49/EC Annex I §1 defaults 07-19 / 19-23 / 23-07: 12 / 4 / 8 h.
        pytest.param((7, 19, 23), (12, 4, 8), id="eu-default"),
        # Poland, Dz.U. 2020 poz. 1018 (standards.md §2): 06-18 / 18-22 / 22-06.
        pytest.param((6, 18, 22), (12, 4, 8), id="poland"),
        # IJERPH 2021 (standards.md §2): 07-21 / 21-23 / 23-07: 14 / 2 / 8 h.
        pytest.param((7, 21, 23), (14, 2, 8), id="shortened-evening-2h"),
        # Ldn (National Academies glossary): 07-22 / 22-07, no evening.
        pytest.param((7, 22, 22), (15, 0, 9), id="ldn-no-evening"),
        # CNEL (ASA terminology): 07-19 / 19-22 / 22-07.
        pytest.param((7, 19, 22), (12, 3, 9), id="cnel"),
    ],
)
def test_scheme_hours(starts, expected):
    assert scheme_hours(*starts) == expected


def test_scheme_hours_match_the_length_constants():
    # The *_HOURS_H defaults in constants.py must follow from the *_START_H constants.
    assert scheme_hours(c.LDEN_DAY_START_H, c.LDEN_EVENING_START_H, c.LDEN_NIGHT_START_H) == (
        c.LDEN_DAY_HOURS_H, c.LDEN_EVENING_HOURS_H, c.LDEN_NIGHT_HOURS_H)
    assert scheme_hours(c.CNEL_DAY_START_H, c.CNEL_EVENING_START_H, c.CNEL_NIGHT_START_H) == (
        c.CNEL_DAY_HOURS_H, c.CNEL_EVENING_HOURS_H, c.CNEL_NIGHT_HOURS_H)
    assert scheme_hours(c.LDN_DAY_START_H, c.LDN_NIGHT_START_H, c.LDN_NIGHT_START_H) == (
        c.LDN_DAY_HOURS_H, 0.0, c.LDN_NIGHT_HOURS_H)


def test_scheme_hours_out_of_order():
    with pytest.raises(ValueError, match="day -> evening -> night"):
        scheme_hours(7, 23, 19)
    with pytest.raises(ValueError, match="day -> evening -> night"):
        scheme_hours(7, 7, 7)


# --- Lden / Ldn / CNEL ----------------------------------------------------------------

def test_lden_penalties_balance_exactly():
    # standards.md §2 (computed from the Directive 2002/49/EC formula): Lden(L, L-5, L-10)
    # = L exactly, whatever the evening length.
    assert lden(60.0, 55.0, 50.0) == pytest.approx(60.0, abs=1e-12)
    # 13 / 3 / 8 split (Annex I §1: evening shortened by one hour)
    assert lden(70.0, 65.0, 60.0, day_h=13, evening_h=3, night_h=8) == pytest.approx(
        70.0, abs=1e-12)


@pytest.mark.parametrize("level", [30.0, 60.0, 85.5])
def test_constant_level_offsets(level):
    # standards.md §3 (computed): constant L for 24 h gives Lden = L + 6.395,
    # Ldn = L + 6.410, CNEL (+5 dB form) = L + 6.670.
    assert lden(level, level, level) == pytest.approx(level + 6.395, abs=0.0005)
    assert ldn(level, level) == pytest.approx(level + 6.410, abs=0.0005)
    assert cnel(level, level, level) == pytest.approx(level + 6.670, abs=0.0005)


def test_published_examples():
    # Engineering ToolBox, Day-Night Sound Level: Ld = 70, Ln = 50 -> Ldn = 68.2 dB.
    assert ldn(70.0, 50.0) == pytest.approx(68.2, abs=0.05)
    # Town of Truckee Canyon Springs Draft EIR: 60 dBA 24 h Leq -> 66.4 Ldn, 66.7 CNEL.
    assert ldn(60.0, 60.0) == pytest.approx(66.4, abs=0.05)
    assert cnel(60.0, 60.0, 60.0) == pytest.approx(66.7, abs=0.05)
    # Same document, p.4: Leq,day 47.7, Leq,night 37.2 -> Ldn 47.5.
    assert ldn(47.7, 37.2) == pytest.approx(47.5, abs=0.05)


def test_shortened_evening_hand_evaluated():
    # hand-evaluated, 13/3/8 split, Ld=65, Le=60, Ln=58:
    # 10*lg((13*10**6.5 + 3*10**6.5 + 8*10**6.8)/24)
    # = 10*lg((16*3162277.66 + 8*6309573.44)/24) = 10*lg(4211376.3) = 66.2442
    assert lden(65.0, 60.0, 58.0, day_h=13, evening_h=3, night_h=8) == pytest.approx(
        66.2442, abs=0.0005)
    # default 12/4/8 on the same levels: Le + 5 = Ld, so day and evening weights add to
    # the same 16 * 10**6.5 -> equal here.
    assert lden(65.0, 60.0, 58.0) == pytest.approx(66.2442, abs=0.0005)
    # and with Le = Ld the split matters: hand-evaluated
    # 13/3/8: 10*lg((13*10**6.5 + 3*10**7.0 + 8*10**6.8)/24) = 10*lg(5066091.5) = 67.0467
    # 12/4/8: 10*lg((12*10**6.5 + 4*10**7.0 + 8*10**6.8)/24) = 10*lg(5350996.6) = 67.2843
    assert lden(65.0, 65.0, 58.0, day_h=13, evening_h=3, night_h=8) == pytest.approx(
        67.0467, abs=0.0005)
    assert lden(65.0, 65.0, 58.0) == pytest.approx(67.2843, abs=0.0005)


def test_shifted_periods_poland():
    # Poland 06-18 / 18-22 / 22-06 (Dz.U. 2020 poz. 1018): same 12/4/8 lengths, so the
    # balance identity holds with the hours from scheme_hours.
    day_h, evening_h, night_h = scheme_hours(6, 18, 22)
    assert lden(58.0, 53.0, 48.0, day_h=day_h, evening_h=evening_h, night_h=night_h) == (
        pytest.approx(58.0, abs=1e-12))


def test_vectorised_and_nan():
    out = lden(np.array([60.0, np.nan, 70.0]), np.array([55.0, 55.0, 65.0]), 50.0)
    assert isinstance(out, np.ndarray)
    # hand-evaluated: row 3: Ld 70, Le 65, Ln 50 ->
    # 10*lg((12e7 + 4e7 + 8e6)/24) = 10*lg(7e6) = 68.4510
    np.testing.assert_allclose(out, [60.0, np.nan, 68.4510], atol=5e-4)
    assert isinstance(ldn(60.0, 50.0), float)
    assert math.isnan(cnel(60.0, np.nan, 50.0))


def test_zero_hour_period_level_not_needed():
    # Evening of 0 h: its (missing) level does not matter; equals Ldn-like sum by hand:
    # 10*lg((15*10**6 + 9*10**6)/24) = 60 for Ld 60, Ln 50 with +10 night penalty.
    assert lden(60.0, np.nan, 50.0, day_h=15, evening_h=0, night_h=9) == pytest.approx(
        60.0, abs=1e-12)


def test_general_function_programming_errors():
    with pytest.raises(ValueError, match="one hour count and one penalty per level"):
        penalised_day_evening_night([60.0, 50.0], [12.0], [0.0, 10.0])
    with pytest.raises(ValueError, match="finite and >= 0"):
        penalised_day_evening_night([60.0], [-1.0], [0.0])


def test_no_overflow():
    # hand-evaluated: Lden(L, L-5, L-10) = L also at 4000 dB (naive 10**400 overflows).
    assert lden(4000.0, 3995.0, 3990.0) == pytest.approx(4000.0, abs=1e-9)


def test_no_interval_cut_gives_one_piece_each():
    # boundaries only on interval edges (or outside): nothing is cut; hand-evaluated
    # segments = number of boundaries <= each start (numpy searchsorted side="right")
    index, start, duration, segment = split_at_boundaries([0, 10, 20], [10, 10, 5],
                                                          [-5, 10, 20, 40])
    np.testing.assert_array_equal(index, [0, 1, 2])
    np.testing.assert_array_equal(start, [0, 10, 20])
    np.testing.assert_array_equal(duration, [10, 10, 5])
    np.testing.assert_array_equal(segment, [1, 2, 3])
