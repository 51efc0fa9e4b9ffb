"""Background sound: LA90 per reference interval and the representative day / night LA90.

Reference intervals follow ``settings.background``: from ``day_start`` to ``night_start``
in steps of ``reference_interval_day_s`` (1 h by default, BS 4142 7.2), from
``night_start`` to the next ``day_start`` in steps of ``reference_interval_night_s``
(15 min), each period stepped from its local wall-clock start in real elapsed time.
Readings excluded for background (``valid_mask("background")``) are left out.

Per reference interval, LA90 comes from the logged ``LAF90`` column (the logged value
itself when the logging interval equals the reference interval, else the logged values
combined with ``settings.background.method``; basis ``"logged LAF90"``) or, without a
logged LAF90, from the LAeq samples (basis ``"LAeq samples"``). The representative day
and night LA90 combine the LA90 of the *sufficient* reference intervals (valid fraction
>= ``coverage_threshold``) with the method; ``"mode"`` gives whole decibels.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from surveytools.assessment._common import (
    MS_PER_S,
    FloatArray,
    IntArray,
    db,
    db_list,
    seconds_list,
)
from surveytools.assessment.context import Context
from surveytools.assessment.intervals import logged_per_group, same_interval
from surveytools.assessment.timegrid import day_offset_boundaries, format_local, stepped_grid
from surveytools.constants import BACKGROUND_PERCENT
from surveytools.indicators.levels import grouped_valid_duration
from surveytools.indicators.percentiles import (
    combine_logged_levels,
    grouped_exceedance_levels,
    whole_db_distribution,
)

#: Background periods, in order within an assessment day.
BACKGROUND_PERIODS = ("day", "night")
#: Basis labels.
BASIS_LOGGED = "logged LAF90"
BASIS_SAMPLES = "LAeq samples"


def reference_bounds(ctx: Context) -> tuple[IntArray, IntArray]:
    """Reference-interval grid overlapping the readings, and the period index of each."""
    settings = ctx.settings.background
    days = ctx.candidate_days
    spans = day_offset_boundaries(days, [settings.day_start, settings.night_start], ctx.tz)
    steps = np.tile([settings.reference_interval_day_s, settings.reference_interval_night_s],
                    len(days))
    bounds, span = stepped_grid(spans[:-1], spans[1:], steps)
    period_index = span % len(BACKGROUND_PERIODS)
    first, last = int(ctx.start_ms.min()), int(ctx.end_ms.max())
    lo = max(int(np.searchsorted(bounds, first, side="right")) - 1, 0)
    hi = int(np.searchsorted(bounds, last, side="left"))
    return bounds[lo : hi + 1], period_index[lo:hi]


def background_section(ctx: Context) -> dict[str, Any] | None:
    """Return the ``background`` section; None without readings."""
    if ctx.n == 0:
        return None
    settings = ctx.settings.background
    method = settings.method
    bounds, period_index = reference_bounds(ctx)
    n_groups = max(bounds.size - 1, 0)

    pieces, group = ctx.pieces_in(bounds)
    valid_group = np.where(ctx.valid_background[pieces.index], group, -1)
    levels = ctx.piece_levels(pieces)
    kept = ctx.valid_pieces(pieces, "background")
    valid_s = grouped_valid_duration(kept.levels_db, kept.duration_s, group[kept.position],
                                     n_groups)
    length_s = np.diff(bounds) / MS_PER_S

    logged = ctx.logged("LAF90")
    la90: FloatArray
    if logged is not None:
        basis = BASIS_LOGGED
        la90 = np.full(n_groups, np.nan)
        for k, step in enumerate(
            (settings.reference_interval_day_s, settings.reference_interval_night_s)
        ):
            chosen = None if same_interval(ctx.logging_interval_s, step) else method
            per_group = logged_per_group(ctx, logged, ctx.valid_background, bounds, chosen)
            la90 = np.where(period_index == k, per_group, la90)
    else:
        basis = BASIS_SAMPLES
        la90 = grouped_exceedance_levels(
            levels, pieces.weights_ms, valid_group, n_groups, [BACKGROUND_PERCENT],
            level_order=lambda: ctx.piece_order(pieces),
        )[:, 0]
    la90 = np.where(valid_s > 0, la90, np.nan)
    sufficient = (length_s > 0) & (valid_s >= ctx.settings.coverage_threshold * length_s)

    starts = format_local(bounds[:-1], ctx.tz)
    ends = format_local(bounds[1:], ctx.tz)
    la90_list = db_list(la90)
    valid_list = seconds_list(valid_s)
    reference = [
        {
            "start": starts[j],
            "end": ends[j],
            "period": BACKGROUND_PERIODS[int(period_index[j])],
            "LA90": la90_list[j],
            "valid_s": valid_list[j],
            "sufficient": bool(sufficient[j]),
        }
        for j in range(n_groups)
    ]
    out: dict[str, Any] = {"basis": basis, "method": method, "reference_intervals": reference}
    for k, name in enumerate(BACKGROUND_PERIODS):
        chosen_values = la90[(period_index == k) & sufficient & np.isfinite(la90)]
        levels_db, counts = whole_db_distribution(chosen_values)
        out[name] = {
            "LA90": db(combine_logged_levels(chosen_values, method)),
            "n_intervals": int(chosen_values.size),
            "distribution": [
                [int(level), int(count)]
                for level, count in zip(levels_db.tolist(), counts.tolist(), strict=True)
            ],
        }
    return out


def background_periods_of(ctx: Context, instants_ms: np.ndarray) -> np.ndarray:
    """Background period index per UTC instant (index into ``BACKGROUND_PERIODS``), vectorised."""
    settings = ctx.settings.background
    spans = day_offset_boundaries(ctx.candidate_days, [settings.day_start, settings.night_start],
                                  ctx.tz)
    segment = np.searchsorted(spans, np.asarray(instants_ms, dtype=np.int64), side="right")
    return np.asarray((segment - 1) % len(BACKGROUND_PERIODS), dtype=np.int64)


def majority_period(ctx: Context, spans_ms: np.ndarray) -> str | None:
    """Return the background period ("day"/"night") holding most of the time of ``spans_ms``.

    Each ``[from, to)`` span is weighed by its length and placed by its middle instant;
    spans are short against a period (windows of an assessment, runs of operating
    readings), so the middle decides. None when there are no spans.
    """
    if spans_ms.size == 0:
        return None
    middle = (spans_ms[:, 0] + spans_ms[:, 1]) // 2
    weights = (spans_ms[:, 1] - spans_ms[:, 0]).astype(float)
    periods = background_periods_of(ctx, middle)
    totals = np.bincount(periods, weights=weights, minlength=len(BACKGROUND_PERIODS))
    return BACKGROUND_PERIODS[int(np.argmax(totals))]
