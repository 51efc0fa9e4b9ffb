"""Partial results of the ``spectral`` section that add up exactly (design §10).

:func:`surveytools.assessment.spectral.spectral_parts_of` sums the band energies of a set
of readings once per reporting interval and Lden period type, as the ``spectral`` section
does, and keeps what the section is built from:

- per period type (day, evening, night): the band energy sums and valid time (added),
  the time of the period's intervals whose spectrum is tonal in each band (added) and
  the largest tonal-screening difference of those intervals per band (highest kept);
- per reporting interval with valid time: its valid time, A-weighted band total, the
  difference to the LAeq of the same readings and its tonal bands. An interval is never
  split between two parts (a long log is cut at reporting-interval boundaries), so these
  are whole in one part and the parts' intervals are simply put side by side;
- the count of valid readings without a complete spectrum (added).

The period spectra, their A/C totals and tonal screening, the band check (median over the
intervals' differences) and the tones follow from the merged parts with the same
functions the whole-log path uses
(:func:`surveytools.assessment.spectral.spectral_from_parts`). Energy sums of two parts
on different reference levels are rescaled to the higher one, as
:mod:`~surveytools.assessment.parts` does: the unrounded levels can then differ from a
single pass in the last bits only; time sums are whole milliseconds, exact in any order.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from surveytools.assessment._common import FloatArray, IntArray
from surveytools.assessment.parts import common_reference, rescale_energy


@dataclass(frozen=True)
class SpectralParts:
    """Band-level partial results of a set of readings of one position.

    Parameters
    ----------
    nominal_hz : numpy.ndarray
        Nominal mid-band frequency of each band column, ascending. [Hz]
    reference_db : float
        Level the band energies are relative to. [dB]
    period_energy : numpy.ndarray
        ``(3, n_bands)`` relative band energy per Lden period type. [ms]
    period_ms : numpy.ndarray
        ``(3,)`` valid time with a complete spectrum per period type. [ms]
    tonal_ms : numpy.ndarray
        ``(3, n_bands)`` time of the period type in intervals whose spectrum is tonal in
        the band. [ms]
    largest_difference_db : numpy.ndarray
        ``(3, n_bands)`` largest tonal-screening difference of the intervals with time in
        the period type; -inf where none. [dB]
    interval_start_ms, interval_end_ms : numpy.ndarray of int64
        Reporting intervals with valid time, ascending. [ms]
    interval_ms : numpy.ndarray
        Valid time of each of those intervals. [ms]
    interval_la_db, interval_difference_db : numpy.ndarray
        A-weighted band total and its difference to the interval's LAeq. [dB]
    interval_tonal : numpy.ndarray of bool
        ``(n_intervals, n_bands)`` tonal bands of each interval spectrum.
    incomplete_readings : int
        Valid readings without a complete spectrum.
    """

    nominal_hz: FloatArray
    reference_db: float
    period_energy: FloatArray
    period_ms: FloatArray
    tonal_ms: FloatArray
    largest_difference_db: FloatArray
    interval_start_ms: IntArray
    interval_end_ms: IntArray
    interval_ms: FloatArray
    interval_la_db: FloatArray
    interval_difference_db: FloatArray
    interval_tonal: np.ndarray
    incomplete_readings: int

    def __add__(self, other: SpectralParts) -> SpectralParts:
        if not np.array_equal(self.nominal_hz, other.nominal_hz):
            raise ValueError("spectral parts of different band columns cannot be added")
        reference = common_reference(self.reference_db, other.reference_db)
        start = np.concatenate([self.interval_start_ms, other.interval_start_ms])
        order = np.argsort(start, kind="stable")
        if np.any(np.diff(start[order]) == 0):
            raise ValueError("spectral parts share a reporting interval")

        def joined(a: np.ndarray, b: np.ndarray) -> np.ndarray:
            return np.concatenate([a, b])[order]

        return SpectralParts(
            nominal_hz=self.nominal_hz,
            reference_db=reference,
            period_energy=(rescale_energy(self.period_energy, self.reference_db, reference)
                           + rescale_energy(other.period_energy, other.reference_db, reference)),
            period_ms=self.period_ms + other.period_ms,
            tonal_ms=self.tonal_ms + other.tonal_ms,
            largest_difference_db=np.maximum(self.largest_difference_db,
                                             other.largest_difference_db),
            interval_start_ms=start[order],
            interval_end_ms=joined(self.interval_end_ms, other.interval_end_ms),
            interval_ms=joined(self.interval_ms, other.interval_ms),
            interval_la_db=joined(self.interval_la_db, other.interval_la_db),
            interval_difference_db=joined(self.interval_difference_db,
                                          other.interval_difference_db),
            interval_tonal=joined(self.interval_tonal, other.interval_tonal),
            incomplete_readings=self.incomplete_readings + other.incomplete_readings,
        )
