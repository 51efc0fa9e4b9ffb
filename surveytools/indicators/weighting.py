r"""Frequency weightings A, C and Z (IEC 61672-1:2013 Annex E) and band totals.

.. math::

    C(f) &= 20 \lg\frac{f_4^2 f^2}{(f^2 + f_1^2)(f^2 + f_4^2)} - C_{1000} \\
    A(f) &= 20 \lg\frac{f_4^2 f^4}{(f^2 + f_1^2)(f^2 + f_2^2)^{1/2}(f^2 + f_3^2)^{1/2}
            (f^2 + f_4^2)} - A_{1000}

The pole frequencies are derived from fr, fL, fH, fA and D (constants.py); the
normalisation constants are the unnormalised expressions evaluated at 1 kHz, so both
weightings are exactly 0 dB there (the standard rounds them to -2.000 and -0.062 dB).
Table 3 of the standard lists the weightings at the *exact* base-ten frequencies
:math:`1000 \cdot 10^{n/10}` Hz, labelled with nominal frequencies;
:func:`band_total` weights each band at its exact frequency.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike

from surveytools.constants import (
    DB_PER_DECADE_AMPLITUDE,
    DB_PER_DECADE_POWER,
    LN10_OVER_10,
    NOMINAL_BAND_MATCH_TOLERANCE,
    NOMINAL_THIRD_OCTAVE_HZ,
    THIRD_OCTAVE_BANDS_PER_DECADE,
    WEIGHTING_D,
    WEIGHTING_FA_HZ,
    WEIGHTING_FH_HZ,
    WEIGHTING_FL_HZ,
    WEIGHTING_FR_HZ,
)
from surveytools.indicators._arrays import FloatArray, as_float_array, scalar_or_array

__all__ = [
    "A1000_DB",
    "C1000_DB",
    "NOMINAL_THIRD_OCTAVE_HZ",
    "POLE_F1_HZ",
    "POLE_F2_HZ",
    "POLE_F3_HZ",
    "POLE_F4_HZ",
    "WEIGHTINGS",
    "a_weighting",
    "band_total",
    "c_weighting",
    "exact_band_frequency",
    "z_weighting",
]

#: Accepted ``weighting=`` choices of :func:`band_total`.
WEIGHTINGS = ("A", "C", "Z")


def _pole_frequencies() -> tuple[float, float, float, float]:
    """Poles f1..f4 from fr, fL, fH, fA, D (IEC 61672-1:2013 Annex E, E.2 / E.3)."""
    fr2 = WEIGHTING_FR_HZ**2
    fl2 = WEIGHTING_FL_HZ**2
    fh2 = WEIGHTING_FH_HZ**2
    c = fl2 * fh2
    b = (fr2 + c / fr2 - WEIGHTING_D * (fl2 + fh2)) / (1.0 - WEIGHTING_D)
    root = math.sqrt(b * b - 4.0 * c)
    f1 = math.sqrt((-b - root) / 2.0)
    f4 = math.sqrt((-b + root) / 2.0)
    sqrt5 = math.sqrt(5.0)
    f2 = WEIGHTING_FA_HZ * (3.0 - sqrt5) / 2.0
    f3 = WEIGHTING_FA_HZ * (3.0 + sqrt5) / 2.0
    return f1, f2, f3, f4


POLE_F1_HZ, POLE_F2_HZ, POLE_F3_HZ, POLE_F4_HZ = _pole_frequencies()


def _c_unnormalised(f2: FloatArray) -> FloatArray:
    """20 lg of the C-weighting rational function, from f squared."""
    f1sq, f4sq = POLE_F1_HZ**2, POLE_F4_HZ**2
    return DB_PER_DECADE_AMPLITUDE * np.log10(f4sq * f2 / ((f2 + f1sq) * (f2 + f4sq)))


def _a_unnormalised(f2: FloatArray) -> FloatArray:
    """20 lg of the A-weighting rational function, from f squared."""
    f1sq, f2sq, f3sq, f4sq = (POLE_F1_HZ**2, POLE_F2_HZ**2, POLE_F3_HZ**2, POLE_F4_HZ**2)
    ratio = (f4sq * f2 * f2) / (
        (f2 + f1sq) * np.sqrt(f2 + f2sq) * np.sqrt(f2 + f3sq) * (f2 + f4sq)
    )
    return DB_PER_DECADE_AMPLITUDE * np.log10(ratio)


_FR2 = np.array(WEIGHTING_FR_HZ**2)
#: A-weighting normalisation A1000 (about -2.000 dB) [dB], IEC 61672-1:2013 Annex E.
A1000_DB = float(_a_unnormalised(_FR2))
#: C-weighting normalisation C1000 (about -0.062 dB) [dB], IEC 61672-1:2013 Annex E.
C1000_DB = float(_c_unnormalised(_FR2))


def _frequency_squared(freq_hz: ArrayLike) -> tuple[FloatArray, FloatArray]:
    """Return f^2 with NaN for negative/NaN frequencies, and a mask of f == 0."""
    freq = as_float_array(freq_hz)
    ok = np.isfinite(freq) & (freq >= 0)
    safe = np.where(ok, freq, np.nan)
    return safe * safe, ok & (freq == 0)


def a_weighting(freq_hz: ArrayLike) -> float | FloatArray:
    """A-weighting at the given frequencies.

    Parameters
    ----------
    freq_hz : array-like
        Frequencies. [Hz]

    Returns
    -------
    float or numpy.ndarray
        A(f), 0 dB at 1 kHz; ``-inf`` at 0 Hz, NaN for negative or NaN frequencies. [dB]

    References
    ----------
    .. [1] IEC 61672-1:2013 Annex E (2002 edition 5.4.6, eq. (6)-(14)).
    """
    f2, zero = _frequency_squared(freq_hz)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.where(zero, -np.inf, _a_unnormalised(f2) - A1000_DB)
    return scalar_or_array(np.asarray(out, dtype=np.float64))


def c_weighting(freq_hz: ArrayLike) -> float | FloatArray:
    """C-weighting at the given frequencies.

    Parameters
    ----------
    freq_hz : array-like
        Frequencies. [Hz]

    Returns
    -------
    float or numpy.ndarray
        C(f), 0 dB at 1 kHz; ``-inf`` at 0 Hz, NaN for negative or NaN frequencies. [dB]

    References
    ----------
    .. [1] IEC 61672-1:2013 Annex E (2002 edition 5.4.6, eq. (6)-(14)).
    """
    f2, zero = _frequency_squared(freq_hz)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.where(zero, -np.inf, _c_unnormalised(f2) - C1000_DB)
    return scalar_or_array(np.asarray(out, dtype=np.float64))


def z_weighting(freq_hz: ArrayLike) -> float | FloatArray:
    """Z-weighting (zero, flat) at the given frequencies.

    Parameters
    ----------
    freq_hz : array-like
        Frequencies. [Hz]

    Returns
    -------
    float or numpy.ndarray
        0 dB everywhere; NaN for negative or NaN frequencies. [dB]

    References
    ----------
    .. [1] IEC 61672-1:2013 5.5 and Table 3 (Z: 0 dB design goal).
    """
    freq = as_float_array(freq_hz)
    out = np.where(np.isfinite(freq) & (freq >= 0), 0.0, np.nan)
    return scalar_or_array(np.asarray(out, dtype=np.float64))


def exact_band_frequency(nominal_hz: ArrayLike) -> float | FloatArray:
    r"""Exact base-ten mid-band frequency of a nominal one-third-octave band.

    .. math:: f_m = 1000 \cdot 10^{n/10}, \quad n = \mathrm{round}(10 \lg(f_{nom}/1000))

    Parameters
    ----------
    nominal_hz : array-like
        Nominal mid-band frequencies (e.g. 31.5, 63, 1250). [Hz]

    Returns
    -------
    float or numpy.ndarray
        Exact frequencies; NaN for values that are not within
        ``NOMINAL_BAND_MATCH_TOLERANCE`` band numbers of a one-third-octave band, or not
        positive. [Hz]

    References
    ----------
    .. [1] IEC 61260-1:2014, base-ten one-third-octave mid-band frequencies.
    .. [2] IEC 61672-1:2013 Table 3 (exact frequencies beside the nominal labels).
    """
    nominal = as_float_array(nominal_hz)
    ok = np.isfinite(nominal) & (nominal > 0)
    safe = np.where(ok, nominal, WEIGHTING_FR_HZ)
    band_number = THIRD_OCTAVE_BANDS_PER_DECADE * np.log10(safe / WEIGHTING_FR_HZ)
    whole = np.round(band_number)
    ok &= np.abs(band_number - whole) <= NOMINAL_BAND_MATCH_TOLERANCE
    exact = WEIGHTING_FR_HZ * np.power(10.0, whole / THIRD_OCTAVE_BANDS_PER_DECADE)
    return scalar_or_array(np.asarray(np.where(ok, exact, np.nan), dtype=np.float64))


def band_total(
    band_levels_db: ArrayLike, nominal_hz: ArrayLike, weighting: str = "A"
) -> float | FloatArray:
    r"""Frequency-weighted total level from one-third-octave band levels.

    .. math:: L_W = 10 \lg \sum_k 10^{(L_k + W(f_k))/10}

    with :math:`W` evaluated at the exact band frequencies :math:`f_k`.

    Parameters
    ----------
    band_levels_db : array-like
        Band levels (Z-weighted), shape ``(n_bands,)`` or ``(rows, n_bands)``. NaN bands
        are left out. [dB]
    nominal_hz : array-like
        Nominal mid-band frequency of each column, shape ``(n_bands,)``. A column whose
        frequency is not a one-third-octave band is left out. [Hz]
    weighting : {"A", "C", "Z"}
        Frequency weighting.

    Returns
    -------
    float or numpy.ndarray
        The total (per row for 2-D input); NaN where no band is finite. [dB]

    Raises
    ------
    ValueError
        If ``weighting`` is unknown or the number of frequencies does not match the
        number of band columns (programming errors).

    References
    ----------
    .. [1] IEC 61672-1:2013 Annex E and Table 3.
    """
    weight_functions = {"A": a_weighting, "C": c_weighting, "Z": z_weighting}
    if weighting not in weight_functions:
        raise ValueError(
            f"unknown weighting {weighting!r}; choose one of {', '.join(WEIGHTINGS)}"
        )
    levels = as_float_array(band_levels_db)
    frequencies = np.atleast_1d(as_float_array(nominal_hz)).ravel()
    if levels.ndim not in (1, 2) or levels.shape[-1] != frequencies.size:
        raise ValueError(
            f"band_levels_db has shape {levels.shape} but {frequencies.size} band "
            "frequencies were given; pass (n_bands,) or (rows, n_bands) levels with one "
            "frequency per band column"
        )
    exact = np.asarray(exact_band_frequency(frequencies), dtype=np.float64).reshape(-1)
    weights = np.asarray(weight_functions[weighting](exact), dtype=np.float64).reshape(-1)
    weighted = np.atleast_2d(levels) + weights
    finite = np.isfinite(weighted)
    any_finite = finite.any(axis=1)
    peak = np.max(np.where(finite, weighted, -np.inf), axis=1)
    peak = np.where(any_finite, peak, 0.0)
    energy = np.sum(
        np.where(finite, np.exp((np.where(finite, weighted, 0.0) - peak[:, None]) * LN10_OVER_10),
                 0.0),
        axis=1,
    )
    out = np.where(any_finite, peak + DB_PER_DECADE_POWER * np.log10(np.where(
        any_finite, energy, 1.0)), np.nan)
    if levels.ndim == 1:
        return float(out[0])
    return out
