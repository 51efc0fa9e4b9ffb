"""Rating level and its comparison with the background (BS 4142:2014 approach)."""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike

from surveytools.constants import BS4142_ADVERSE_DB, BS4142_SIGNIFICANT_ADVERSE_DB
from surveytools.indicators._arrays import FloatArray, as_float_array, scalar_or_array

__all__ = [
    "IMPACT_INDICATIONS",
    "excess_over_background",
    "impact_indication",
    "rating_level",
]

#: Initial-estimate wordings returned by :func:`impact_indication`, most severe first;
#: the last one is used when the excess is not a number.
IMPACT_INDICATIONS = (
    "likely significant adverse impact",
    "likely adverse impact",
    "lower likelihood of adverse impact",
    "not available",
)


def rating_level(
    specific_db: ArrayLike,
    tonal_db: ArrayLike = 0.0,
    impulsive_db: ArrayLike = 0.0,
    intermittency_db: ArrayLike = 0.0,
    other_db: ArrayLike = 0.0,
) -> float | FloatArray:
    """Rating level: the specific level plus the corrections for acoustic features.

    Parameters
    ----------
    specific_db : array-like
        Specific sound level over the reference interval. [dB]
    tonal_db, impulsive_db, intermittency_db, other_db : array-like, optional
        Corrections for tonality, impulsivity, intermittency and other sound
        characteristics (e.g. +2/+4/+6 dB for tonality). [dB]

    Returns
    -------
    float or numpy.ndarray
        L_Ar; NaN where any term is NaN. [dB]

    References
    ----------
    .. [1] BS 4142:2014+A1:2019 clause 9 (rating level, feature corrections).
    """
    total = (
        as_float_array(specific_db)
        + as_float_array(tonal_db)
        + as_float_array(impulsive_db)
        + as_float_array(intermittency_db)
        + as_float_array(other_db)
    )
    return scalar_or_array(np.asarray(total, dtype=np.float64))


def excess_over_background(rating_db: ArrayLike, background_db: ArrayLike) -> float | FloatArray:
    """Rating level minus background sound level.

    Parameters
    ----------
    rating_db : array-like
        Rating level L_Ar. [dB]
    background_db : array-like
        Background sound level LA90. [dB]

    Returns
    -------
    float or numpy.ndarray
        The excess (negative when the rating is below the background); NaN where either
        is NaN. [dB]

    References
    ----------
    .. [1] BS 4142:2014+A1:2019 clause 11 (initial estimate of impact).
    """
    excess = as_float_array(rating_db) - as_float_array(background_db)
    return scalar_or_array(np.asarray(excess, dtype=np.float64))


def impact_indication(
    excess_db: float,
    adverse_db: float = BS4142_ADVERSE_DB,
    significant_db: float = BS4142_SIGNIFICANT_ADVERSE_DB,
) -> str:
    """Give the initial estimate of impact from the rating level's excess over background.

    This is only the *initial* estimate of BS 4142:2014 clause 11: the standard says the
    context (absolute levels, character, sensitivity of the receptor, ...) decides the
    assessment, and the wording must be reported as such.

    Parameters
    ----------
    excess_db : float
        Rating level minus background. [dB]
    adverse_db : float, optional
        Excess at or above which an adverse impact is likely (about +5 dB). [dB]
    significant_db : float, optional
        Excess at or above which a significant adverse impact is likely (about +10 dB).
        [dB]

    Returns
    -------
    str
        One of :data:`IMPACT_INDICATIONS` ("not available" for a NaN excess).

    Raises
    ------
    ValueError
        If ``adverse_db`` is above ``significant_db`` (a settings error).

    References
    ----------
    .. [1] BS 4142:2014+A1:2019 clause 11 (secondary source: around +10 dB or more a
       significant adverse impact is likely, around +5 dB an adverse impact, depending
       on the context).
    """
    if not adverse_db <= significant_db:
        raise ValueError(
            f"adverse_db ({adverse_db}) must not exceed significant_db ({significant_db})"
        )
    try:
        excess = float(excess_db)
    except (TypeError, ValueError):
        return IMPACT_INDICATIONS[3]
    if math.isnan(excess):
        return IMPACT_INDICATIONS[3]
    if excess >= significant_db:
        return IMPACT_INDICATIONS[0]
    if excess >= adverse_db:
        return IMPACT_INDICATIONS[1]
    return IMPACT_INDICATIONS[2]
