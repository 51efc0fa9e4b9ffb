"""Daily noise exposure level LEX,8h (for caution lines only)."""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike

from surveytools.constants import (
    DB_PER_DECADE_POWER,
    LEX8H_LIMIT_DB,
    LEX8H_LOWER_ACTION_DB,
    LEX8H_UPPER_ACTION_DB,
    LEX_REFERENCE_DURATION_S,
)
from surveytools.indicators._arrays import FloatArray, as_float_array, scalar_or_array

__all__ = ["ACTION_VALUE_NAMES", "exceeds_action_values", "lex_8h"]

#: Names of the Directive 2003/10/EC values, most severe first (returned by
#: :func:`exceeds_action_values`).
ACTION_VALUE_NAMES = (
    "exposure limit value",
    "upper exposure action value",
    "lower exposure action value",
)


def lex_8h(laeq_db: ArrayLike, duration_s: ArrayLike) -> float | FloatArray:
    r"""Daily noise exposure level normalised to an 8 h working day.

    .. math:: L_{EX,8h} = L_{Aeq,T_e} + 10 \lg(T_e / T_0), \quad T_0 = 8\ \mathrm{h}

    Parameters
    ----------
    laeq_db : array-like
        A-weighted equivalent level over the exposure. [dB]
    duration_s : array-like
        Effective duration of the exposure T_e. [s]

    Returns
    -------
    float or numpy.ndarray
        LEX,8h; NaN for non-positive or non-finite durations. [dB]

    References
    ----------
    .. [1] ISO 9612:2009, daily noise exposure level.
    .. [2] Directive 2003/10/EC Art. 2 (definition of LEX,8h).
    """
    level, duration = np.broadcast_arrays(as_float_array(laeq_db), as_float_array(duration_s))
    ok = np.isfinite(duration) & (duration > 0)
    ratio = np.where(ok, duration, LEX_REFERENCE_DURATION_S) / LEX_REFERENCE_DURATION_S
    out = np.where(ok, level + DB_PER_DECADE_POWER * np.log10(ratio), np.nan)
    return scalar_or_array(np.asarray(out, dtype=np.float64))


def exceeds_action_values(lex_db: float) -> str:
    """Name the highest Directive 2003/10/EC exposure value that LEX,8h reaches.

    Used only for caution lines: an environmental survey is not an occupational
    exposure assessment.

    Parameters
    ----------
    lex_db : float
        Daily noise exposure level LEX,8h. [dB(A)]

    Returns
    -------
    str
        "exposure limit value" (>= 87), "upper exposure action value" (>= 85),
        "lower exposure action value" (>= 80), or "" (below 80, or not a number).

    References
    ----------
    .. [1] Directive 2003/10/EC Art. 3(1): limit 87, upper action 85, lower action
       80 dB(A).
    """
    try:
        value = float(lex_db)
    except (TypeError, ValueError):
        return ""
    if math.isnan(value):
        return ""
    thresholds = (LEX8H_LIMIT_DB, LEX8H_UPPER_ACTION_DB, LEX8H_LOWER_ACTION_DB)
    for threshold, name in zip(thresholds, ACTION_VALUE_NAMES, strict=True):
        if value >= threshold:
            return name
    return ""
