"""The assessment context: shared pieces and the arrays taken from them once."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import build_survey, local_ms

from surveytools.assessment.context import build_context
from surveytools.settings import Settings


def _context(n: int = 600, step_s: float = 7.0):
    rng = np.random.default_rng(11)
    start = local_ms("2026-03-28 20:00:00") + np.arange(n, dtype=np.int64) * int(step_s * 1000)
    laeq = np.round(rng.normal(50, 5, n))  # whole dB: many equal levels
    laeq[::37] = np.nan
    mask = np.zeros(n, bool)
    mask[100:140] = True
    survey = build_survey(start, step_s, {"LAeq": laeq},
                          exclusions=[("wind", "all", mask), ("technician", "background",
                                                               ~mask & (np.arange(n) % 5 == 0))])
    return build_context(survey, Settings()), laeq


def test_shared_pieces_find_the_same_groups_as_their_starts():
    ctx, _ = _context()
    hour = 3_600_000
    grid_a = np.arange(int(ctx.start_ms[0]) - hour, int(ctx.end_ms[-1]) + hour, 900_000)
    grid_b = grid_a[::4] + 60_000
    ctx = ctx.with_shared_split([grid_a, grid_b])
    for bounds in (grid_a, grid_b):
        pieces, group = ctx.pieces_in(bounds)
        # reference: numpy searchsorted of each piece start in the grid
        segment = np.searchsorted(bounds, pieces.start_ms, side="right") - 1
        expected = np.where((segment >= 0) & (segment < bounds.size - 1), segment, -1)
        np.testing.assert_array_equal(group, expected)
    # a grid that is not part of the union falls back to the piece starts
    other = grid_a[1:-1] + 1234
    pieces, group = ctx.pieces_in(other)
    segment = np.searchsorted(other, pieces.start_ms, side="right") - 1
    np.testing.assert_array_equal(
        group, np.where((segment >= 0) & (segment < other.size - 1), segment, -1))


@pytest.mark.parametrize("shared", [True, False])
@pytest.mark.parametrize("scope", ["all", "background"])
def test_valid_pieces_and_orders(scope, shared):
    ctx, laeq = _context()
    grid = np.arange(int(ctx.start_ms[0]), int(ctx.end_ms[-1]), 600_000)
    if shared:
        ctx = ctx.with_shared_split([grid])
    pieces, _ = ctx.pieces_in(np.zeros(0, np.int64) if shared else grid)
    assert pieces.index.size > ctx.n  # the grid cuts readings
    levels = ctx.piece_levels(pieces)
    np.testing.assert_array_equal(levels, laeq[pieces.index])
    mask = ctx.valid if scope == "all" else ctx.valid_background
    kept = ctx.valid_pieces(pieces, scope)
    keep = mask[pieces.index] & np.isfinite(levels) & (pieces.duration_ms > 0)
    np.testing.assert_array_equal(kept.position, np.flatnonzero(keep))
    np.testing.assert_array_equal(kept.levels_db, levels[keep])
    np.testing.assert_array_equal(kept.duration_s, pieces.duration_ms[keep] / 1000.0)
    # reference: numpy stable argsort (NumPy reference, kind="stable")
    np.testing.assert_array_equal(ctx.laeq_order(), np.argsort(laeq, kind="stable"))
    np.testing.assert_array_equal(ctx.piece_order(pieces), np.argsort(levels, kind="stable"))


def test_touched_groups_are_the_groups_holding_pieces():
    ctx, _ = _context()
    day = 86_400_000
    grid = np.arange(int(ctx.start_ms[0]) // day * day, int(ctx.end_ms[-1]) + day, 1_800_000)
    ctx = ctx.with_shared_split([grid])
    sub = grid[::5]  # a coarser grid made of union instants
    for bounds in (grid, sub, sub + 1):  # the last one is not shared
        pieces, group = ctx.pieces_in(bounds)
        n_groups = bounds.size - 1
        expected = np.zeros(n_groups, bool)
        expected[np.unique(group[group >= 0])] = True  # reference: numpy unique
        np.testing.assert_array_equal(ctx.touched_groups(bounds, pieces, group), expected)


def test_laeq_from_segment_sums_equals_grouping_the_pieces():
    from surveytools.indicators.levels import grouped_energy_average_and_duration

    ctx, _ = _context()
    hour = 3_600_000
    grid_a = np.arange(int(ctx.start_ms[0]) - hour, int(ctx.end_ms[-1]) + hour, 900_000)
    grid_b = grid_a[::4] + 60_000
    assert ctx.grouped_laeq(grid_a) is None  # nothing shared yet
    ctx = ctx.with_shared_split([grid_a, grid_b])
    for bounds in (grid_a, grid_b):
        summed = ctx.grouped_laeq(bounds)
        assert summed is not None
        pieces, group = ctx.pieces_in(bounds)
        kept = ctx.valid_pieces(pieces)
        level, valid_s = grouped_energy_average_and_duration(
            kept.levels_db, kept.duration_s, group[kept.position], bounds.size - 1)
        np.testing.assert_allclose(summed[0], level, rtol=0, atol=1e-9)
        np.testing.assert_allclose(summed[1], valid_s, rtol=1e-12)
    assert ctx.grouped_laeq(grid_a[1:-1] + 1234) is None  # not a grid of the union
    laeq = ctx.level("LAeq")
    assert laeq is not None
    from surveytools.indicators.levels import energy_average

    keep = ctx.valid & np.isfinite(laeq)
    assert ctx.total_laeq() == pytest.approx(
        energy_average(laeq[keep], ctx.duration_ms[keep] / 1000.0), abs=1e-9)


def test_the_shared_split_is_kept_and_derived_once():
    ctx, _ = _context()
    grid = np.arange(int(ctx.start_ms[0]), int(ctx.end_ms[-1]), 600_000)
    assert ctx.split is None
    shared = ctx.with_shared_split([grid, grid[::3] + 1000])
    assert ctx.split is None  # the context is not changed, a new one is returned
    assert shared.split is not None
    # reference: numpy union of the two grids
    np.testing.assert_array_equal(shared.split.union_ms,
                                  np.union1d(grid, grid[::3] + 1000))
    pieces, _ = shared.pieces_in(grid)
    assert pieces is shared.split.pieces
    assert shared.pieces_in(grid[::3] + 1000)[0] is pieces
    assert shared.valid_pieces(pieces) is shared.valid_pieces(pieces)
    assert shared.valid_pieces(pieces, "background") is not shared.valid_pieces(pieces)
    assert shared.piece_order(pieces) is shared.piece_order(pieces)
    assert shared.piece_levels(pieces) is shared.split.piece_laeq
