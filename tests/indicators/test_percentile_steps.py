"""LN from time per level step: the counts that merge, checked against numpy's quantile.

Reference: design §5 — LN equals ``np.quantile(levels, 1 - N/100, weights=durations,
method="inverted_cdf")`` (numpy >= 2), an implementation outside this project.
"""

from __future__ import annotations

import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from surveytools.indicators.percentiles import (
    exceedance_levels,
    exceedance_levels_from_step_times,
    level_step_times,
)


@given(steps=st.lists(st.integers(200, 1000), min_size=1, max_size=300),
       weights=st.lists(st.integers(1, 5000), min_size=300, max_size=300),
       split=st.integers(0, 300))
def test_merged_step_tables_give_numpys_weighted_quantile(steps, weights, split):
    levels = np.asarray(steps, dtype=float) / 10.0
    durations = np.asarray(weights[: levels.size], dtype=float)
    groups = np.zeros(levels.size, dtype=np.int64)
    cut = min(split, levels.size)
    # two parts counted apart, then added: the table of the whole
    table = (level_step_times(levels[:cut], durations[:cut], groups[:cut], 1, 0, 1001, 10)
             + level_step_times(levels[cut:], durations[cut:], groups[cut:], 1, 0, 1001, 10))
    percents = [5, 10, 50, 90, 95]
    got = exceedance_levels_from_step_times(table, 0, 10, percents)[0]
    expected = [np.quantile(levels, 1 - p / 100, weights=durations, method="inverted_cdf")
                for p in percents]
    np.testing.assert_allclose(got, expected, atol=1e-9)
    np.testing.assert_array_equal(got, exceedance_levels(levels, percents, durations))


def test_levels_beyond_the_table_are_counted_at_its_ends():
    table = level_step_times([10.0, 200.0], [1.0, 1.0], [0, 0], 1, 100, 1501, 10)
    assert table[0, 0] == 1.0 and table[0, -1] == 1.0


@given(steps=st.lists(st.integers(200, 1000), min_size=1, max_size=200),
       weights=st.lists(st.integers(1, 5000), min_size=200, max_size=200),
       groups=st.lists(st.integers(0, 6), min_size=200, max_size=200),
       split=st.integers(0, 200), block=st.integers(1, 3))
def test_sparse_cells_per_group_give_numpys_weighted_quantile(steps, weights, groups, split,
                                                              block):
    # Many groups (reporting intervals) kept as occupied cells, counted in two parts and
    # added cell by cell, rebuilt a few groups at a time: each group's LN equals numpy's
    # weighted inverted_cdf quantile of that group's samples (design §5's reference).
    import surveytools.indicators.percentiles as pct

    levels = np.asarray(steps, dtype=float) / 10.0
    n = levels.size
    durations = np.asarray(weights[:n], dtype=float)
    group = np.asarray(groups[:n], dtype=np.int64)
    cut = min(split, n)
    a = pct.sparse_level_step_times(levels[:cut], durations[:cut], group[:cut], 7, 0, 1001, 10)
    b = pct.sparse_level_step_times(levels[cut:], durations[cut:], group[cut:], 7, 0, 1001, 10)
    cells = [np.concatenate([x, y]) for x, y in zip(a, b, strict=True)]
    percents = [10, 50, 90]
    old = pct.SPARSE_BLOCK_CELLS
    pct.SPARSE_BLOCK_CELLS = block * 1001  # a block of one to three groups
    try:
        got = pct.exceedance_levels_from_sparse_step_times(*cells, 7, 0, 1001, 10, percents)
    finally:
        pct.SPARSE_BLOCK_CELLS = old
    for g in range(7):
        mine = group == g
        if not mine.any():
            assert np.isnan(got[g]).all()
            continue
        expected = [np.quantile(levels[mine], 1 - p / 100, weights=durations[mine],
                                method="inverted_cdf") for p in percents]
        np.testing.assert_allclose(got[g], expected, atol=1e-9)
