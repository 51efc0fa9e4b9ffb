"""The one rounding: levels as a person reads them and as criteria judge them.

A level is reported at :data:`~surveytools.constants.REPORTED_LEVEL_DECIMALS` decimals
(0.1 dB), rounded once, half up, from its unrounded value. Every place that shows or
judges a level (results JSON ``reported`` values, workbooks, terminal lines, criteria)
uses :func:`reported_level`, so what a person reads is what was judged.
"""

from __future__ import annotations

import math
from decimal import ROUND_HALF_UP, Decimal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from surveytools.constants import REPORTED_LEVEL_DECIMALS

__all__ = ["reported_level"]

#: How close to a half step a scaled value must be before the exact decimal rule decides.
_TIE_WINDOW = 1e-6


def _half_up(value: float, decimals: int) -> float:
    """Round the shortest decimal form of ``value`` half up (exact, one value)."""
    quantum = Decimal(1).scaleb(-decimals)
    return float(Decimal(repr(value)).quantize(quantum, rounding=ROUND_HALF_UP))


def _reported_scalar(value: float, decimals: int, scale: float) -> float:
    """:func:`reported_level` of one Python number: the same operations, without numpy.

    Workbooks and terminal lines round one figure at a time; numpy's per-call overhead
    would be most of the cost there. ``math.floor``/``math.copysign`` and the float
    arithmetic are the IEEE operations the array path uses, so both paths agree exactly
    (tested).
    """
    if not math.isfinite(value):
        return value
    scaled = abs(value) * scale
    if abs(scaled - math.floor(scaled) - 0.5) < _TIE_WINDOW:
        return _half_up(value, decimals)
    return math.copysign(math.floor(scaled + 0.5) / scale, value)


def reported_level(levels_db: ArrayLike, decimals: int = REPORTED_LEVEL_DECIMALS
                   ) -> float | NDArray[np.float64]:
    r"""Round levels once, half up, to the reported resolution.

    The value rounded is the level's shortest decimal form (``repr``), so a level that is
    45.05 dB to full precision reports as 45.1 dB and 45.049 dB as 45.0 dB; binary
    floating point never decides a tie.

    .. math:: L_\mathrm{reported} = \operatorname{sgn}(L)\,
              \lfloor |L| \cdot 10^{d} + \tfrac{1}{2} \rfloor / 10^{d}

    Halves go away from zero for negative values (an excess over background of
    −0.05 dB reports as −0.1 dB), as a spreadsheet's ROUND function does.

    Parameters
    ----------
    levels_db : array-like
        Unrounded levels. [dB]
    decimals : int, default REPORTED_LEVEL_DECIMALS
        Decimal places of the reported value (1: 0.1 dB steps).

    Returns
    -------
    float or numpy.ndarray
        Reported levels, same shape as the input; NaN stays NaN. [dB]

    References
    ----------
    .. [1] Common practice: reports and limits state levels to 0.1 dB, and compliance is
       judged on the reported figure; half up is the rounding rule of ISO 80000-1:2009
       Annex B (rule B, from memory).
    """
    scale = 10.0**decimals
    if isinstance(levels_db, float | int) and not isinstance(levels_db, bool):
        return _reported_scalar(float(levels_db), decimals, scale)
    values = np.asarray(levels_db, dtype=np.float64)
    scaled = np.abs(values) * scale
    out = np.copysign(np.floor(scaled + 0.5) / scale, values)
    fractional = scaled - np.floor(scaled)
    near_tie = np.isfinite(values) & (np.abs(fractional - 0.5) < _TIE_WINDOW)
    if np.any(near_tie):
        flat_out = out.reshape(-1)
        flat_values = values.reshape(-1)
        for i in np.flatnonzero(near_tie.reshape(-1)):  # only values within 1e-6 of a tie
            flat_out[i] = _half_up(float(flat_values[i]), decimals)
        out = flat_out.reshape(values.shape)
    if out.ndim == 0:
        return float(out)
    return out
