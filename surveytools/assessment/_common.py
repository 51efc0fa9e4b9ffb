"""Shared plumbing of the assessment: reading pieces, grouped combination, JSON rounding."""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from surveytools.constants import WHOLE_DB_HALF_STEP_DB, WHOLE_DB_STEP_DB
from surveytools.indicators.percentiles import COMBINE_METHODS
from surveytools.indicators.periods import split_at_boundaries
from surveytools.indicators.reporting import reported_level

IntArray = NDArray[np.int64]
FloatArray = NDArray[np.float64]

#: Decimals of levels in JSON (0.001 dB; full precision where 0.001 dB would report
#: differently, see :func:`db_list`) and of durations (1 ms). README "Results JSON".
LEVEL_DECIMALS = 3
SECONDS_DECIMALS = 3
#: Milliseconds per second [ms/s]. Definition (SI prefix milli).
MS_PER_S = 1000.0


def db(value: Any) -> float | None:
    """Return a level for JSON (see :func:`db_list`); None when not a finite number."""
    try:
        number = float(value)
    except (TypeError, ValueError):
        return None
    return db_list([number])[0] if math.isfinite(number) else None


def db_list(values: ArrayLike) -> list[float | None]:
    """Levels for JSON: 0.001 dB, re-rounding to the reported figure; NaN -> None.

    A JSON level rounded once more by :func:`~surveytools.indicators.reporting.reported_level`
    must give the figure reported and judged from the unrounded level (design.md §9, one
    rounding): a level within 0.0005 dB of a reporting tie (45.0496 would become 45.050
    and then 45.1, where the level itself reports 45.0) is written at full precision.
    """
    raw = np.asarray(values, dtype=np.float64).ravel()
    short = np.round(raw, LEVEL_DECIMALS)
    same = np.asarray(reported_level(short)) == np.asarray(reported_level(raw))
    arr = np.where(same | ~np.isfinite(raw), short, raw) + 0.0
    return [v if math.isfinite(v) else None for v in arr.tolist()]


def seconds(value: Any) -> float | None:
    """Return a duration for JSON: rounded to 1 ms, None when not finite."""
    try:
        number = float(value)
    except (TypeError, ValueError):
        return None
    return round(number, SECONDS_DECIMALS) if math.isfinite(number) else None


def seconds_list(values: ArrayLike) -> list[float | None]:
    """Durations for JSON, vectorised rounding."""
    arr = np.round(np.asarray(values, dtype=np.float64), SECONDS_DECIMALS)
    return [v if math.isfinite(v) else None for v in arr.tolist()]


def fraction(value: float) -> float | None:
    """Return a 0..1 fraction for JSON (4 decimals)."""
    return round(float(value), 4) if math.isfinite(float(value)) else None


@dataclass(frozen=True)
class Pieces:
    """Readings split at a set of boundary instants.

    ``index`` is the reading of each piece, ``segment`` the number of boundaries at or
    before the piece start (see ``split_at_boundaries``), ``duration_s`` its length [s].
    """

    index: IntArray
    start_ms: IntArray
    duration_ms: IntArray
    segment: IntArray

    @cached_property
    def duration_s(self) -> FloatArray:
        """Piece durations (computed once) [s]."""
        return self.duration_ms / MS_PER_S

    @cached_property
    def weights_ms(self) -> FloatArray:
        """Piece durations as exact whole-millisecond weights (for LN: only ratios count) [ms].

        Sums of these are exact in double precision, so "exceeded for N % of the time" is
        decided without rounding error even for 100 ms logs (0.1 s is not a binary fraction).
        """
        return self.duration_ms.astype(np.float64)


def split(start_ms: IntArray, duration_ms: IntArray, boundaries_ms: IntArray) -> Pieces:
    """Split readings at ``boundaries_ms`` (sorted UTC instants)."""
    index, piece_start, piece_duration, segment = split_at_boundaries(
        start_ms, duration_ms, boundaries_ms
    )
    return Pieces(index, piece_start, piece_duration, segment)


def expand_order(order: IntArray, index: IntArray, n_items: int) -> IntArray:
    """Carry an order of items over to their pieces.

    Parameters
    ----------
    order : numpy.ndarray of int
        A permutation of ``0 .. n_items-1``.
    index : numpy.ndarray of int
        Item of each piece, non-decreasing, every item with at least one piece (the
        ``index`` of :func:`split`).
    n_items : int
        Number of items.

    Returns
    -------
    numpy.ndarray of int64
        Piece positions: the pieces of ``order[0]`` (in piece order), then those of
        ``order[1]``, ...
    """
    counts = np.bincount(index, minlength=n_items)
    first = np.cumsum(counts) - counts
    if index.size == n_items:  # one piece per item
        return first[order].astype(np.int64)
    reps = counts[order]
    starts = np.repeat(first[order], reps)
    within = np.arange(index.size, dtype=np.int64) - np.repeat(np.cumsum(reps) - reps, reps)
    return (starts + within).astype(np.int64)


