r"""Residual sound correction: the specific level of a source from total and residual.

.. math:: L_{spec} = 10 \lg\left(10^{L_t/10} - 10^{L_r/10}\right), \quad
          \Delta L = L_t - L_r

- :math:`\Delta L >` ``no_correction_above_db`` (10 dB): the correction is under 0.46 dB
  and is not applied; the specific level is the total ("no correction needed").
- ``upper_bound_at_or_below_db`` (3 dB) :math:`< \Delta L \le` 10 dB: energetic
  subtraction ("corrected").
- :math:`\Delta L \le` 3 dB: the specific level is not determinable; the total is
  reported as an upper bound ("upper bound").
- Either level missing: NaN, "not available".
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from surveytools.constants import (
    RESIDUAL_NO_CORRECTION_ABOVE_DB,
    RESIDUAL_UPPER_BOUND_AT_OR_BELOW_DB,
)
from surveytools.indicators._arrays import FloatArray, as_float_array
from surveytools.indicators.levels import energy_difference

__all__ = ["SPECIFIC_BASES", "residual_correction"]

#: How a specific level was obtained (the ``specific_basis`` of design.md §6).
SPECIFIC_BASES = ("corrected", "no correction needed", "upper bound", "not available")


def residual_correction(
    total_db: ArrayLike,
    residual_db: ArrayLike,
    no_correction_above_db: float = RESIDUAL_NO_CORRECTION_ABOVE_DB,
    upper_bound_at_or_below_db: float = RESIDUAL_UPPER_BOUND_AT_OR_BELOW_DB,
) -> tuple[FloatArray, FloatArray, NDArray[np.object_]]:
    """Specific sound level from total and residual sound, with its basis.

    Parameters
    ----------
    total_db : array-like
        Total (ambient) sound level with the source operating, LAeq. [dB]
    residual_db : array-like
        Residual sound level with the source off, LAeq. [dB]
    no_correction_above_db : float, optional
        Above this level difference no correction is applied. [dB]
    upper_bound_at_or_below_db : float, optional
        At or below this level difference the total is reported as an upper bound. [dB]

    Returns
    -------
    specific_db : numpy.ndarray
        Specific sound level (broadcast shape of the inputs; 0-d for scalars). [dB]
    level_difference_db : numpy.ndarray
        Total minus residual. [dB]
    basis : numpy.ndarray of str (object)
        One of :data:`SPECIFIC_BASES` per element.

    Raises
    ------
    ValueError
        If the thresholds are not finite or the upper-bound threshold is not below the
        no-correction threshold (a settings error).

    References
    ----------
    .. [1] ISO 1996-2:2007 9.6, residual sound (thresholds from memory, see
       standards.md §4); carried into ISO 1996-2:2017.
    .. [2] Liptak, Environmental Engineers' Handbook, background corrections.
    """
    upper = float(upper_bound_at_or_below_db)
    above = float(no_correction_above_db)
    if not (np.isfinite(upper) and np.isfinite(above) and upper < above):
        raise ValueError(
            f"upper_bound_at_or_below_db ({upper}) must be finite and below "
            f"no_correction_above_db ({above}); the defaults are "
            f"{RESIDUAL_UPPER_BOUND_AT_OR_BELOW_DB} and {RESIDUAL_NO_CORRECTION_ABOVE_DB}"
        )
    total, residual = np.broadcast_arrays(as_float_array(total_db), as_float_array(residual_db))
    available = np.isfinite(total) & np.isfinite(residual)
    difference = np.where(available, total - residual, np.nan)
    no_correction = available & (difference > above)
    upper_bound = available & (difference <= upper)
    corrected = available & ~no_correction & ~upper_bound

    subtracted = np.asarray(energy_difference(total, residual), dtype=np.float64)
    specific = np.where(corrected, subtracted, np.where(available, total, np.nan))
    basis = np.select(
        [corrected, no_correction, upper_bound],
        [SPECIFIC_BASES[0], SPECIFIC_BASES[1], SPECIFIC_BASES[2]],
        default=SPECIFIC_BASES[3],
    ).astype(object)
    return specific.astype(np.float64), difference.astype(np.float64), basis
