r"""One-third-octave spectra: averaging, tonal screening, low-frequency content, tonal correction.

Band levels are Z-weighted one-third-octave levels, one column per band, bands in
ascending order. Weighted totals come from :func:`~surveytools.indicators.weighting.band_total`
(IEC 61672-1 weights at the exact base-ten band frequencies).

Tonal screening (ISO 1996-2:2007 Annex D, simplified method; the same test in
BS 4142:2014+A1:2019 Annex C, from memory): band *k* holds a tone when

.. math:: \Delta L_k = \min(L_k - L_{k-1},\; L_k - L_{k+1}) \ge \Delta L_\mathrm{range}(f_k)

with :math:`\Delta L_\mathrm{range}` 15 dB in 25-125 Hz, 8 dB in 160-400 Hz and 5 dB in
500 Hz-10 kHz. Both neighbours must be present and adjacent (one band number away), so the
first and last bands present, and bands beside a gap, are not screened. The difference is
judged at the reported resolution (0.1 dB, rounded once half up), so a band 5.0 dB above
its neighbours is tonal whatever the binary rounding of the levels.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from surveytools.constants import (
    ONE_THIRD_OCTAVE_TONAL_CORRECTION_DB,
    THIRD_OCTAVE_BANDS_PER_DECADE,
    TONE_HIGH_BANDS_HZ,
    TONE_HIGH_DIFFERENCE_DB,
    TONE_LOW_BANDS_HZ,
    TONE_LOW_DIFFERENCE_DB,
    TONE_MID_BANDS_HZ,
    TONE_MID_DIFFERENCE_DB,
    WEIGHTING_FR_HZ,
)
from surveytools.indicators._arrays import FloatArray, as_float_array
from surveytools.indicators.levels import grouped_energy_sums, level_from_energy_sums
from surveytools.indicators.reporting import reported_level
from surveytools.indicators.weighting import exact_band_frequency

__all__ = [
    "band_numbers",
    "grouped_band_energy_sums",
    "grouped_band_spectra",
    "low_frequency_content",
    "one_third_octave_tonal_correction",
    "screen_tones",
    "tone_level_differences",
    "tone_thresholds",
]


def band_numbers(nominal_hz: ArrayLike) -> FloatArray:
    r"""Base-ten band number of each nominal one-third-octave band.

    .. math:: n = \mathrm{round}(10 \lg(f_m / 1000\,\mathrm{Hz}))

    Parameters
    ----------
    nominal_hz : array-like
        Nominal mid-band frequencies. [Hz]

    Returns
    -------
    numpy.ndarray
        Whole band numbers (1 kHz is 0, 31.5 Hz is -15) as floats; NaN for a frequency
        that is not a one-third-octave band. [-]

    References
    ----------
    .. [1] IEC 61260-1:2014, base-ten mid-band frequencies.
    """
    exact = np.atleast_1d(np.asarray(exact_band_frequency(nominal_hz), dtype=np.float64))
    with np.errstate(invalid="ignore"):
        numbers = np.round(THIRD_OCTAVE_BANDS_PER_DECADE * np.log10(exact / WEIGHTING_FR_HZ))
    return np.asarray(numbers, dtype=np.float64)


def tone_thresholds(
    nominal_hz: ArrayLike,
    low_db: float = TONE_LOW_DIFFERENCE_DB,
    mid_db: float = TONE_MID_DIFFERENCE_DB,
    high_db: float = TONE_HIGH_DIFFERENCE_DB,
) -> FloatArray:
    """Level difference a band must reach above both neighbours to hold a tone.

    Parameters
    ----------
    nominal_hz : array-like
        Nominal mid-band frequencies. [Hz]
    low_db, mid_db, high_db : float
        Differences for the 25-125 Hz, 160-400 Hz and 500 Hz-10 kHz bands. [dB]

    Returns
    -------
    numpy.ndarray
        Threshold per band; NaN for bands outside 25 Hz-10 kHz (not screened). [dB]

    References
    ----------
    .. [1] ISO 1996-2:2007 Annex D; BS 4142:2014+A1:2019 Annex C (from memory).
    """
    numbers = band_numbers(nominal_hz)
    out = np.full(numbers.shape, np.nan)
    for (first, last), value in ((TONE_LOW_BANDS_HZ, low_db), (TONE_MID_BANDS_HZ, mid_db),
                                 (TONE_HIGH_BANDS_HZ, high_db)):  # three ranges
        lo, hi = band_numbers([first, last])
        out = np.where((numbers >= lo) & (numbers <= hi), float(value), out)
    return out


def tone_level_differences(band_levels_db: ArrayLike, nominal_hz: ArrayLike) -> FloatArray:
    r"""How far each band stands above the lower of its two neighbours.

    .. math:: \Delta L_k = \min(L_k - L_{k-1},\; L_k - L_{k+1})

    Parameters
    ----------
    band_levels_db : array-like
        Band levels, shape ``(n_bands,)`` or ``(..., n_bands)``, bands ascending. [dB]
    nominal_hz : array-like
        Nominal mid-band frequency of each band column. [Hz]

    Returns
    -------
    numpy.ndarray
        Unrounded differences, the shape of ``band_levels_db``; NaN for the first and
        last band, for a band whose neighbour is missing, not adjacent (a gap in the
        bands) or not finite. [dB]

    References
    ----------
    .. [1] ISO 1996-2:2007 Annex D (level difference to the adjacent bands).
    """
    levels = as_float_array(band_levels_db)
    numbers = band_numbers(nominal_hz)
    out = np.full(levels.shape, np.nan)
    if levels.shape[-1] < 3 or levels.shape[-1] != numbers.size:
        return out
    adjacent = (np.diff(numbers) == 1.0)
    both = adjacent[:-1] & adjacent[1:]  # bands 1 .. n-2
    middle = levels[..., 1:-1]
    with np.errstate(invalid="ignore"):
        difference = np.minimum(middle - levels[..., :-2], middle - levels[..., 2:])
    out[..., 1:-1] = np.where(both, difference, np.nan)
    return out


def screen_tones(
    band_levels_db: ArrayLike, nominal_hz: ArrayLike, thresholds_db: ArrayLike | None = None
) -> tuple[FloatArray, NDArray[np.bool_]]:
    """One-third-octave tonal screening of one or many spectra.

    Parameters
    ----------
    band_levels_db : array-like
        Z-weighted band levels, ``(n_bands,)`` or ``(n_spectra, n_bands)``. [dB]
    nominal_hz : array-like
        Nominal mid-band frequency of each band column, ascending. [Hz]
    thresholds_db : array-like, optional
        Per-band thresholds (:func:`tone_thresholds`); the default ranges if omitted. [dB]

    Returns
    -------
    difference_db : numpy.ndarray
        :func:`tone_level_differences` at the reported resolution (0.1 dB, rounded once,
        half up); NaN where a band cannot be screened. [dB]
    tonal : numpy.ndarray of bool
        True where the reported difference reaches the band's threshold.

    References
    ----------
    .. [1] ISO 1996-2:2007 Annex D; BS 4142:2014+A1:2019 Annex C (from memory).
    """
    thresholds = (tone_thresholds(nominal_hz) if thresholds_db is None
                  else as_float_array(thresholds_db))
    difference = np.asarray(reported_level(tone_level_differences(band_levels_db, nominal_hz)),
                            dtype=np.float64)
    with np.errstate(invalid="ignore"):
        tonal = np.isfinite(difference) & np.isfinite(thresholds) & (difference >= thresholds)
    return difference, np.asarray(tonal, dtype=bool)


def grouped_band_energy_sums(
    band_levels_db: ArrayLike, durations: ArrayLike, groups: ArrayLike, n_groups: int,
    reference_db: float,
) -> tuple[FloatArray, FloatArray]:
    r"""Relative energy and time per group and band, to be added up later.

    :func:`~surveytools.indicators.levels.grouped_energy_sums` applied to every band at
    once (the band matrix flattened, group ``g`` and band ``k`` becoming group
    ``g * n_bands + k``), so sums of disjoint sets of readings add up per band.

    Parameters
    ----------
    band_levels_db : array-like
        Band levels, shape ``(n_samples, n_bands)``; non-finite values are left out. [dB]
    durations : array-like
        Time each sample represents, shape ``(n_samples,)``, in any unit.
    groups : array-like of int
        Group per sample, ``0 .. n_groups-1``; -1 means no group.
    n_groups : int
        Number of groups.
    reference_db : float
        Level the energies are relative to (the highest band level keeps every term at
        most the sample's duration). [dB]

    Returns
    -------
    energy, time : numpy.ndarray
        Shape ``(n_groups, n_bands)``, in the unit of ``durations``.

    References
    ----------
    .. [1] ISO 1996-1:2016, equivalent continuous sound pressure level (additive over
       disjoint times).
    """
    levels = np.atleast_2d(as_float_array(band_levels_db))
    n_bands = levels.shape[1]
    group = np.asarray(groups, dtype=np.int64).reshape(-1)
    weights = np.broadcast_to(as_float_array(durations).reshape(-1, 1), levels.shape)
    flat_group = np.where(group[:, None] >= 0,
                          group[:, None] * n_bands + np.arange(n_bands, dtype=np.int64), -1)
    energy, time = grouped_energy_sums(levels.reshape(-1), weights.reshape(-1),
                                       flat_group.reshape(-1), n_groups * n_bands,
                                       reference_db)
    return energy.reshape(n_groups, n_bands), time.reshape(n_groups, n_bands)


def grouped_band_spectra(
    band_levels_db: ArrayLike, durations_s: ArrayLike, groups: ArrayLike, n_groups: int
) -> FloatArray:
    r"""Energy-average band spectrum per group.

    .. math:: L_{g,k} = 10 \lg\left(\frac{\sum_{i \in g} t_i 10^{L_{i,k}/10}}
              {\sum_{i \in g} t_i}\right)

    Parameters
    ----------
    band_levels_db : array-like
        Band levels, shape ``(n_samples, n_bands)``. [dB]
    durations_s : array-like
        Time each sample represents, shape ``(n_samples,)``. [s]
    groups : array-like of int
        Group per sample; -1 means no group.
    n_groups : int
        Number of groups.

    Returns
    -------
    numpy.ndarray
        Shape ``(n_groups, n_bands)``; NaN where a group has no finite value of a band.
        [dB]

    References
    ----------
    .. [1] ISO 1996-1:2016, equivalent continuous sound pressure level.
    """
    levels = np.atleast_2d(as_float_array(band_levels_db))
    finite = levels[np.isfinite(levels)]
    reference = float(finite.max()) if finite.size else 0.0
    energy, time = grouped_band_energy_sums(levels, durations_s, groups, n_groups, reference)
    return level_from_energy_sums(energy, time, reference)


def low_frequency_content(
    lceq_db: ArrayLike, laeq_db: ArrayLike, threshold_db: float
) -> tuple[FloatArray, NDArray[np.bool_]]:
    """C-minus-A level difference and whether it flags marked low-frequency content.

    Parameters
    ----------
    lceq_db, laeq_db : array-like
        C- and A-weighted levels of the same sound. [dB]
    threshold_db : float
        Difference at or above which low-frequency content is flagged
        (``LOW_FREQUENCY_C_MINUS_A_DB`` by default in the settings). [dB]

    Returns
    -------
    difference_db : numpy.ndarray
        LC - LA at the reported resolution (0.1 dB, rounded once); NaN if either is NaN.
        [dB]
    flagged : numpy.ndarray of bool
        True where the reported difference reaches ``threshold_db``.

    References
    ----------
    .. [1] WHO Guidelines for Community Noise (1999): a dB(C) - dB(A) difference of more
       than 10 dB calls for a frequency analysis (from memory).
    """
    difference = np.asarray(reported_level(as_float_array(lceq_db) - as_float_array(laeq_db)),
                            dtype=np.float64)
    with np.errstate(invalid="ignore"):
        flagged = np.isfinite(difference) & (difference >= threshold_db)
    return difference, np.asarray(flagged, dtype=bool)


def one_third_octave_tonal_correction(
    tonal_source_on: ArrayLike, tonal_residual: ArrayLike | None,
    correction_db: float = ONE_THIRD_OCTAVE_TONAL_CORRECTION_DB,
) -> tuple[float, NDArray[np.bool_]]:
    """Tonal correction from the one-third-octave screening of source-on and residual.

    A tone counts when a band is tonal in the source-on spectrum and not in the residual
    spectrum (a tone already in the residual sound is not the source's).

    Parameters
    ----------
    tonal_source_on : array-like of bool
        Tonal bands of the source-on spectrum (:func:`screen_tones`), ``(n_bands,)``.
    tonal_residual : array-like of bool or None
        Tonal bands of the residual spectrum; None when there is no residual spectrum
        (every source-on tone then counts).
    correction_db : float
        Correction when a tone counts. [dB]

    Returns
    -------
    correction_db : float
        ``correction_db`` or 0. [dB]
    counted : numpy.ndarray of bool
        The bands whose tone counts.

    References
    ----------
    .. [1] BS 4142:2014+A1:2019, one-third-octave method for tonal features (from memory).
    """
    on = np.asarray(tonal_source_on, dtype=bool).reshape(-1)
    residual = (np.zeros_like(on) if tonal_residual is None
                else np.asarray(tonal_residual, dtype=bool).reshape(-1))
    counted = on & ~residual
    return (float(correction_db) if bool(counted.any()) else 0.0), counted
