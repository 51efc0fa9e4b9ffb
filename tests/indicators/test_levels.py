"""Decibel arithmetic against published sums, hand evaluation and invariants."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from surveytools.indicators.levels import (
    energy_average,
    energy_difference,
    energy_sum,
    from_energy,
    grouped_energy_average,
    grouped_energy_average_and_duration,
    grouped_energy_sums,
    grouped_max,
    grouped_valid_duration,
    level_from_energy_sums,
    to_energy,
)

# standards.md §10: twenty equal-duration samples used for the LN and Leq check values.
TWENTY_SAMPLES = [45, 47, 52, 48, 46, 60, 58, 49, 47, 46, 45, 44, 50, 55, 62, 48, 47, 46, 45, 44]

levels_st = st.floats(min_value=-20.0, max_value=180.0, allow_nan=False)
durations_st = st.floats(min_value=0.01, max_value=1e5, allow_nan=False)


def _hand_leq(levels, durations):
    """Straight textbook form, no max-factoring: Bies & Hansen eq. (4.1)."""
    total = sum(durations)
    energy = sum(t * 10 ** (lv / 10) for lv, t in zip(levels, durations, strict=True))
    return 10 * math.log10(energy / total)


# --- energetic sums -------------------------------------------------------------------

@pytest.mark.parametrize(
    ("levels", "expected", "tol"),
    [
        # Liptak, Environmental Engineers' Handbook: 85 + 87 + 89 dB "add to give 92 dB";
        # exact 92.07 (standards.md §9, computed).
        pytest.param([85, 87, 89], 92.07, 0.005, id="liptak-three-sources"),
        pytest.param([85, 87, 89], 92.0, 0.5, id="liptak-printed-92"),
        # Town of Truckee Draft EIR p.4: 64 + 60 dB -> 65 (graph); exact 65.46 (computed).
        pytest.param([64, 60], 65.46, 0.005, id="truckee-64-plus-60"),
        # standards.md §9: two equal levels add 10 lg 2 = 3.0103 dB.
        pytest.param([70, 70], 73.0103, 0.0001, id="two-equal-plus-3.01"),
        # standards.md §9: three equal levels add 4.77 dB, ten add 10 dB.
        pytest.param([50, 50, 50], 54.77, 0.005, id="three-equal-plus-4.77"),
        pytest.param([40] * 10, 50.0, 1e-9, id="ten-equal-plus-10"),
    ],
)
def test_energy_sum_published(levels, expected, tol):
    assert energy_sum(levels) == pytest.approx(expected, abs=tol)


def test_energy_sum_ignores_nan_and_empty_is_nan():
    # hand-evaluated: NaN dropped, 70 + 70 -> 73.0103
    assert energy_sum([70, np.nan, 70]) == pytest.approx(73.0103, abs=1e-4)
    assert math.isnan(energy_sum([]))
    assert math.isnan(energy_sum([np.nan, np.inf]))


def test_energy_sum_no_overflow_at_huge_levels():
    # hand-evaluated: 4000 dB + 4000 dB = 4003.0103 dB; 10**400 overflows a double, so a
    # naive implementation returns inf.
    assert energy_sum([4000.0, 4000.0]) == pytest.approx(4003.0103, abs=1e-4)


# --- energy average -------------------------------------------------------------------

def test_twenty_sample_leq():
    # standards.md §10: energetic Leq of the 20 samples is 53.44 dB (computed there).
    assert energy_average(TWENTY_SAMPLES) == pytest.approx(53.44, abs=0.005)


def test_energy_average_weighted_hand_evaluated():
    # hand-evaluated: 1 h at 70 dB + 3 h at 60 dB ->
    # 10*lg((1*10**7 + 3*10**6)/4) = 10*lg(3.25e6) = 65.119
    assert energy_average([70, 60], [3600, 10800]) == pytest.approx(65.119, abs=0.0005)


def test_energy_average_nan_level_drops_its_duration():
    # hand-evaluated: the NaN sample's 100 h must not dilute the mean: result 65.119
    value = energy_average([70, np.nan, 60], [3600, 360000, 10800])
    assert value == pytest.approx(65.119, abs=0.0005)


@pytest.mark.parametrize(
    ("levels", "durations"),
    [
        pytest.param([], None, id="empty"),
        pytest.param([np.nan, np.nan], None, id="all-nan"),
        pytest.param([60, 70], [0, 0], id="zero-time"),
        pytest.param(["n/a", None], None, id="text"),
        pytest.param([60], [-5], id="negative-duration"),
    ],
)
def test_energy_average_nothing_valid_is_nan(levels, durations):
    assert math.isnan(energy_average(levels, durations))


def test_energy_average_shape_mismatch_is_programming_error():
    with pytest.raises(ValueError, match="one duration per level"):
        energy_average([60, 61, 62], [1, 2])


@given(st.lists(st.tuples(levels_st, durations_st), min_size=1, max_size=40))
def test_energy_average_between_min_and_max(samples):
    levels, durations = zip(*samples, strict=True)
    value = energy_average(levels, durations)
    assert min(levels) - 1e-9 <= value <= max(levels) + 1e-9


@given(
    st.lists(st.tuples(levels_st, durations_st), min_size=1, max_size=40),
    st.floats(min_value=-50, max_value=50),
)
def test_energy_average_shift(samples, shift):
    # Definition of a level: adding c dB to every sample multiplies every energy by
    # 10**(c/10), so the average moves by c.
    levels, durations = zip(*samples, strict=True)
    shifted = energy_average(np.add(levels, shift), durations)
    assert shifted == pytest.approx(energy_average(levels, durations) + shift, abs=1e-9)


@given(st.lists(st.tuples(levels_st, durations_st), min_size=1, max_size=40), st.randoms())
def test_energy_average_permutation_invariant(samples, rnd):
    levels, durations = zip(*samples, strict=True)
    shuffled = list(samples)
    rnd.shuffle(shuffled)
    lv2, du2 = zip(*shuffled, strict=True)
    assert energy_average(lv2, du2) == pytest.approx(energy_average(levels, durations), abs=1e-9)


@given(
    st.lists(
        st.tuples(st.floats(min_value=20, max_value=120), st.floats(min_value=1, max_value=900)),
        min_size=1,
        max_size=20,
    )
)
def test_energy_average_matches_textbook_form(samples):
    # Bies & Hansen, Engineering Noise Control eq. (4.1), written out without the
    # max-factoring trick (safe here: levels <= 120 dB).
    levels, durations = zip(*samples, strict=True)
    assert energy_average(levels, durations) == pytest.approx(
        _hand_leq(levels, durations), abs=1e-9
    )


# --- energy <-> level -----------------------------------------------------------------

def test_to_and_from_energy():
    # ISO 80000-8 definition: 10**(L/10); hand-evaluated 30 dB -> 1000, 0 dB -> 1.
    np.testing.assert_allclose(to_energy([0.0, 30.0, -10.0]), [1.0, 1000.0, 0.1], rtol=1e-12)
    np.testing.assert_allclose(from_energy([1.0, 1000.0]), [0.0, 30.0], atol=1e-12)
    assert np.all(np.isnan(from_energy([0.0, -1.0, np.nan])))


# --- energy difference ----------------------------------------------------------------

@pytest.mark.parametrize(
    ("total", "part", "expected", "tol"),
    [
        # Liptak handbook: total 93, background 89 -> printed 90.7 (chart-read);
        # exact 10*lg(10**9.3 - 10**8.9) = 90.80 (standards.md §4, computed).
        pytest.param(93.0, 89.0, 90.80, 0.005, id="liptak-93-89"),
        # standards.md §4 (computed): 55 - 50 -> 53.35; 70 - 63 -> 69.03.
        pytest.param(55.0, 50.0, 53.35, 0.005, id="55-50"),
        pytest.param(70.0, 63.0, 69.03, 0.005, id="70-63"),
        # hand-evaluated: 10*lg(2*10**6 - 10**6) = 60 (73.0103 - 70 -> 70)
        pytest.param(73.0103, 70.0, 70.0, 1e-4, id="undo-doubling"),
    ],
)
def test_energy_difference(total, part, expected, tol):
    assert energy_difference(total, part) == pytest.approx(expected, abs=tol)


def test_energy_difference_undefined_is_nan_and_vectorised():
    out = energy_difference([60.0, 60.0, np.nan, 60.0], [60.0, 61.0, 50.0, -np.inf])
    assert np.isnan(out[:3]).all()
    assert out[3] == 60.0  # removing nothing leaves the total (hand-evaluated)
    assert isinstance(energy_difference(60.0, 50.0), float)


# --- grouped --------------------------------------------------------------------------

def test_grouped_energy_average_hand_evaluated():
    levels = [70, 60, 50, np.nan, 80, 90]
    durations = [3600, 10800, 60, 60, 1, 1]
    groups = [0, 0, 2, 2, -1, 7]  # -1 and out-of-range 7: no group
    out = grouped_energy_average(levels, durations, groups, 3)
    # hand-evaluated: group 0 = 65.119 (see above); group 1 empty; group 2 only 50 dB
    np.testing.assert_allclose(out, [65.119, np.nan, 50.0], atol=5e-4)
    np.testing.assert_array_equal(grouped_valid_duration(levels, durations, groups, 3),
                                  [14400.0, 0.0, 60.0])
    np.testing.assert_array_equal(grouped_max(levels, groups, 3), [70.0, np.nan, 50.0])


@given(
    st.lists(
        st.tuples(levels_st, durations_st, st.integers(min_value=-1, max_value=4)),
        min_size=1,
        max_size=60,
    )
)
def test_grouped_equals_per_group(samples):
    levels, durations, groups = (np.array(x) for x in zip(*samples, strict=True))
    out = grouped_energy_average(levels, durations, groups, 5)
    for g in range(5):
        sel = groups == g
        expected = energy_average(levels[sel], durations[sel])
        if math.isnan(expected):
            assert math.isnan(out[g])
        else:
            assert out[g] == pytest.approx(expected, abs=1e-9)
        maximum = grouped_max(levels, groups, 5)[g]
        assert (math.isnan(maximum) and not sel.any()) or maximum == levels[sel].max()


def test_grouped_rejects_length_mismatch():
    with pytest.raises(ValueError, match="same length"):
        grouped_energy_average([60, 61], [1, 1, 1], [0, 0], 1)
    with pytest.raises(ValueError, match="n_groups must be >= 0"):
        grouped_max([60], [0], -1)


# --- one-pass level and valid time; runs of sorted groups -----------------------------

@given(
    st.lists(
        st.tuples(st.one_of(levels_st, st.just(math.nan)),
                  st.one_of(durations_st, st.just(0.0)),
                  st.integers(min_value=-1, max_value=4)),
        min_size=1,
        max_size=60,
    ),
    st.booleans(),
)
def test_level_and_duration_equal_per_group(samples, sort_by_group):
    # sort_by_group: groups in non-decreasing order take the run (reduceat) path of the
    # group maxima, otherwise the scattered (maximum.at) path.
    if sort_by_group:
        samples = sorted(samples, key=lambda sample: sample[2])
    levels, durations, groups = (np.array(x) for x in zip(*samples, strict=True))
    level, valid_s = grouped_energy_average_and_duration(levels, durations, groups, 5)
    # the two single-purpose functions give the same figures bit for bit
    np.testing.assert_array_equal(level, grouped_energy_average(levels, durations, groups, 5))
    np.testing.assert_array_equal(valid_s,
                                  grouped_valid_duration(levels, durations, groups, 5))
    for g in range(5):
        sel = (groups == g) & np.isfinite(levels)
        # valid time: durations of the finite levels added in input order (plain sum)
        assert valid_s[g] == sum(durations[sel].tolist(), 0.0)
        positive = sel & (durations > 0)
        if positive.any():
            # textbook form, Bies & Hansen eq. (4.1), without max-factoring
            assert level[g] == pytest.approx(_hand_leq(levels[positive], durations[positive]),
                                             abs=1e-9)
            assert grouped_max(levels, groups, 5)[g] == levels[sel].max()
        else:
            assert math.isnan(level[g])


def test_level_and_duration_hand_evaluated_sorted_runs():
    # groups in time order (the assessment's case): runs 0, 0 | 1 | 3, 3, 3
    levels = [70.0, 60.0, 55.0, 40.0, 40.0, np.nan]
    durations = [3600.0, 10800.0, 900.0, 1.0, 1.0, 5.0]
    level, valid_s = grouped_energy_average_and_duration(levels, durations, [0, 0, 1, 3, 3, 3],
                                                         4)
    # hand-evaluated: group 0 = 10 lg((3600e7 + 10800e6) / 14400) = 65.119 dB; group 1 the
    # single 55 dB; group 2 empty; group 3 two equal 40 dB levels, the NaN left out
    np.testing.assert_allclose(level, [65.119, 55.0, np.nan, 40.0], atol=5e-4)
    np.testing.assert_array_equal(valid_s, [14400.0, 900.0, 0.0, 2.0])
    np.testing.assert_array_equal(grouped_max(levels, [0, 0, 1, 3, 3, 3], 4),
                                  [70.0, 55.0, np.nan, 40.0])


def test_energy_sums_of_fine_groups_give_the_coarse_levels_hand_evaluated():
    # Hand-evaluated (equal-energy rule, ISO 1996-1 LAeq): 93 dB and 89 dB for 1 s each
    # average to 10 lg((1.99526e9 + 7.94328e8) / 2) = 91.4451 dB; adding 50 dB for 2 s gives
    # 10 lg((2.78959e9 + 2e5) / 4) = 88.4351 dB.
    levels = np.array([93.0, 89.0, 50.0, 50.0])
    ms = np.array([1000.0, 1000.0, 1000.0, 1000.0])
    fine = np.array([0, 1, 2, 2])
    energy, time = grouped_energy_sums(levels, ms, fine, 3, reference_db=93.0)
    assert time.tolist() == [1000.0, 1000.0, 2000.0]
    first_two = level_from_energy_sums(energy[:2].sum(), time[:2].sum(), 93.0)
    assert float(first_two) == pytest.approx(10 * math.log10((10**9.3 + 10**8.9) / 2), abs=1e-9)
    assert float(first_two) == pytest.approx(91.4451, abs=5e-5)
    everything = level_from_energy_sums(energy.sum(), time.sum(), 93.0)
    assert float(everything) == pytest.approx(88.4351, abs=5e-5)
    assert np.isnan(level_from_energy_sums(0.0, 0.0, 93.0))


@given(
    st.lists(st.tuples(levels_st, st.integers(min_value=1, max_value=10**7).map(float),
                       st.integers(min_value=-1, max_value=9)), min_size=1, max_size=60),
)
def test_energy_sums_combine_like_grouped_energy_average(samples):
    # Fine groups 0..9 merged into coarse groups g // 3 (9 -> 3): summing the fine sums
    # gives the coarse energy averages of grouped_energy_average (itself checked against
    # published sums above), whatever the reference level.
    levels, ms, fine = (np.array(x) for x in zip(*samples, strict=True))
    reference = float(levels.max())
    energy, time = grouped_energy_sums(levels, ms, fine, 10, reference)
    coarse_of_fine = np.arange(10) // 3
    coarse_energy = np.bincount(coarse_of_fine, weights=energy, minlength=4)
    coarse_time = np.bincount(coarse_of_fine, weights=time, minlength=4)
    got = level_from_energy_sums(coarse_energy, coarse_time, reference)
    expected, valid_ms = grouped_energy_average_and_duration(
        levels, ms, np.where(fine >= 0, fine // 3, -1), 4)
    np.testing.assert_allclose(got, expected, rtol=0, atol=1e-9)
    np.testing.assert_array_equal(coarse_time, valid_ms)