def segment_groups(segment: IntArray, n_groups: int) -> IntArray:
    """Group ``segment - 1`` for segments between the first and last boundary, else -1."""
    group = segment - 1
    return np.where((group >= 0) & (group < n_groups), group, -1)


def whole_db(values: FloatArray) -> FloatArray:
    """Round half up to whole decibels (the rule of ``whole_db_distribution``)."""
    return np.floor(values / WHOLE_DB_STEP_DB + WHOLE_DB_HALF_STEP_DB / WHOLE_DB_STEP_DB) * (
        WHOLE_DB_STEP_DB
    )


def grouped_combine(
    values_db: ArrayLike, groups: ArrayLike, n_groups: int, method: str
) -> FloatArray:
    """``combine_logged_levels`` per group, vectorised (sort once, index the groups).

    Same conventions as :func:`surveytools.indicators.percentiles.combine_logged_levels`:
    ``median`` (mean of the two middle values for an even count, as ``numpy.median``),
    ``mode`` of whole-dB values (half up; lowest of equally frequent values), ``mean``
    (arithmetic). NaN for groups without a finite value.

    Raises
    ------
    ValueError
        If ``method`` is not one of ``COMBINE_METHODS``.
    """
    if method not in COMBINE_METHODS:
        raise ValueError(f"unknown method {method!r}; choose one of {', '.join(COMBINE_METHODS)}")
    values = np.asarray(values_db, dtype=np.float64).ravel()
    group = np.asarray(groups, dtype=np.int64).ravel()
    keep = np.isfinite(values) & (group >= 0) & (group < n_groups)
    values, group = values[keep], group[keep]
    out = np.full(n_groups, np.nan)
    if values.size == 0:
        return out
    counts = np.bincount(group, minlength=n_groups)
    has = counts > 0
    if method == "mean":
        sums = np.bincount(group, weights=values, minlength=n_groups)
        out[has] = sums[has] / counts[has]
        return out
    if method == "median":
        order = np.lexsort((values, group))
        ordered = values[order]
        starts = np.cumsum(counts) - counts
        low = starts + (counts - 1) // 2
        high = starts + counts // 2
        out[has] = (ordered[low[has]] + ordered[high[has]]) / 2.0
        return out
    whole = whole_db(values)
    lowest = float(np.min(whole))
    steps = np.rint((whole - lowest) / WHOLE_DB_STEP_DB).astype(np.int64)
    width = int(steps.max()) + 1
    keys, key_counts = np.unique(group * width + steps, return_counts=True)
    key_group = keys // width
    key_level = lowest + (keys % width) * WHOLE_DB_STEP_DB
    # Per group: the largest count first, then the lowest level (ties -> lowest).
    order = np.lexsort((key_level, -key_counts, key_group))
    first = np.ones(order.size, dtype=bool)
    first[1:] = key_group[order][1:] != key_group[order][:-1]
    chosen = order[first]
    out[key_group[chosen]] = key_level[chosen]
    return out


def modal_value(values: ArrayLike) -> float:
    """Most frequent value (lowest of ties); NaN when empty."""
    arr = np.asarray(values, dtype=np.float64)
    arr = arr[np.isfinite(arr)]
    if arr.size == 0:
        return float("nan")
    levels, counts = np.unique(arr, return_counts=True)
    return float(levels[int(np.argmax(counts))])


def percent_label(percent: float) -> str:
    """``90.0`` -> ``"90"``, ``99.5`` -> ``"99.5"``."""
    return f"{percent:g}"


def run_spans(mask: NDArray[np.bool_]) -> tuple[IntArray, IntArray]:
    """First and last index of each run of True in ``mask`` (vectorised run-length)."""
    m = np.asarray(mask, dtype=bool)
    if m.size == 0:
        empty = np.zeros(0, dtype=np.int64)
        return empty, empty
    padded = np.concatenate(([False], m, [False])).astype(np.int8)
    change = np.diff(padded)
    first = np.flatnonzero(change == 1).astype(np.int64)
    last = np.flatnonzero(change == -1).astype(np.int64) - 1
    return first, last
