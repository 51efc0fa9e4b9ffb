"""Private helpers shared by the indicator modules: tolerant conversion to float arrays.

Indicator functions never raise for bad data: values that are not numbers become NaN.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

FloatArray = NDArray[np.float64]


def _to_float(value: Any) -> float:
    """Convert one value to float; anything that is not a number becomes NaN."""
    if isinstance(value, bool | np.bool_):
        return math.nan
    try:
        return float(value)
    except (TypeError, ValueError, OverflowError):
        return math.nan


def as_float_array(values: ArrayLike | None) -> FloatArray:
    """Return ``values`` as a float64 array; non-numeric entries become NaN.

    ``None`` becomes a 0-d NaN array. The fast path is a plain ``np.asarray``; only when
    that fails (text, ``None`` inside an object array) is each element converted.
    """
    if values is None:
        return np.array(np.nan)
    try:
        return np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError):
        raw = np.asarray(values, dtype=object)
        flat = np.fromiter((_to_float(v) for v in raw.ravel()), dtype=np.float64,
                           count=raw.size)
        return flat.reshape(raw.shape)


def as_group_array(groups: ArrayLike, n_groups: int) -> NDArray[np.int64]:
    """Return group indices as int64; anything outside ``0 .. n_groups-1`` becomes -1.

    Raises
    ------
    ValueError
        If ``n_groups`` is negative (a programming error).
    """
    if n_groups < 0:
        raise ValueError(f"n_groups must be >= 0, got {n_groups}")
    raw = np.asarray(groups)
    if raw.dtype.kind in "iu":
        out = raw.astype(np.int64)
        if out.size == 0 or (int(out.min()) >= -1 and int(out.max()) < n_groups):
            return out  # already -1 or in range
    else:
        as_float = as_float_array(raw)
        whole = np.isfinite(as_float) & (as_float == np.round(as_float))
        out = np.where(whole, as_float, -1.0).astype(np.int64)
    return np.where((out >= 0) & (out < n_groups), out, -1)


def scalar_or_array(values: FloatArray) -> float | FloatArray:
    """Return a Python float for a 0-d result, the array otherwise."""
    if values.ndim == 0:
        return float(values)
    return values


def grouped_arrays(levels_db: ArrayLike, durations_s: ArrayLike | None, groups: ArrayLike,
                   n_groups: int) -> tuple[FloatArray, FloatArray, NDArray[np.int64]]:
    """Flatten grouped inputs into (levels, weights, group index), unfiltered.

    Durations default to 1 each. [dB] [s]

    Raises
    ------
    ValueError
        If the three inputs differ in length (a programming error).
    """
    levels = as_float_array(levels_db).ravel()
    weights = (
        np.ones(levels.shape) if durations_s is None else as_float_array(durations_s).ravel()
    )
    group_index = as_group_array(groups, n_groups).ravel()
    if not (levels.shape == weights.shape == group_index.shape):
        raise ValueError(
            f"levels_db, durations_s and groups must have the same length; got "
            f"{levels.size}, {weights.size} and {group_index.size}"
        )
    return levels, weights, group_index
