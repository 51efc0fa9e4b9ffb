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

from dataclasses import dataclass
from datetime import date, tzinfo
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
from surveytools.assessment.context import Context, valid_pieces_of
from surveytools.assessment.intervals import logged_per_group, same_interval
from surveytools.assessment.timegrid import day_offset_boundaries, format_local, stepped_grid
from surveytools.constants import BACKGROUND_PERCENT
from surveytools.indicators.levels import grouped_valid_duration
from surveytools.indicators.percentiles import (
    combine_logged_levels,
    grouped_exceedance_levels,
    whole_db_distribution,
)
from surveytools.settings import Background

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


@dataclass(frozen=True)
class ReferenceLA90:
    """LA90 per reference interval of one selection of readings.

    Parameters
    ----------
    bounds_ms : numpy.ndarray of int64
        Reference-interval grid. [ms]
    period_index : numpy.ndarray of int64
        Index into :data:`BACKGROUND_PERIODS` per interval.
    la90_db : numpy.ndarray of float
        LA90 per interval; NaN without valid time. [dB]
    valid_s, length_s : numpy.ndarray of float
        Valid time and length of each interval. [s]
    sufficient : numpy.ndarray of bool
        Valid fraction at least the coverage threshold.
    basis : str
        :data:`BASIS_LOGGED` or :data:`BASIS_SAMPLES`.
    """

    bounds_ms: IntArray
    period_index: IntArray
    la90_db: FloatArray
    valid_s: FloatArray
    length_s: FloatArray
    sufficient: np.ndarray
    basis: str

    def values_of(self, period: str) -> FloatArray:
        """Return the LA90 of the sufficient reference intervals of a period [dB]."""
        k = BACKGROUND_PERIODS.index(period)
        return self.la90_db[(self.period_index == k) & self.sufficient
                            & np.isfinite(self.la90_db)]

    def representative(self, period: str, method: str) -> float:
        """Return the period's LA90: sufficient intervals combined by ``method`` [dB]."""
        return combine_logged_levels(self.values_of(period), method)


def reference_la90(ctx: Context, mask: np.ndarray | None = None) -> ReferenceLA90:
    """LA90 per reference interval from the readings of ``mask``.

    ``mask`` defaults to ``ctx.valid_background`` (technician background exclusions and
    ``Operating = yes`` readings left out); an assessment passes that mask with its own
    source-on readings also left out (design.md §9: the background is source-free).
    """
    settings = ctx.settings.background
    method = settings.method
    bounds, period_index = reference_bounds(ctx)
    n_groups = max(bounds.size - 1, 0)
    pieces, group = ctx.pieces_in(bounds)
    if mask is None:
        mask = ctx.valid_background
        kept = ctx.valid_pieces(pieces, "background")
    else:
        kept = valid_pieces_of(pieces, ctx.piece_levels(pieces), mask)
    valid_group = np.where(mask[pieces.index], group, -1)
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
            per_group = logged_per_group(ctx, logged, mask, bounds, chosen)
            la90 = np.where(period_index == k, per_group, la90)
    else:
        basis = BASIS_SAMPLES
        la90 = grouped_exceedance_levels(
            ctx.piece_levels(pieces), pieces.weights_ms, valid_group, n_groups,
            [BACKGROUND_PERCENT], level_order=lambda: ctx.piece_order(pieces),
        )[:, 0]
    la90 = np.where(valid_s > 0, la90, np.nan)
    sufficient = (length_s > 0) & (valid_s >= ctx.settings.coverage_threshold * length_s)
    return ReferenceLA90(bounds, period_index, la90, valid_s, length_s, sufficient, basis)


def background_section(ctx: Context, ref: ReferenceLA90 | None = None
                       ) -> dict[str, Any] | None:
    """Return the ``background`` section; None without readings.

    ``ref`` is :func:`reference_la90` of ``ctx`` when the caller has it.
    """
    if ctx.n == 0:
        return None
    ref = ref if ref is not None else reference_la90(ctx)
    return background_from_reference(ref, ctx.settings.background.method, ctx.tz)


def background_from_reference(ref: ReferenceLA90, method: str, tz: tzinfo) -> dict[str, Any]:
    """Return the ``background`` section from the LA90 per reference interval."""
    bounds = ref.bounds_ms
    starts = format_local(bounds[:-1], tz)
    ends = format_local(bounds[1:], tz)
    la90_list = db_list(ref.la90_db)
    valid_list = seconds_list(ref.valid_s)
    reference = [
        {
            "start": starts[j],
            "end": ends[j],
            "period": BACKGROUND_PERIODS[int(ref.period_index[j])],
            "LA90": la90_list[j],
            "valid_s": valid_list[j],
            "sufficient": bool(ref.sufficient[j]),
        }
        for j in range(max(bounds.size - 1, 0))
    ]
    out: dict[str, Any] = {"basis": ref.basis, "method": method, "reference_intervals": reference}
    for name in BACKGROUND_PERIODS:
        chosen_values = ref.values_of(name)
        levels_db, counts = whole_db_distribution(chosen_values)
        out[name] = {
            "LA90": db(ref.representative(name, method)),
            "n_intervals": int(chosen_values.size),
            "distribution": [
                [int(level), int(count)]
                for level, count in zip(levels_db.tolist(), counts.tolist(), strict=True)
            ],
        }
    return out


def background_periods_of(days: list[date], tz: tzinfo, settings: Background,
                          instants_ms: np.ndarray) -> np.ndarray:
    """Background period index per UTC instant (index into ``BACKGROUND_PERIODS``), vectorised.

    ``days`` are the local dates the periods are laid out on (``Context.candidate_days``,
    or those of a whole log assessed in parts).
    """
    spans = day_offset_boundaries(days, [settings.day_start, settings.night_start], tz)
    segment = np.searchsorted(spans, np.asarray(instants_ms, dtype=np.int64), side="right")
    return np.asarray((segment - 1) % len(BACKGROUND_PERIODS), dtype=np.int64)


def majority_period(days: list[date], tz: tzinfo, settings: Background,
                    spans_ms: np.ndarray) -> str | None:
    """Return the background period ("day"/"night") holding most of the time of ``spans_ms``.

    Each ``[from, to)`` span is weighed by its length and placed by its middle instant;
    spans are short against a period (windows of an assessment, runs of operating
    readings), so the middle decides. None when there are no spans. ``days`` as for
    :func:`background_periods_of`.
    """
    if spans_ms.size == 0:
        return None
    middle = (spans_ms[:, 0] + spans_ms[:, 1]) // 2
    weights = (spans_ms[:, 1] - spans_ms[:, 0]).astype(float)
    periods = background_periods_of(days, tz, settings, middle)
    totals = np.bincount(periods, weights=weights, minlength=len(BACKGROUND_PERIODS))
    return BACKGROUND_PERIODS[int(np.argmax(totals))]
