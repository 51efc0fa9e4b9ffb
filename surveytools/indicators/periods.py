r"""Period arithmetic: splitting intervals at period boundaries and Lden / Ldn / CNEL.

Times are integer milliseconds on one axis (e.g. UTC epoch ms), so splitting is exact:
the pieces of an interval always add up to its duration.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import ArrayLike, NDArray

from surveytools.constants import (
    CNEL_DAY_HOURS_H,
    CNEL_EVENING_HOURS_H,
    CNEL_EVENING_PENALTY_DB,
    CNEL_NIGHT_HOURS_H,
    CNEL_NIGHT_PENALTY_DB,
    DB_PER_DECADE_POWER,
    HOURS_PER_DAY,
    LDEN_DAY_HOURS_H,
    LDEN_EVENING_HOURS_H,
    LDEN_EVENING_PENALTY_DB,
    LDEN_NIGHT_HOURS_H,
    LDEN_NIGHT_PENALTY_DB,
    LDN_DAY_HOURS_H,
    LDN_NIGHT_HOURS_H,
    LDN_NIGHT_PENALTY_DB,
    LN10_OVER_10,
)
from surveytools.indicators._arrays import FloatArray, as_float_array, scalar_or_array

__all__ = [
    "cnel",
    "lden",
    "ldn",
    "penalised_day_evening_night",
    "scheme_hours",
    "split_at_boundaries",
]

IntArray = NDArray[np.int64]


def _as_ms(values: ArrayLike, name: str) -> IntArray:
    """Return integer milliseconds; non-integer input is a programming error."""
    raw = np.asarray(values)
    if raw.dtype.kind in "iu":
        return raw.astype(np.int64).ravel()
    as_float = np.asarray(raw, dtype=np.float64).ravel()
    if not np.all(np.isfinite(as_float) & (as_float == np.round(as_float))):
        raise ValueError(f"{name} must be whole milliseconds (int64); got dtype {raw.dtype}")
    return as_float.astype(np.int64)


def split_at_boundaries(
    start_ms: ArrayLike, duration_ms: ArrayLike, boundaries_ms: ArrayLike
) -> tuple[IntArray, IntArray, IntArray, IntArray]:
    """Split intervals at every boundary instant strictly inside them.

    Interval ``i`` covers ``[start_i, start_i + duration_i)``. A boundary equal to the
    start (or the end) does not split it. Fully vectorised: ``np.searchsorted`` finds
    the boundaries inside each interval and ``np.repeat`` lays out the pieces.

    Parameters
    ----------
    start_ms : array-like of int
        Interval starts. [ms]
    duration_ms : array-like of int
        Interval lengths; an interval with a length <= 0 is returned as one piece,
        unchanged. [ms]
    boundaries_ms : array-like of int
        Boundary instants, sorted ascending, on the same time axis. Repeated instants
        are allowed (e.g. a zero-length evening) and produce zero-length pieces, so
        segment numbers stay regular. [ms]

    Returns
    -------
    index : numpy.ndarray of int64
        Source interval of each piece (pieces of one interval are consecutive, in time
        order).
    piece_start_ms : numpy.ndarray of int64
        Start of each piece. [ms]
    piece_duration_ms : numpy.ndarray of int64
        Length of each piece; the pieces of an interval sum to its duration. [ms]
    segment : numpy.ndarray of int64
        Number of boundaries <= the piece start: segment ``k`` lies between
        ``boundaries[k-1]`` and ``boundaries[k]`` (a zero-length piece between repeated
        boundaries takes the segment number between them).

    Raises
    ------
    ValueError
        If the boundaries are not sorted, the inputs are not whole milliseconds, or
        ``start_ms`` and ``duration_ms`` differ in length (programming errors).

    References
    ----------
    .. [1] design.md §5: an interval that straddles a period boundary is split in
       proportion to its time in each period.
    """
    starts = _as_ms(start_ms, "start_ms")
    durations = _as_ms(duration_ms, "duration_ms")
    bounds = _as_ms(boundaries_ms, "boundaries_ms")
    if starts.shape != durations.shape:
        raise ValueError(
            f"start_ms and duration_ms must have the same length; got {starts.size} "
            f"and {durations.size}"
        )
    if bounds.size > 1 and np.any(np.diff(bounds) < 0):
        raise ValueError("boundaries_ms must be sorted ascending")
    ends = starts + durations
    first_inside = np.searchsorted(bounds, starts, side="right")
    after_inside = np.searchsorted(bounds, ends, side="left")
    n_inside = np.maximum(after_inside - first_inside, 0)
    n_pieces = n_inside + 1
    if not n_inside.any():  # no interval is cut: one piece each, as it is
        return (np.arange(starts.size, dtype=np.int64), starts.copy(), durations.copy(),
                first_inside.astype(np.int64))

    index = np.repeat(np.arange(starts.size, dtype=np.int64), n_pieces)
    offsets = np.cumsum(n_pieces) - n_pieces
    k = np.arange(index.size, dtype=np.int64) - np.repeat(offsets, n_pieces)
    segment = first_inside[index] + k
    is_first = k == 0
    is_last = k == n_inside[index]
    if bounds.size:
        lower = bounds[np.clip(segment - 1, 0, bounds.size - 1)]
        upper = bounds[np.clip(segment, 0, bounds.size - 1)]
    else:
        lower = upper = np.zeros(index.size, dtype=np.int64)
    piece_start = np.where(is_first, starts[index], lower)
    piece_end = np.where(is_last, ends[index], upper)
    return (
        index,
        piece_start.astype(np.int64),
        (piece_end - piece_start).astype(np.int64),
        segment.astype(np.int64),
    )


def scheme_hours(
    day_start_h: float, evening_start_h: float, night_start_h: float
) -> tuple[float, float, float]:
    """Nominal lengths of the day, evening and night periods of a 24 h scheme.

    Parameters
    ----------
    day_start_h, evening_start_h, night_start_h : float
        Local clock hours at which the periods start, in cyclic order; the evening is
        empty when ``evening_start_h == night_start_h`` (an Ldn scheme). [h]

    Returns
    -------
    tuple of float
        Hours of day, evening and night; they add up to 24. [h]

    Raises
    ------
    ValueError
        If the starts are not finite or not in cyclic order day -> evening -> night
        (a settings error the caller reports).

    References
    ----------
    .. [1] Directive 2002/49/EC Annex I §1 (start of day chosen by the Member State;
       evening may be shortened by one or two hours).
    """
    starts = (float(day_start_h), float(evening_start_h), float(night_start_h))
    if not all(np.isfinite(starts)):
        raise ValueError(f"period starts must be finite hours, got {starts}")
    day = (starts[1] - starts[0]) % HOURS_PER_DAY
    evening = (starts[2] - starts[1]) % HOURS_PER_DAY
    night = (starts[0] - starts[2]) % HOURS_PER_DAY
    if not np.isclose(day + evening + night, HOURS_PER_DAY) or night == 0 or day == 0:
        raise ValueError(
            f"period starts day={starts[0]}, evening={starts[1]}, night={starts[2]} must run "
            "day -> evening -> night around the clock with a non-empty day and night; "
            "give e.g. 7, 19, 23"
        )
    return day, evening, night


def penalised_day_evening_night(
    levels_db: Sequence[ArrayLike], hours: Sequence[float], penalties_db: Sequence[float]
) -> float | FloatArray:
    r"""General day-evening-night indicator with penalties.

    .. math:: L = 10 \lg\left(\frac{1}{24}\sum_k h_k 10^{(L_k + P_k)/10}\right)

    Parameters
    ----------
    levels_db : sequence of array-like
        One level (or array of levels, broadcast together) per period. [dB]
    hours : sequence of float
        Actual length of each period; periods of 0 h are left out (their level may be
        NaN). [h]
    penalties_db : sequence of float
        Penalty added to each period's level. [dB]

    Returns
    -------
    float or numpy.ndarray
        The indicator; NaN wherever a period with hours > 0 has a NaN level. A float
        when every level is a scalar. [dB]

    Raises
    ------
    ValueError
        If the three sequences differ in length or an hour count is negative
        (programming errors).

    References
    ----------
    .. [1] Directive 2002/49/EC Annex I §1 (Lden).
    .. [2] Engineering ToolBox, Day-Night Sound Level (Ldn, EPA).
    """
    if not (len(levels_db) == len(hours) == len(penalties_db)) or len(hours) == 0:
        raise ValueError(
            f"need one hour count and one penalty per level; got {len(levels_db)} levels, "
            f"{len(hours)} hour counts and {len(penalties_db)} penalties"
        )
    hour_values = np.asarray(hours, dtype=np.float64)
    if np.any(~np.isfinite(hour_values) | (hour_values < 0)):
        raise ValueError(f"hours must be finite and >= 0, got {list(hours)}")
    active = [k for k in range(len(hours)) if hour_values[k] > 0]
    if not active:
        raise ValueError("at least one period must last more than 0 h")
    penalised = np.broadcast_arrays(
        *(as_float_array(levels_db[k]) + float(penalties_db[k]) for k in active)
    )
    stacked = np.stack([np.asarray(p, dtype=np.float64) for p in penalised])
    finite = np.all(np.isfinite(stacked), axis=0)
    safe = np.where(finite, stacked, 0.0)
    peak = np.max(safe, axis=0)
    weights = (hour_values[active] / HOURS_PER_DAY).reshape((-1,) + (1,) * peak.ndim)
    energy = np.sum(weights * np.exp((safe - peak) * LN10_OVER_10), axis=0)
    out = np.where(finite, peak + DB_PER_DECADE_POWER * np.log10(energy), np.nan)
    return scalar_or_array(np.asarray(out, dtype=np.float64))


def lden(
    l_day: ArrayLike,
    l_evening: ArrayLike,
    l_night: ArrayLike,
    day_h: float = LDEN_DAY_HOURS_H,
    evening_h: float = LDEN_EVENING_HOURS_H,
    night_h: float = LDEN_NIGHT_HOURS_H,
    evening_penalty_db: float = LDEN_EVENING_PENALTY_DB,
    night_penalty_db: float = LDEN_NIGHT_PENALTY_DB,
) -> float | FloatArray:
    r"""Day-evening-night level Lden.

    .. math:: L_{den} = 10 \lg \frac{1}{24}\left(h_d 10^{L_d/10} + h_e 10^{(L_e+5)/10}
              + h_n 10^{(L_n+10)/10}\right)

    Parameters
    ----------
    l_day, l_evening, l_night : array-like
        Period levels (LAeq over the period). [dB]
    day_h, evening_h, night_h : float
        Period lengths; 12 / 4 / 8 by default, e.g. 13 / 3 / 8 for a shortened
        evening (see :func:`scheme_hours`). [h]
    evening_penalty_db, night_penalty_db : float
        Penalties. [dB]

    Returns
    -------
    float or numpy.ndarray
        Lden; NaN where any level used is NaN. [dB]

    References
    ----------
    .. [1] Directive 2002/49/EC, Annex I §1.
    """
    return penalised_day_evening_night(
        (l_day, l_evening, l_night),
        (day_h, evening_h, night_h),
        (0.0, evening_penalty_db, night_penalty_db),
    )


def ldn(
    l_day: ArrayLike,
    l_night: ArrayLike,
    day_h: float = LDN_DAY_HOURS_H,
    night_h: float = LDN_NIGHT_HOURS_H,
    night_penalty_db: float = LDN_NIGHT_PENALTY_DB,
) -> float | FloatArray:
    r"""Day-night level Ldn (DNL): 07-22 / 22-07 with +10 dB at night.

    .. math:: L_{dn} = 10 \lg \frac{1}{24}\left(15 \cdot 10^{L_d/10}
              + 9 \cdot 10^{(L_n+10)/10}\right)

    Parameters
    ----------
    l_day, l_night : array-like
        Period levels. [dB]
    day_h, night_h : float
        Period lengths. [h]
    night_penalty_db : float
        Night penalty. [dB]

    Returns
    -------
    float or numpy.ndarray
        Ldn; NaN where any level is NaN. [dB]

    References
    ----------
    .. [1] National Academies glossary (ANSI terminology), day-night average sound level.
    .. [2] Engineering ToolBox, Day-Night Sound Level.
    """
    return penalised_day_evening_night(
        (l_day, l_night), (day_h, night_h), (0.0, night_penalty_db)
    )


def cnel(
    l_day: ArrayLike,
    l_evening: ArrayLike,
    l_night: ArrayLike,
    day_h: float = CNEL_DAY_HOURS_H,
    evening_h: float = CNEL_EVENING_HOURS_H,
    night_h: float = CNEL_NIGHT_HOURS_H,
    evening_penalty_db: float = CNEL_EVENING_PENALTY_DB,
    night_penalty_db: float = CNEL_NIGHT_PENALTY_DB,
) -> float | FloatArray:
    """Community noise equivalent level CNEL: 07-19 / 19-22 (+5) / 22-07 (+10).

    Not the EU Lden (whose evening is 19-23 and night 23-07), although ASA terminology
    gives CNEL the symbol "Lden".

    Parameters
    ----------
    l_day, l_evening, l_night : array-like
        Period levels. [dB]
    day_h, evening_h, night_h : float
        Period lengths. [h]
    evening_penalty_db, night_penalty_db : float
        Penalties. [dB]

    Returns
    -------
    float or numpy.ndarray
        CNEL; NaN where any level is NaN. [dB]

    References
    ----------
    .. [1] ASA/ANSI terminology, community noise equivalent level.
    .. [2] California Code of Regulations Title 21 §5001.
    """
    return penalised_day_evening_night(
        (l_day, l_evening, l_night),
        (day_h, evening_h, night_h),
        (0.0, evening_penalty_db, night_penalty_db),
    )
