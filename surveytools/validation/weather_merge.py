"""Shared weather beside an input's own Weather sheet: which source covers which time.

Rules (vectorised over weather intervals):

* an input's own Weather sheet wins for the time it covers, from its first interval's
  start to its last interval's end; shared weather intervals are cut to the time outside
  that span (an interval straddling it keeps its parts before and after);
* a weather row stands for the time until the next row, but a jump longer than the file's
  usual step (its modal step) is a gap: only one step after the row is covered;
* gaps in the combined coverage during the survey (first reading start to last reading
  end) are listed once each.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from surveytools.validation import timebase as tb

IntArray = np.ndarray


def clip_outside(start_ms: IntArray, end_ms: IntArray, lo_ms: int, hi_ms: int
                 ) -> tuple[IntArray, IntArray, IntArray]:
    """Parts of intervals [start, end) outside the span [lo, hi).

    Returns
    -------
    starts_ms, ends_ms, index : numpy.ndarray of int64
        The parts (at most two per interval: before and after the span) and the interval
        each came from, sorted by start. [ms]
    """
    before = start_ms < lo_ms
    after = end_ms > hi_ms
    s = np.concatenate([start_ms[before], np.maximum(start_ms[after], hi_ms)])
    e = np.concatenate([np.minimum(end_ms[before], lo_ms), end_ms[after]])
    idx = np.concatenate([np.flatnonzero(before), np.flatnonzero(after)]).astype(np.int64)
    keep = e > s
    s, e, idx = s[keep], e[keep], idx[keep]
    order = np.argsort(s, kind="stable")
    return s[order], e[order], idx[order]


def covered_ends(start_ms: IntArray, duration_ms: IntArray) -> IntArray:
    """Return the end of the time each weather row covers (at most one usual step) [ms]."""
    step = tb.modal_step_ms(start_ms) if start_ms.size > 1 else None
    if step is None:
        return start_ms + duration_ms
    return start_ms + np.minimum(duration_ms, step)


def combine(own: pd.DataFrame | None, shared: pd.DataFrame) -> tuple[pd.DataFrame, int]:
    """Weather intervals of the own sheet plus the shared ones cut to outside its span.

    Both frames have ``row``, ``start_ms``, ``duration_ms``, ``wind_m_s``, ``rain_mm``;
    the result adds ``source`` (``"own"`` or ``"shared"``) and ``covered_end_ms``.

    Returns
    -------
    weather : pandas.DataFrame
        Sorted by start.
    shared_used : int
        Shared intervals (or parts) kept.
    """
    parts = []
    lo = hi = None
    if own is not None and len(own):
        own_start = own["start_ms"].to_numpy(np.int64)
        own_dur = own["duration_ms"].to_numpy(np.int64)
        lo, hi = int(own_start.min()), int((own_start + own_dur).max())
        parts.append(own.assign(source="own", covered_end_ms=covered_ends(own_start, own_dur)))
    sh_start = shared["start_ms"].to_numpy(np.int64)
    sh_dur = shared["duration_ms"].to_numpy(np.int64)
    sh_cover = covered_ends(sh_start, sh_dur)
    if lo is None or hi is None:
        kept = shared.assign(source="shared", covered_end_ms=sh_cover)
    else:
        s, e, idx = clip_outside(sh_start, sh_start + sh_dur, lo, hi)
        kept = shared.iloc[idx].reset_index(drop=True).assign(
            start_ms=s, duration_ms=e - s, source="shared",
            covered_end_ms=np.clip(sh_cover[idx], s, e))
    parts.append(kept)
    out = pd.concat(parts, ignore_index=True).sort_values("start_ms", kind="stable")
    return out.reset_index(drop=True), len(kept)


def coverage_gaps(start_ms: IntArray, covered_end_ms: IntArray, first_ms: int, last_ms: int
                  ) -> list[tuple[int, int]]:
    """Return the spans [ms] of [first, last) that no weather interval covers, in order."""
    if last_ms <= first_ms:
        return []
    order = np.argsort(start_ms, kind="stable")
    s = start_ms[order]
    reach = np.maximum.accumulate(covered_end_ms[order]) if s.size else s
    # a gap opens where an interval starts after everything before it has ended
    gap_starts = np.concatenate([[first_ms], reach]) if s.size else np.array([first_ms])
    gap_ends = np.concatenate([s, [last_ms]]) if s.size else np.array([last_ms])
    lo = np.maximum(gap_starts, first_ms)
    hi = np.minimum(gap_ends, last_ms)
    open_ = hi > lo
    return [(int(a), int(b)) for a, b in zip(lo[open_], hi[open_], strict=True)]
