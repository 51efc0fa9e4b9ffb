"""Geometric divergence: level at another distance from a point or line source."""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from surveytools.constants import (
    LINE_SOURCE_DB_PER_DECADE_DISTANCE,
    POINT_SOURCE_DB_PER_DECADE_DISTANCE,
)
from surveytools.indicators._arrays import FloatArray, as_float_array, scalar_or_array

__all__ = ["line_source_level_at", "point_source_level_at"]


def _level_at(
    level_db: ArrayLike, r1_m: ArrayLike, r2_m: ArrayLike, db_per_decade: float
) -> float | FloatArray:
    """Shared form L2 = L1 - k lg(r2/r1); NaN for non-positive or non-finite distances."""
    level = as_float_array(level_db)
    r1 = as_float_array(r1_m)
    r2 = as_float_array(r2_m)
    level, r1, r2 = np.broadcast_arrays(level, r1, r2)
    ok = np.isfinite(r1) & np.isfinite(r2) & (r1 > 0) & (r2 > 0)
    ratio = np.where(ok, r2, 1.0) / np.where(ok, r1, 1.0)
    out = np.where(ok, level - db_per_decade * np.log10(ratio), np.nan)
    return scalar_or_array(np.asarray(out, dtype=np.float64))


def point_source_level_at(
    level_db: ArrayLike, r1_m: ArrayLike, r2_m: ArrayLike
) -> float | FloatArray:
    r"""Level at distance r2 from a point source, given the level at r1.

    .. math:: L_2 = L_1 - 20 \lg(r_2 / r_1)

    Geometric divergence only (no air absorption, ground or screening).

    Parameters
    ----------
    level_db : array-like
        Level at distance r1. [dB]
    r1_m, r2_m : array-like
        Distances from the source. [m]

    Returns
    -------
    float or numpy.ndarray
        Level at r2; NaN for non-positive distances. [dB]

    References
    ----------
    .. [1] ISO 9613-2:1996 7.1, attenuation due to geometrical divergence,
       A_div = 20 lg(d/d0) + 11 dB (the difference between two distances).
    """
    return _level_at(level_db, r1_m, r2_m, POINT_SOURCE_DB_PER_DECADE_DISTANCE)


def line_source_level_at(
    level_db: ArrayLike, r1_m: ArrayLike, r2_m: ArrayLike
) -> float | FloatArray:
    r"""Level at distance r2 from an incoherent infinite line source, given it at r1.

    .. math:: L_2 = L_1 - 10 \lg(r_2 / r_1)

    Parameters
    ----------
    level_db : array-like
        Level at distance r1. [dB]
    r1_m, r2_m : array-like
        Perpendicular distances from the line. [m]

    Returns
    -------
    float or numpy.ndarray
        Level at r2; NaN for non-positive distances. [dB]

    References
    ----------
    .. [1] Hong Kong EPD noise education: line source -3 dB per doubling of distance.
    """
    return _level_at(level_db, r1_m, r2_m, LINE_SOURCE_DB_PER_DECADE_DISTANCE)
