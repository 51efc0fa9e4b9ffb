"""Exceedance levels LN against standards.md §10, an exact fractions reference evaluating
the ISO 1996-1 definition directly, and numpy's weighted quantile where that is exact."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from surveytools.indicators.percentiles import (
    COMBINE_METHODS,
    combine_logged_levels,
    exceedance_level,
    exceedance_levels,
    grouped_exceedance_levels,
    level_order,
    whole_db_distribution,
)

# standards.md §10: twenty equal-duration samples with their LN check values.
TWENTY_SAMPLES = [45, 47, 52, 48, 46, 60, 58, 49, 47, 46, 45, 44, 50, 55, 62, 48, 47, 46, 45, 44]

# Whole-dB levels (ties are frequent) and whole-second durations (exact cumulative sums,
# so numpy and we see the same cumulative boundaries bit for bit).
level_st = st.integers(min_value=20, max_value=90).map(float)
dur_st = st.integers(min_value=1, max_value=3600).map(float)
percent_st = st.sampled_from([0.0, 1.0, 5.0, 10.0, 25.0, 50.0, 75.0, 90.0, 95.0, 99.0, 100.0])


#: Percents whose ``1 - N/100`` is exact in binary: there numpy's float comparison of a
#: normalised cumulative weight with the quantile decides exactly as the definition.
EXACT_QUANTILE_PERCENTS = (0.0, 25.0, 50.0, 75.0, 100.0)


def numpy_ln(levels, percent, durations):
    """Independent reference: numpy >= 2 weighted inverted-CDF quantile (design.md §5).

    Only for an exact quantile (IEEE 754 rounding is monotone and a representable
    quantile is its own rounding, so ``fl(c / T) >= q`` iff ``c / T >= q``).
    """
    assert percent in EXACT_QUANTILE_PERCENTS, "numpy's quantile is exact only there"
    return float(
        np.quantile(
            np.asarray(levels, float), 1 - percent / 100,
            weights=np.asarray(durations, float), method="inverted_cdf",
        )
    )


def reference_ln(levels, percent, durations=None):
    """Independent reference: the ISO 1996-1 / design.md §5 definition evaluated with
    exact fractions, LN = min{L among the samples : time(level > L) <= N/100 T}."""
    levels = [float(v) for v in levels]
    durations = [1] * len(levels) if durations is None else list(durations)
    pairs = [(lv, Fraction(d)) for lv, d in zip(levels, durations, strict=True)
             if math.isfinite(lv) and d > 0]
    if not pairs:
        return math.nan
    total = sum(t for _, t in pairs)
    allowed = Fraction(repr(float(percent))) / 100 * total
    for candidate in sorted({lv for lv, _ in pairs}):
        if sum(t for lv, t in pairs if lv > candidate) <= allowed:
            return candidate
    raise AssertionError("the highest level is always exceeded for no time")


@pytest.mark.parametrize(
    ("percent", "expected"),
    [
        # standards.md §10, "strictly exceeded" column ((k+1)-th highest): our convention.
        pytest.param(10.0, 58.0, id="L10"),
        pytest.param(50.0, 47.0, id="L50"),
        pytest.param(90.0, 44.0, id="L90"),
    ],
)
def test_twenty_sample_table_strictly_exceeded(percent, expected):
    assert exceedance_level(TWENTY_SAMPLES, percent) == expected
    # the definition, evaluated exactly, reproduces the same column (design.md §5).
    assert reference_ln(TWENTY_SAMPLES, percent) == expected


def test_exact_ties_hundred_one_minute_readings():
    # design.md §9 / ISO 1996-1 LN definition, hand-evaluated: 100 one-minute readings at
    # 30.0, 30.1, ... 39.9 dB, T = 100 min. LA95: time above L must be <= 95 min; above
    # 30.4 are the 95 readings 30.5 ... 39.9 = 95 min (allowed), above 30.3 are 96 min
    # (not) -> LA95 = 30.4. LA99: above 30.0 are 99 min <= 99 min -> LA99 = 30.0. LA90:
    # above 30.9 are 90 min -> 30.9. A float 1 - 0.95 = 0.05000000000000004 would give
    # 30.5 and 1 - 0.99 would give 30.1.
    levels = np.round(np.arange(300, 400) / 10, 1)
    durations_s = np.full(100, 60.0)
    out = exceedance_levels(levels, [99, 95, 90], durations_s)
    np.testing.assert_array_equal(out, [30.0, 30.4, 30.9])
    # the same through the sorting path (levels off the 0.1 dB grid by a shift of 1/64 dB)
    shifted = exceedance_levels(levels + 1 / 64, [99, 95, 90], durations_s)
    np.testing.assert_array_equal(shifted, [30.0 + 1 / 64, 30.4 + 1 / 64, 30.9 + 1 / 64])
    # grouped (one group, and the same data split in two groups with the same answer)
    grouped = grouped_exceedance_levels(np.r_[levels, levels], np.full(200, 60_000),
                                        np.r_[np.zeros(100, int), np.ones(100, int)], 2,
                                        [99, 95, 90])
    np.testing.assert_array_equal(grouped, [[30.0, 30.4, 30.9]] * 2)
    # integer milliseconds as weights give the same answer as seconds
    np.testing.assert_array_equal(exceedance_levels(levels, [95], np.full(100, 60_000)),
                                  [30.4])


def test_percent_is_read_as_an_exact_decimal():
    # hand-evaluated: 1000 equal samples 0, 1, ..., 999 (one per level); L99.9: time above
    # L must be <= 999/1000 of T = 999 samples -> L = 0 (999 above). L0.1: <= 1 sample
    # above -> 998.
    levels = np.arange(1000, dtype=float) + 0.5
    np.testing.assert_array_equal(exceedance_levels(levels, [99.9, 0.1]), [0.5, 998.5])


def test_twenty_sample_table_other_columns_differ():
    # standards.md §10: "equalled or exceeded" gives L10 = 60, L90 = 45 and numpy's
    # linear interpolation gives 58.2 / 44.9 — our convention is neither.
    ours = exceedance_levels(TWENTY_SAMPLES, [10, 90])
    assert list(ours) != [60.0, 45.0]
    np.testing.assert_allclose(np.percentile(TWENTY_SAMPLES, [90, 10]), [58.2, 44.9], atol=1e-9)
    assert ours[0] != pytest.approx(58.2, abs=0.01)


def test_definition_time_above_at_most_n_percent():
    # design.md §5 definition checked directly: time(level > LN) <= N % of T, and any
    # lower sample level breaks it. Durations unequal (hand-chosen).
    levels = np.array([40.0, 50.0, 60.0, 70.0])
    durations = np.array([10.0, 60.0, 20.0, 10.0])  # T = 100 s
    # hand-evaluated: L10: time above 60 is 10 s = 10 % -> L10 = 60; above 50 is 30 s.
    assert exceedance_level(levels, 10, durations) == 60.0
    # hand-evaluated: L50: time above 50 = 30 s <= 50 s; above 40 = 90 s > 50 s -> 50.
    assert exceedance_level(levels, 50, durations) == 50.0
    # hand-evaluated: L95: above 40 = 90 s <= 95 s -> 40.
    assert exceedance_level(levels, 95, durations) == 40.0


@pytest.mark.parametrize(
    ("percent", "levels"),
    [
        pytest.param(-1.0, [50, 60], id="negative-percent"),
        pytest.param(101.0, [50, 60], id="percent-over-100"),
        pytest.param(float("nan"), [50, 60], id="nan-percent"),
        pytest.param(50.0, [], id="empty"),
        pytest.param(50.0, [np.nan, "x"], id="nothing-finite"),
    ],
)
def test_bad_input_is_nan(percent, levels):
    assert math.isnan(exceedance_level(levels, percent))


def test_nan_levels_ignored_with_their_durations():
    # hand-evaluated: the NaN sample's 1000 s must not count: L50 of {40 for 10 s,
    # 60 for 10 s} is 40 (time above 40 = 10 s = 50 %).
    assert exceedance_level([40, np.nan, 60], 50, [10, 1000, 10]) == 40.0


@given(
    st.lists(st.tuples(level_st, dur_st), min_size=1, max_size=50),
    percent_st,
)
def test_weighted_matches_exact_reference(samples, percent):
    levels, durations = zip(*samples, strict=True)
    assert exceedance_level(levels, percent, durations) == reference_ln(levels, percent,
                                                                        durations)


@given(
    st.lists(st.tuples(level_st, dur_st), min_size=1, max_size=50),
    st.sampled_from(EXACT_QUANTILE_PERCENTS),
)
def test_weighted_matches_numpy_inverted_cdf_at_exact_quantiles(samples, percent):
    levels, durations = zip(*samples, strict=True)
    assert exceedance_level(levels, percent, durations) == numpy_ln(levels, percent, durations)


@given(
    st.lists(
        st.tuples(st.floats(min_value=0, max_value=140),
                  st.integers(min_value=500, max_value=10_000)),
        min_size=1,
        max_size=50,
    ),
    st.floats(min_value=0.5, max_value=99.5),
)
def test_definition_holds_exactly_for_any_data(samples, percent):
    # design.md §5/§9: LN = min{L : time(level > L) <= N/100 T}, exactly. Durations are
    # whole milliseconds given in seconds. Check both halves in exact fractions: the
    # returned level satisfies it, and the next lower sample level does not.
    levels = np.array([s[0] for s in samples])
    ms = np.array([s[1] for s in samples])
    allowed = Fraction(repr(percent)) / 100 * int(ms.sum())
    ln = exceedance_level(levels, percent, ms / 1000)
    assert int(ms[levels > ln].sum()) <= allowed
    lower = levels[levels < ln]
    if lower.size:
        assert int(ms[levels > lower.max()].sum()) > allowed


@given(st.lists(st.tuples(st.floats(min_value=0, max_value=140), dur_st), min_size=1, max_size=50))
def test_l10_ge_l50_ge_l90(samples):
    levels, durations = zip(*samples, strict=True)
    l10, l50, l90 = exceedance_levels(levels, [10, 50, 90], durations)
    assert l10 >= l50 >= l90


@given(
    st.lists(
        st.tuples(level_st, dur_st, st.integers(min_value=-1, max_value=5)),
        min_size=1,
        max_size=80,
    )
)
def test_grouped_equals_per_group(samples):
    levels, durations, groups = (np.array(x) for x in zip(*samples, strict=True))
    percents = [0, 10, 50, 90, 95, 100]
    out = grouped_exceedance_levels(levels, durations, groups, 6, percents)
    assert out.shape == (6, len(percents))
    for g in range(6):
        sel = groups == g
        expected = exceedance_levels(levels[sel], percents, durations[sel])
        np.testing.assert_array_equal(out[g], expected)


def test_grouped_uneven_groups_fallback_path():
    # One huge group and many one-sample groups forces the per-group cumsum fallback;
    # the result must still equal the per-group function (and numpy for the big group).
    rng = np.random.default_rng(3)
    big = rng.integers(30, 80, size=3000).astype(float)
    levels = np.concatenate([big, np.arange(2000, dtype=float)])
    groups = np.concatenate([np.zeros(3000, dtype=int), np.arange(1, 2001)])
    durations = rng.integers(1, 60, size=levels.size).astype(float)
    out = grouped_exceedance_levels(levels, durations, groups, 2001, [10, 90])
    assert out[0, 0] == reference_ln(big, 10, durations[:3000])
    assert out[0, 1] == reference_ln(big, 90, durations[:3000])
    np.testing.assert_array_equal(out[1:, 0], np.arange(2000, dtype=float))


def test_grouped_length_mismatch():
    with pytest.raises(ValueError, match="same length"):
        grouped_exceedance_levels([50, 60], [1, 1], [0], 1, [90])


# --- logged LAF90 combination ---------------------------------------------------------

def test_combine_methods_hand_evaluated():
    values = [40.2, 41.0, 44.6, 40.6, 45.5, np.nan]
    # hand-evaluated: median of 40.2, 40.6, 41.0, 44.6, 45.5 = 41.0
    assert combine_logged_levels(values, "median") == 41.0
    # hand-evaluated: mean = (40.2+41.0+44.6+40.6+45.5)/5 = 211.9/5 = 42.38
    assert combine_logged_levels(values, "mean") == pytest.approx(42.38, abs=1e-9)
    # hand-evaluated: whole dB (half up) 40, 41, 45, 41, 46 -> mode 41
    assert combine_logged_levels(values, "mode") == 41.0


def test_mode_round_half_up_and_tie_takes_lower():
    # hand-evaluated: 44.5 -> 45 (half up, BS 4142 3.4 whole dB), 43.5 -> 44; counts
    # 44: 2, 45: 2 -> tie -> the lower value 44 (documented cautious choice).
    assert combine_logged_levels([44.5, 45.2, 43.5, 44.1], "mode") == 44.0
    levels, counts = whole_db_distribution([44.5, 45.2, 43.5, 44.1, np.nan])
    np.testing.assert_array_equal(levels, [44.0, 45.0])
    np.testing.assert_array_equal(counts, [2, 2])


def test_combine_nothing_finite_and_unknown_method():
    for method in COMBINE_METHODS:
        assert math.isnan(combine_logged_levels([np.nan], method))
    with pytest.raises(ValueError, match="median, mode, mean"):
        combine_logged_levels([40.0], "average")


# --- a level order shared between computations ----------------------------------------

def test_level_order_keeps_equal_levels_in_input_order():
    # hand-evaluated: 44 (index 1) first, then the two 45s in input order (0, 3), then the
    # 47s (2, 4); NaN last
    np.testing.assert_array_equal(level_order([45.0, 44.0, 47.0, 45.0, 47.0, np.nan]),
                                  [1, 0, 3, 2, 4, 5])


@given(
    st.lists(
        st.tuples(st.one_of(level_st, st.just(math.nan)), dur_st,
                  st.integers(min_value=-1, max_value=5), st.booleans()),
        min_size=1,
        max_size=80,
    )
)
def test_shared_level_order_gives_the_same_levels(samples):
    levels, durations, groups, valid = (np.array(x) for x in zip(*samples, strict=True))
    order = level_order(levels)
    percents = [0, 10, 50, 90, 95, 100]
    # grouped: the same table with and without the shared order, and per group the
    # exact definition (independent reference, design.md §5)
    shared = grouped_exceedance_levels(levels, durations, groups, 6, percents,
                                       level_order=order)
    np.testing.assert_array_equal(
        shared, grouped_exceedance_levels(levels, durations, groups, 6, percents))
    for g in range(6):
        sel = (groups == g) & np.isfinite(levels)
        for k, p in enumerate(percents):
            if sel.any():
                assert shared[g, k] == reference_ln(levels[sel], p, durations[sel])
            else:
                assert math.isnan(shared[g, k])
    # whole set, a subset masked as NaN: the same as the subset on its own
    masked = np.where(valid, levels, np.nan)
    expected = exceedance_levels(levels[valid], percents, durations[valid])
    np.testing.assert_array_equal(
        exceedance_levels(masked, percents, durations, level_order=order), expected)


def test_level_order_of_the_wrong_length_is_refused():
    with pytest.raises(ValueError, match="level_order has 2 entries but there are 3"):
        exceedance_levels([50, 60, 70], [90], level_order=[0, 1])
    with pytest.raises(ValueError, match="level_order has 1 entries but there are 2"):
        grouped_exceedance_levels([50, 60], [1, 1], [0, 0], 1, [90], level_order=[0])


def test_grouped_many_groups_wide_group_numbers():
    # more than 32767 groups: the stable group sort runs on 32-bit numbers; one sample
    # per group, so each LN is that sample (hand-evaluated)
    n = 40_000
    levels = (np.arange(n) % 70 + 20).astype(float)
    out = grouped_exceedance_levels(levels, None, np.arange(n)[::-1], n, [90])
    np.testing.assert_array_equal(out[:, 0], levels[::-1])


@given(
    st.lists(st.one_of(st.integers(min_value=-2000, max_value=2000), st.just(None)),
             min_size=1, max_size=300),
    st.sampled_from([10.0, 100.0, 3.0]),
    st.booleans(),
)
def test_level_order_on_level_grids_is_numpy_stable_order(steps, per_db, add_infinity):
    # 0.1 dB and 0.01 dB grids take the 16-bit path, 1/3 dB levels the general sort; NaN
    # (None), -0.0 and infinities must land where numpy's stable argsort puts them
    # (NumPy reference, numpy.argsort kind="stable", NaN sorted last)
    levels = np.array([np.nan if k is None else k / per_db for k in steps])
    levels[::7] = np.where(levels[::7] == 0, -0.0, levels[::7])
    if add_infinity:
        levels = np.concatenate([levels, [np.inf, -np.inf, 0.0]])
    np.testing.assert_array_equal(level_order(levels), np.argsort(levels, kind="stable"))


def test_level_order_grid_checked_beyond_the_first_values():
    # the first 1024 levels are on the 0.1 dB grid, a later one is not (hand-made)
    levels = np.r_[np.full(1500, 45.5), 45.55, np.full(10, 45.5), 45.45]
    np.testing.assert_array_equal(level_order(levels), np.argsort(levels, kind="stable"))


@given(
    st.lists(
        st.tuples(level_st, st.integers(min_value=1, max_value=600),
                  st.integers(min_value=-1, max_value=5)),
        min_size=1,
        max_size=80,
    )
)
def test_grouped_equals_per_group_with_inexact_durations(samples):
    # tenths of a second are not exact binary fractions: the cumulative weights are
    # restarted per group (padded path), still equal to the per-group function
    levels, tenths, groups = (np.array(x) for x in zip(*samples, strict=True))
    durations = tenths * 0.1
    percents = [0, 10, 50, 90, 100]
    out = grouped_exceedance_levels(levels, durations, groups, 6, percents)
    for g in range(6):
        sel = groups == g
        np.testing.assert_array_equal(out[g],
                                      exceedance_levels(levels[sel], percents, durations[sel]))


def test_grouped_uneven_groups_inexact_durations_loop_path():
    # one huge group and many one-sample groups with durations in tenths of a second:
    # the per-group cumsum loop; the big group equals the per-group function
    rng = np.random.default_rng(5)
    big = rng.integers(30, 80, size=3000).astype(float)
    levels = np.concatenate([big, np.arange(2000, dtype=float)])
    groups = np.concatenate([np.zeros(3000, dtype=int), np.arange(1, 2001)])
    durations = rng.integers(1, 600, size=levels.size) * 0.1
    out = grouped_exceedance_levels(levels, durations, groups, 2001, [10, 90])
    np.testing.assert_array_equal(out[0], exceedance_levels(big, [10, 90], durations[:3000]))
    np.testing.assert_array_equal(out[1:, 0], np.arange(2000, dtype=float))


# Levels on the 0.1 dB grid (as meters log them) with whole-millisecond weights: the
# counting path applies; with it switched off the same call sorts.
tenth_db_st = st.integers(min_value=250, max_value=950).map(lambda k: k / 10)
ms_st = st.integers(min_value=1, max_value=900_000).map(float)


def _sorted_path(monkeypatch: pytest.MonkeyPatch, fn, *args, **kwargs):
    from surveytools.indicators import percentiles

    with monkeypatch.context() as m:
        m.setattr(percentiles, "_histogram_levels", lambda *a, **k: None)
        return fn(*args, **kwargs)


@given(
    st.lists(st.tuples(tenth_db_st, ms_st, st.integers(min_value=-1, max_value=7)),
             min_size=1, max_size=120),
)
def test_counting_path_equals_sorting_and_numpy(samples):
    from surveytools.indicators.percentiles import _histogram_levels, _targets

    levels, weights, groups = (np.array(x) for x in zip(*samples, strict=True))
    percents = [0.0, 1.0, 10.0, 50.0, 90.0, 99.0, 100.0]
    counted = _histogram_levels(levels, weights.astype(np.int64), groups.astype(np.int64), 8,
                                _targets(percents))
    if not (groups >= 0).any():
        assert counted is None  # nothing to count: the sorting path answers (all NaN)
        return
    assert counted is not None  # this data takes the counting path
    with pytest.MonkeyPatch.context() as mp:
        sorted_out = _sorted_path(mp, grouped_exceedance_levels, levels, weights, groups, 8,
                                  percents)
    np.testing.assert_array_equal(grouped_exceedance_levels(levels, weights, groups, 8,
                                                            percents), sorted_out)
    for g in range(8):
        sel = groups == g
        if sel.any():  # reference: the definition in exact fractions
            expected = [reference_ln(levels[sel], p, weights[sel]) for p in percents]
            np.testing.assert_array_equal(counted[g], expected)
        else:
            assert np.isnan(counted[g]).all()


@given(st.lists(st.tuples(tenth_db_st, ms_st), min_size=1, max_size=80), percent_st)
def test_ungrouped_counting_path_equals_sorting(samples, percent):
    levels, weights = (np.array(x) for x in zip(*samples, strict=True))
    with pytest.MonkeyPatch.context() as mp:
        sorted_out = _sorted_path(mp, exceedance_levels, levels, [percent], weights)
    np.testing.assert_array_equal(exceedance_levels(levels, [percent], weights), sorted_out)
    assert sorted_out[0] == reference_ln(levels, percent, weights)


def test_counting_path_declines_what_it_cannot_do_exactly():
    from surveytools.indicators.percentiles import _histogram_levels, _targets

    targets = _targets([90, 50, 10])
    one = np.zeros(4, np.int64)
    ones = np.ones(4, np.int64)
    on_grid = np.array([40.1, 40.2, 55.5, 60.0])
    # a total of 2**53 or more would not be summed exactly by bincount's float64
    assert _histogram_levels(on_grid, np.full(4, 2**51, np.int64), one, 1, targets) is None
    # levels off the 0.01 dB grid
    assert _histogram_levels(on_grid + 1e-3, ones, one, 1, targets) is None
    # a negative zero would come back as +0.0
    assert _histogram_levels(np.array([-0.0, 1.0, 2.0, 3.0]), ones, one, 1,
                             targets) is None
    # too many cells (groups x level steps) for the number of samples
    wide = np.array([10.0, 20.0, 130.0, 140.0])  # 1,301 steps of 0.1 dB
    assert _histogram_levels(wide, ones, np.arange(4), 5000, targets) is None
    assert _histogram_levels(on_grid, ones, one, 1, targets) is not None


def test_a_level_order_function_is_called_only_when_sorting():
    calls = []

    def order_of(levels):
        def make():
            calls.append(1)
            return level_order(levels)
        return make

    on_grid = np.array([45.2, 47.0, 45.2, 60.1, 52.3])
    ms = np.array([1000.0, 1000.0, 500.0, 250.0, 1000.0])
    groups = np.array([0, 0, 1, 1, 1])
    counted = grouped_exceedance_levels(on_grid, ms, groups, 2, [10, 90],
                                        level_order=order_of(on_grid))
    assert calls == []
    off_grid = on_grid + 0.001  # not on a 0.1 or 0.01 dB grid: sorted
    sorted_out = grouped_exceedance_levels(off_grid, ms, groups, 2, [10, 90],
                                           level_order=order_of(off_grid))
    assert calls == [1]
    np.testing.assert_array_equal(sorted_out, counted + 0.001)
    # hand-evaluated: group 0 holds 45.2 and 47.0 for 1 s each -> L10 47.0, L90 45.2
    np.testing.assert_array_equal(counted[0], [47.0, 45.2])
    # hand-evaluated: sorted 45.201 (1000+500 ms), 47.001 (1000), 52.301 (1000), 60.101 (250)
    # of 3750 ms -> cumulative 0.40 then 0.67 reaches 1 - 50/100 at 47.001
    assert exceedance_levels(off_grid, [50], ms, level_order=order_of(off_grid))[0] == \
        pytest.approx(47.001)
    assert calls == [1, 1]


def test_integer_weights_whole_seconds_ms_and_huge_totals():
    from surveytools.indicators.percentiles import integer_weights

    # whole numbers are kept (only ratios matter); other durations are seconds -> ms
    np.testing.assert_array_equal(integer_weights([60.0, 1.0, np.nan, -1.0]), [60, 1, 0, 0])
    np.testing.assert_array_equal(integer_weights([0.1, 0.25, 1.0]), [100, 250, 1000])
    # a total beyond exact sums is scaled down, never overflowing int64
    huge = integer_weights([1e300, 1e300])
    assert huge.dtype == np.int64 and huge[0] == huge[1] > 0
    assert exceedance_level([40.0, 50.0], 50, [1e300, 1e300]) == 40.0  # hand: 50 % above 40
