r"""Decibel arithmetic: energy averages, energetic sums and differences, grouped averages.

All functions are pure and NaN-aware: a NaN (or infinite) level is ignored together with
its duration; when nothing finite is left the result is NaN. Energies are computed as
``exp(L ln10 / 10)`` after factoring out the largest level, so levels of several hundred
dB neither overflow nor lose precision.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from surveytools.constants import DB_PER_DECADE_POWER, LN10_OVER_10
from surveytools.indicators._arrays import (
    FloatArray,
    as_float_array,
    grouped_arrays,
    scalar_or_array,
)

__all__ = [
    "energy_average",
    "energy_difference",
    "energy_sum",
    "from_energy",
    "grouped_energy_average",
    "grouped_energy_average_and_duration",
    "grouped_energy_sums",
    "grouped_max",
    "grouped_valid_duration",
    "level_from_energy_sums",
    "to_energy",
]


def to_energy(levels_db: ArrayLike) -> FloatArray:
    r"""Relative energy of levels, :math:`10^{L/10}`.

    Parameters
    ----------
    levels_db : array-like
        Levels. [dB]

    Returns
    -------
    numpy.ndarray
        :math:`10^{L/10}` (dimensionless energy ratio); NaN where the level is NaN. May
        overflow to ``inf`` for levels above about 3080 dB; use the averaging functions,
        which factor out the maximum, for sums.

    References
    ----------
    .. [1] ISO 80000-8:2020, level of a power quantity, :math:`L = 10 \lg(P/P_0)`.
    """
    levels = as_float_array(levels_db)
    return np.exp(levels * LN10_OVER_10)


def from_energy(energy: ArrayLike) -> FloatArray:
    r"""Level of a relative energy, :math:`10 \lg E`.

    Parameters
    ----------
    energy : array-like
        Energy ratios (dimensionless).

    Returns
    -------
    numpy.ndarray
        Levels; NaN where the energy is not a positive finite number. [dB]

    References
    ----------
    .. [1] ISO 80000-8:2020, level of a power quantity.
    """
    values = as_float_array(energy)
    ok = np.isfinite(values) & (values > 0)
    out = np.full(values.shape, np.nan)
    np.log10(values, out=out, where=ok)
    return out * DB_PER_DECADE_POWER


def _valid_weights(
    levels: FloatArray, durations_s: ArrayLike | None
) -> tuple[FloatArray, FloatArray]:
    """Flatten levels and durations; keep samples with a finite level and duration >= 0."""
    if durations_s is None:
        weights = np.ones(levels.shape)
    else:
        weights = as_float_array(durations_s)
        try:
            levels, weights = np.broadcast_arrays(levels, weights)
        except ValueError as exc:
            raise ValueError(
                f"levels_db has shape {levels.shape} but durations_s has shape "
                f"{weights.shape}; pass one duration per level (or one for all)"
            ) from exc
    flat_levels: FloatArray = np.asarray(levels, dtype=np.float64).ravel()
    flat_weights: FloatArray = np.asarray(weights, dtype=np.float64).ravel()
    keep = np.isfinite(flat_levels) & np.isfinite(flat_weights) & (flat_weights >= 0)
    return flat_levels[keep], flat_weights[keep]


def energy_average(levels_db: ArrayLike, durations_s: ArrayLike | None = None) -> float:
    r"""Energy-average (equivalent continuous) level of a set of levels.

    .. math:: L_{eq,T} = 10 \lg\left(\frac{\sum_i t_i 10^{L_i/10}}{\sum_i t_i}\right)

    Parameters
    ----------
    levels_db : array-like
        Levels, all with the same frequency and time weighting (e.g. interval LAeq). [dB]
    durations_s : array-like, optional
        Time each level represents; equal if omitted. Negative or non-finite durations
        count as invalid samples. [s]

    Returns
    -------
    float
        Equivalent continuous level over the valid time; NaN if no finite level with a
        positive total duration remains. [dB]

    Raises
    ------
    ValueError
        If ``durations_s`` cannot be broadcast against ``levels_db`` (programming error).

    References
    ----------
    .. [1] ISO 1996-1:2016, definition of equivalent continuous sound pressure level.
    .. [2] Bies & Hansen, Engineering Noise Control, eq. (4.1)-(4.3).
    """
    levels, weights = _valid_weights(as_float_array(levels_db), durations_s)
    positive = weights > 0  # zero-duration samples carry no energy (and no maximum)
    levels, weights = levels[positive], weights[positive]
    total = float(np.sum(weights))
    if levels.size == 0 or not total > 0:
        return float("nan")
    peak = float(np.max(levels))
    energy = float(np.sum(weights * np.exp((levels - peak) * LN10_OVER_10)))
    return peak + DB_PER_DECADE_POWER * float(np.log10(energy / total))


def energy_sum(levels_db: ArrayLike) -> float:
    r"""Energetic sum of levels, :math:`10 \lg \sum_i 10^{L_i/10}`.

    Parameters
    ----------
    levels_db : array-like
        Levels to add (e.g. the contributions of several sources). [dB]

    Returns
    -------
    float
        Combined level; NaN if no level is finite. [dB]

    References
    ----------
    .. [1] Liptak, Environmental Engineers' Handbook, background corrections (85 + 87 + 89
       dB add to 92 dB).
    """
    levels, _ = _valid_weights(as_float_array(levels_db), None)
    if levels.size == 0:
        return float("nan")
    peak = float(np.max(levels))
    energy = float(np.sum(np.exp((levels - peak) * LN10_OVER_10)))
    return peak + DB_PER_DECADE_POWER * float(np.log10(energy))


def energy_difference(total_db: ArrayLike, part_db: ArrayLike) -> float | FloatArray:
    r"""Energetic difference, :math:`10 \lg(10^{L_t/10} - 10^{L_p/10})`.

    Computed as :math:`L_t + 10 \lg(1 - 10^{(L_p - L_t)/10})` with ``expm1`` for accuracy
    when the two levels are close.

    Parameters
    ----------
    total_db : array-like
        Level of the whole (e.g. total sound). [dB]
    part_db : array-like
        Level of the part removed (e.g. residual sound); ``-inf`` means no energy. [dB]

    Returns
    -------
    float or numpy.ndarray
        Level of the remainder; NaN where ``total <= part`` or either is NaN. A float when
        both inputs are scalars. [dB]

    References
    ----------
    .. [1] ISO 1996-2, residual sound correction (energetic subtraction).
    .. [2] Liptak, Environmental Engineers' Handbook: differences are taken "on an energy
       basis, not simply by taking numerical differences".
    """
    total = as_float_array(total_db)
    part = as_float_array(part_db)
    total, part = np.broadcast_arrays(total, part)
    ok = np.isfinite(total) & ~np.isnan(part) & (part < total)
    diff = np.where(ok, part - total, -1.0)
    remainder = -np.expm1(diff * LN10_OVER_10)
    out = np.where(ok, total + DB_PER_DECADE_POWER * np.log10(remainder), np.nan)
    return scalar_or_array(out)


def _grouped_inputs(
    levels_db: ArrayLike, durations_s: ArrayLike | None, groups: ArrayLike, n_groups: int
) -> tuple[FloatArray, FloatArray, NDArray[np.int64]]:
    """Flatten and filter grouped inputs: finite level, duration >= 0, group in range."""
    levels, weights, group_index = grouped_arrays(levels_db, durations_s, groups, n_groups)
    keep = np.isfinite(levels) & np.isfinite(weights) & (weights >= 0) & (group_index >= 0)
    if keep.all():  # already filtered by the caller: skip three copies
        return levels, weights, group_index
    return levels[keep], weights[keep], group_index[keep]


def _grouped_peak(
    values: FloatArray, group_index: NDArray[np.int64], n_groups: int
) -> FloatArray:
    """Largest value per group, ``-inf`` for empty groups (``values`` all finite).

    When the group indices never decrease (samples in time order, groups in time order)
    the maxima come from one ``np.maximum.reduceat`` over the runs of equal groups,
    otherwise from ``np.maximum.at``; a maximum is exact either way.
    """
    peak = np.full(n_groups, -np.inf)
    if values.size == 0:
        return peak
    if np.all(group_index[1:] >= group_index[:-1]):
        run_start = np.flatnonzero(np.r_[True, group_index[1:] != group_index[:-1]])
        peak[group_index[run_start]] = np.maximum.reduceat(values, run_start)
    else:
        np.maximum.at(peak, group_index, values)
    return peak


def grouped_max(values_db: ArrayLike, groups: ArrayLike, n_groups: int) -> FloatArray:
    """Largest finite value per group (e.g. LAFmax per reporting interval).

    Parameters
    ----------
    values_db : array-like
        Values, one per sample. [dB]
    groups : array-like of int
        Group index per sample, ``0 .. n_groups-1``; -1 (or anything out of range) means
        the sample belongs to no group.
    n_groups : int
        Number of groups.

    Returns
    -------
    numpy.ndarray
        Shape ``(n_groups,)``; NaN for groups without a finite value. [dB]

    Raises
    ------
    ValueError
        If the inputs differ in length or ``n_groups`` is negative (programming errors).

    References
    ----------
    .. [1] IEC 61672-1:2013, maximum time-weighted sound level (the maximum of a set of
       maxima is the maximum over their union).
    """
    values, _, group_index = _grouped_inputs(values_db, None, groups, n_groups)
    out = _grouped_peak(values, group_index, n_groups)
    out[np.isneginf(out)] = np.nan
    return out


def grouped_valid_duration(
    levels_db: ArrayLike, durations_s: ArrayLike | None, groups: ArrayLike, n_groups: int
) -> FloatArray:
    """Total duration of the samples with a finite level, per group.

    Parameters
    ----------
    levels_db : array-like
        Levels, one per sample. [dB]
    durations_s : array-like or None
        Duration of each sample; 1 each if None. [s]
    groups : array-like of int
        Group index per sample; -1 means no group.
    n_groups : int
        Number of groups.

    Returns
    -------
    numpy.ndarray
        Shape ``(n_groups,)``; 0 for groups without valid samples. [s]

    Raises
    ------
    ValueError
        If the inputs differ in length or ``n_groups`` is negative (programming errors).

    References
    ----------
    .. [1] ISO 1996-2:2017, measurement time interval (only valid time counts).
    """
    _, weights, group_index = _grouped_inputs(levels_db, durations_s, groups, n_groups)
    return np.bincount(group_index, weights=weights, minlength=n_groups).astype(np.float64)


def grouped_energy_average(
    levels_db: ArrayLike, durations_s: ArrayLike | None, groups: ArrayLike, n_groups: int
) -> FloatArray:
    r"""Energy-average level per group (e.g. LAeq per hour, per day or per period).

    .. math:: L_g = 10 \lg\left(\frac{\sum_{i \in g} t_i 10^{L_i/10}}{\sum_{i \in g} t_i}\right)

    The group maximum is factored out before exponentiating, so the result is exact to
    double precision whatever the levels.

    Parameters
    ----------
    levels_db : array-like
        Levels, one per sample. [dB]
    durations_s : array-like or None
        Time each sample represents; 1 each if None. [s]
    groups : array-like of int
        Group index per sample, ``0 .. n_groups-1``; -1 means the sample is in no group.
    n_groups : int
        Number of groups.

    Returns
    -------
    numpy.ndarray
        Shape ``(n_groups,)``; NaN for groups with no finite sample or zero valid time.
        [dB]

    Raises
    ------
    ValueError
        If the inputs differ in length or ``n_groups`` is negative (programming errors).

    References
    ----------
    .. [1] ISO 1996-1:2016, equivalent continuous sound pressure level.
    """
    return grouped_energy_average_and_duration(levels_db, durations_s, groups, n_groups)[0]


def grouped_energy_average_and_duration(
    levels_db: ArrayLike, durations_s: ArrayLike | None, groups: ArrayLike, n_groups: int
) -> tuple[FloatArray, FloatArray]:
    r"""Energy-average level and valid duration per group, from one pass over the samples.

    The same figures as :func:`grouped_energy_average` and
    :func:`grouped_valid_duration` called with the same arguments (bit for bit: the
    duration sums add the same durations in the same order; zero durations, which only
    the latter keeps, add nothing).

    Parameters
    ----------
    levels_db : array-like
        Levels, one per sample. [dB]
    durations_s : array-like or None
        Time each sample represents; 1 each if None. [s]
    groups : array-like of int
        Group index per sample, ``0 .. n_groups-1``; -1 means the sample is in no group.
    n_groups : int
        Number of groups.

    Returns
    -------
    level_db : numpy.ndarray
        Shape ``(n_groups,)``; NaN for groups with no finite sample or zero valid time.
        [dB]
    valid_s : numpy.ndarray
        Shape ``(n_groups,)``; total duration of the samples with a finite level, 0 for
        groups without any. [s]

    Raises
    ------
    ValueError
        If the inputs differ in length or ``n_groups`` is negative (programming errors).

    References
    ----------
    .. [1] ISO 1996-1:2016, equivalent continuous sound pressure level.
    .. [2] ISO 1996-2:2017, measurement time interval (only valid time counts).
    """
    levels, weights, group_index = _grouped_inputs(levels_db, durations_s, groups, n_groups)
    positive = weights > 0  # zero-duration samples carry no energy (and no maximum)
    if not positive.all():
        levels, weights, group_index = levels[positive], weights[positive], group_index[positive]
    peak = _grouped_peak(levels, group_index, n_groups)
    shifted = weights * np.exp((levels - peak[group_index]) * LN10_OVER_10)
    energy = np.bincount(group_index, weights=shifted, minlength=n_groups)
    total = np.bincount(group_index, weights=weights, minlength=n_groups)
    ok = (total > 0) & np.isfinite(peak) & (energy > 0)
    ratio = np.divide(energy, total, out=np.ones(n_groups), where=ok)
    level = np.where(ok, peak + DB_PER_DECADE_POWER * np.log10(ratio), np.nan)
    return level, total.astype(np.float64)


def grouped_energy_sums(
    levels_db: ArrayLike, durations: ArrayLike | None, groups: ArrayLike, n_groups: int,
    reference_db: float,
) -> tuple[FloatArray, FloatArray]:
    r"""Time-integrated relative energy and time per group, to be added up later.

    .. math:: E_g = \sum_{i \in g} t_i 10^{(L_i - L_\mathrm{ref})/10}, \quad
              T_g = \sum_{i \in g} t_i

    Sums over disjoint sets of samples add: the sums of fine groups (e.g. the stretches
    between every boundary of several period schemes) combine into the sums of any
    coarser grouping made of them, and :func:`level_from_energy_sums` turns those into
    energy-average levels, without another pass over the samples.

    Parameters
    ----------
    levels_db : array-like
        Levels, one per sample; non-finite ones are left out. [dB]
    durations : array-like or None
        Time each sample represents, in any unit (whole milliseconds keep the time sums
        exact); 1 each if None; samples with a non-positive or non-finite duration are
        left out.
    groups : array-like of int
        Group index per sample, ``0 .. n_groups-1``; -1 means the sample is in no group.
    n_groups : int
        Number of groups.
    reference_db : float
        Level the energies are relative to; the highest level of the samples keeps every
        term at most the sample's duration (no overflow whatever the levels). [dB]

    Returns
    -------
    energy : numpy.ndarray
        :math:`E_g`, shape ``(n_groups,)``, in the unit of ``durations``.
    time : numpy.ndarray
        :math:`T_g`, shape ``(n_groups,)``, in the unit of ``durations``.

    Raises
    ------
    ValueError
        If the inputs differ in length or ``n_groups`` is negative (programming errors).

    References
    ----------
    .. [1] ISO 1996-1:2016, equivalent continuous sound pressure level (a time integral
       of squared sound pressure, hence additive over disjoint times).
    """
    levels, weights, group_index = _grouped_inputs(levels_db, durations, groups, n_groups)
    positive = weights > 0
    if not positive.all():
        levels, weights, group_index = levels[positive], weights[positive], group_index[positive]
    energy = np.bincount(group_index, weights=weights * np.exp((levels - reference_db)
                                                                * LN10_OVER_10),
                         minlength=n_groups)
    time = np.bincount(group_index, weights=weights, minlength=n_groups)
    return energy.astype(np.float64), time.astype(np.float64)


def level_from_energy_sums(energy: ArrayLike, time: ArrayLike, reference_db: float
                           ) -> FloatArray:
    r"""Energy-average level from summed relative energy and time.

    .. math:: L = L_\mathrm{ref} + 10 \lg (E / T)

    Parameters
    ----------
    energy, time : array-like
        Sums from :func:`grouped_energy_sums` (added up over any set of its groups).
    reference_db : float
        The reference level those sums used. [dB]

    Returns
    -------
    numpy.ndarray
        Energy-average level; NaN where the time or the energy is zero. [dB]

    References
    ----------
    .. [1] ISO 1996-1:2016, equivalent continuous sound pressure level.
    """
    e = as_float_array(energy)
    t = as_float_array(time)
    ok = (t > 0) & (e > 0)
    ratio = np.divide(e, t, out=np.ones(np.broadcast(e, t).shape), where=ok)
    out: FloatArray = np.where(ok, reference_db + DB_PER_DECADE_POWER * np.log10(ratio), np.nan)
    return out
