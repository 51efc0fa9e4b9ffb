"""UTC offsets of a site's civil time at many instants (vectorised, one hour at a time).

A zone's offset changes at a handful of instants a year, so the offsets of a long log are
found per UTC hour: the offset at the start and at the end of each hour the readings
touch, and only for the rare hour that holds a change (the summer-time switches) the
offset of each reading in it. pandas' time-zone conversion (the tz database through
:mod:`zoneinfo`) gives every offset that is looked up; this module only asks it far
fewer times (a month at 1 s: some 1,500 look-ups instead of 2.7 million).
"""

from __future__ import annotations

from datetime import tzinfo

import numpy as np
import pandas as pd
from numpy.typing import ArrayLike, NDArray

#: Length of the blocks whose offset is looked up at both ends [ms]. Assumes that a zone's
#: offset changes at most once within any hour (from memory: tz database zones change
#: civil time at most a few times a year, hours or months apart).
BLOCK_MS = 3_600_000


def _looked_up(ms: NDArray[np.int64], tz: tzinfo) -> NDArray[np.int64]:
    """Offsets [ms] of each instant, from pandas' conversion (one look-up per instant)."""
    utc = pd.DatetimeIndex(ms.astype("datetime64[ms]")).tz_localize("UTC")
    local = utc.tz_convert(tz).tz_localize(None).as_unit("ms").asi8
    return np.asarray(local - ms, dtype=np.int64)


def utc_offsets_ms(ms: ArrayLike, tz: tzinfo) -> NDArray[np.int64]:
    """Return the UTC offset [ms] of the site's civil time at each instant [ms, UTC].

    Parameters
    ----------
    ms : array_like of int64
        Instants (any order; runs of the same hour are looked up once). [ms]
    tz : datetime.tzinfo
        The site's zone.

    Returns
    -------
    numpy.ndarray of int64
        Local wall-clock time minus UTC. [ms]
    """
    values = np.asarray(ms, dtype=np.int64).ravel()
    if values.size == 0:
        return values.copy()
    block = values // BLOCK_MS
    starts = np.flatnonzero(np.r_[True, block[1:] != block[:-1]])  # runs of one hour
    if 2 * starts.size >= values.size:  # few readings per run (unsorted, sparse): directly
        return _looked_up(values, tz)
    first = block[starts] * BLOCK_MS
    at_start = _looked_up(first, tz)
    at_end = _looked_up(first + (BLOCK_MS - 1), tz)
    lengths = np.diff(np.r_[starts, values.size])
    offsets = np.repeat(at_start, lengths)
    changing = at_start != at_end
    if changing.any():  # an hour with a change: each of its readings looked up
        rows = np.repeat(changing, lengths)
        offsets[rows] = _looked_up(values[rows], tz)
    return offsets
