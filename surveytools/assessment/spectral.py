"""Frequency analysis from one-third-octave band levels (the ``spectral`` section).

Whenever the Readings hold band columns (``LZeq_<f>Hz``), the valid readings with a
complete spectrum (every band column a number) are split at the reporting-interval grid
and at the Lden period boundaries, and their band energies summed once per (interval,
period) cell; every spectrum below is a sum of those cells:

- ``periods.{day,evening,night}``: the energy-average spectrum of all valid time of the
  period type, its A- and C-weighted totals (IEC 61672-1 weights at the exact band
  frequencies), LC - LA and the low-frequency flag;
- ``band_check``: per reporting interval the A-weighted band total minus the LAeq of the
  same readings, summarised; a median absolute difference above the tolerance gives the
  warning ``band-total-mismatch`` (Z/A-mixed, shifted or foreign band columns);
- ``tones``: the one-third-octave tonal screening of every interval spectrum and of each
  period's average spectrum, per band and period;
- ``intervals``: per reporting interval the A-weighted band total, the difference and
  the tonal bands.

The sums and the interval figures are the section's parts
(:class:`~surveytools.assessment.spectral_parts.SpectralParts`, :func:`spectral_parts_of`);
the section follows from them (:func:`spectral_from_parts`), so the parts of a long log's
batches, added up, give the same section.

Assessments use :func:`selection_spectrum` for the source-on and residual time and
:func:`tonal_correction` for a derived tonal correction.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import tzinfo
from typing import Any

import numpy as np

from surveytools.assessment._common import (
    FloatArray,
    IntArray,
    db,
    db_list,
    fraction,
    seconds,
    seconds_list,
    segment_groups,
)
from surveytools.assessment.context import Context
from surveytools.assessment.daily import N_PERIODS, PERIOD_NAMES, scheme_times
from surveytools.assessment.intervals import interval_bounds
from surveytools.assessment.spectral_parts import SpectralParts
from surveytools.assessment.timegrid import day_offset_boundaries, format_local
from surveytools.indicators.levels import grouped_energy_sums, level_from_energy_sums
from surveytools.indicators.reporting import reported_level
from surveytools.indicators.spectra import (
    grouped_band_energy_sums,
    low_frequency_content,
    one_third_octave_tonal_correction,
    screen_tones,
    tone_thresholds,
)
from surveytools.indicators.weighting import band_total
from surveytools.settings import Settings
from surveytools.validation.findings import Finding, Severity

#: Canonical band column names (``surveytools.inputs.columns.band_name``).
_BAND_COLUMN = re.compile(r"^LZeq_(\d+(?:\.\d+)?)Hz$")

#: Band columns summed per pass of the band energy sums (own choice: each pass holds some
#: ten temporary arrays of readings x bands; 4 of 34 bands keep that near 1/8 and the sums
#: per band are the same as in one pass).
BANDS_PER_PASS = 4

#: Method name of a derived tonal correction (the settings value).
ONE_THIRD_OCTAVE = "one-third-octave"

BAND_MISMATCH_MESSAGE = (
    "the A-weighted total of the band levels differs from the logged LAeq by a median "
    "{median:+.1f} dB over {count} reporting intervals (tolerance {tolerance:.1f} dB): check "
    "that the band columns are Z-weighted one-third-octave levels of the same channel and "
    "time as the LAeq (not A-weighted, not shifted by a row, not another instrument); the "
    "spectral figures are shown but should not be relied on until this is resolved"
)


@dataclass(frozen=True)
class Bands:
    """The band columns of a survey.

    Parameters
    ----------
    columns : tuple of str
        Canonical column names, ascending frequency.
    nominal_hz : numpy.ndarray
        Nominal mid-band frequency of each column. [Hz]
    complete : numpy.ndarray of bool
        Readings whose every band is a number.
    """

    columns: tuple[str, ...]
    nominal_hz: FloatArray
    complete: np.ndarray

    def levels(self, ctx: Context, rows: IntArray) -> FloatArray:
        """Band levels of the readings ``rows``, shape ``(rows, n_bands)`` [dB].

        Only the chosen rows are gathered, so a long log never holds a second full copy
        of its band columns.
        """
        out = np.empty((rows.size, len(self.columns)), dtype=np.float64)
        for k, name in enumerate(self.columns):  # one column at a time, 34 at most
            values = ctx.level(name)
            assert values is not None
            out[:, k] = values[rows]
        return out


def band_columns(columns: list[str]) -> list[tuple[float, str]]:
    """Band columns among canonical column names, as (nominal Hz, name), ascending."""
    found = []
    for name in columns:
        match = _BAND_COLUMN.match(str(name))
        if match:
            found.append((float(match.group(1)), str(name)))
    return sorted(found)


def survey_bands(ctx: Context) -> Bands | None:
    """Return the survey's band columns, None without band columns or readings."""
    found = band_columns(list(ctx.survey.readings.columns))
    if not found or ctx.n == 0:
        return None
    columns = tuple(name for _, name in found)
    complete = np.ones(ctx.n, dtype=bool)
    for name in columns:  # one column at a time, 34 at most
        values = ctx.level(name)
        assert values is not None
        complete &= np.isfinite(values)
    return Bands(columns, np.array([hz for hz, _ in found]), complete)


def _thresholds(settings: Settings, nominal_hz: FloatArray) -> FloatArray:
    spectral = settings.spectral
    return tone_thresholds(nominal_hz, spectral.tone_low_db, spectral.tone_mid_db,
                           spectral.tone_high_db)


def _group_of(starts_ms: IntArray, bounds_ms: IntArray) -> IntArray:
    return segment_groups(np.searchsorted(bounds_ms, starts_ms, side="right"),
                          max(bounds_ms.size - 1, 0))


def _spectrum_summary(settings: Settings, nominal_hz: FloatArray, spectrum: FloatArray,
                      valid_s: float) -> dict[str, Any]:
    """Average spectrum, its A / C totals, LC - LA, low-frequency flag and tonal bands."""
    la = float(band_total(spectrum, nominal_hz, "A"))
    lc = float(band_total(spectrum, nominal_hz, "C"))
    difference, flagged = low_frequency_content(lc, la, settings.spectral.low_frequency_db)
    tone_difference, tonal = screen_tones(spectrum, nominal_hz,
                                          _thresholds(settings, nominal_hz))
    return {
        "valid_s": seconds(valid_s),
        "LZeq": db_list(spectrum),
        "LAeq_from_bands": db(la),
        "LCeq_from_bands": db(lc),
        "LC_minus_LA": db(difference),
        "low_frequency": bool(flagged),
        "tonal_bands_hz": [float(f) for f in nominal_hz[tonal]],
        "tone_difference_db": db_list(tone_difference),
    }


def spectral_section(ctx: Context) -> tuple[dict[str, Any] | None, list[Finding]]:
    """Return the ``spectral`` section and its findings; (None, []) without band levels."""
    parts = spectral_parts_of(ctx)
    if parts is None:
        return None, []
    return spectral_from_parts(parts, ctx.settings, ctx.tz, ctx.survey.readings_sheet)


def spectral_parts_of(ctx: Context) -> SpectralParts | None:
    """Band energies per period type and the interval figures of a set of readings.

    None without band columns or readings. Parts of disjoint readings cut at
    reporting-interval boundaries add up with ``+`` (:mod:`~.spectral_parts`).
    """
    bands = survey_bands(ctx)
    if bands is None:
        return None
    settings = ctx.settings
    nominal = bands.nominal_hz
    n_bands = nominal.size
    thresholds = _thresholds(settings, nominal)

    intervals = interval_bounds(ctx)
    schemes = day_offset_boundaries(ctx.candidate_days, scheme_times(settings.periods.lden),
                                    ctx.tz)
    pieces, _ = ctx.pieces_in(np.union1d(intervals, schemes))
    n_intervals = max(intervals.size - 1, 0)
    interval = _group_of(pieces.start_ms, intervals)
    scheme = _group_of(pieces.start_ms, schemes)
    chosen = (ctx.valid[pieces.index] & bands.complete[pieces.index]
              & (pieces.duration_ms > 0) & (interval >= 0) & (scheme >= 0))
    index = pieces.index[chosen]
    weights_ms = pieces.weights_ms[chosen]
    cell = interval[chosen] * N_PERIODS + scheme[chosen] % N_PERIODS
    n_cells = n_intervals * N_PERIODS
    band_levels = bands.levels(ctx, index)
    reference = float(band_levels.max()) if band_levels.size else 0.0
    energy = np.empty((n_cells, n_bands))
    time = np.empty((n_cells, n_bands))
    for lo in range(0, n_bands, BANDS_PER_PASS):  # a few bands at a time: less working memory
        at = slice(lo, lo + BANDS_PER_PASS)
        energy[:, at], time[:, at] = grouped_band_energy_sums(band_levels[:, at], weights_ms,
                                                              cell, n_cells, reference)
    laeq = ctx.level("LAeq")
    assert laeq is not None
    laeq_reference = float(laeq[index].max()) if index.size else 0.0
    laeq_energy, laeq_time = grouped_energy_sums(laeq[index], weights_ms, cell, n_cells,
                                                 laeq_reference)
    cell_energy = energy.reshape(n_intervals, N_PERIODS, n_bands)
    cell_ms = time[:, 0].reshape(n_intervals, N_PERIODS) if n_bands else np.zeros((0, 3))

    # per reporting interval
    interval_ms = cell_ms.sum(axis=1)
    interval_spectra = level_from_energy_sums(cell_energy.sum(axis=1), interval_ms[:, None],
                                              reference)
    interval_la = np.asarray(band_total(interval_spectra, nominal, "A"), dtype=np.float64)
    interval_laeq = level_from_energy_sums(
        laeq_energy.reshape(n_intervals, N_PERIODS).sum(axis=1),
        laeq_time.reshape(n_intervals, N_PERIODS).sum(axis=1), laeq_reference)
    difference = interval_la - interval_laeq
    tone_difference, tonal = screen_tones(interval_spectra, nominal, thresholds)

    # per period type: tonal time and the largest difference of the period's intervals
    tonal_ms = cell_ms.T @ tonal.astype(np.float64)  # (periods, bands)
    largest = np.full((N_PERIODS, n_bands), -np.inf)
    for p in range(N_PERIODS):
        in_period = cell_ms[:, p] > 0
        differences = np.where(in_period[:, None] & np.isfinite(tone_difference),
                               tone_difference, -np.inf)
        largest[p] = differences.max(axis=0, initial=-np.inf)
    has = interval_ms > 0
    return SpectralParts(
        nominal_hz=nominal,
        reference_db=reference,
        period_energy=cell_energy.sum(axis=0),
        period_ms=cell_ms.sum(axis=0),
        tonal_ms=tonal_ms,
        largest_difference_db=largest,
        interval_start_ms=intervals[:-1][has],
        interval_end_ms=intervals[1:][has],
        interval_ms=interval_ms[has],
        interval_la_db=interval_la[has],
        interval_difference_db=difference[has],
        interval_tonal=tonal[has],
        incomplete_readings=int(np.count_nonzero(ctx.valid & ~bands.complete)),
    )


def spectral_from_parts(parts: SpectralParts, settings: Settings, tz: tzinfo,
                        readings_sheet: str) -> tuple[dict[str, Any], list[Finding]]:
    """Return the ``spectral`` section and its findings from (merged) spectral parts."""
    nominal = parts.nominal_hz
    thresholds = _thresholds(settings, nominal)
    period_ms = parts.period_ms
    period_spectra = level_from_energy_sums(parts.period_energy, period_ms[:, None],
                                            parts.reference_db)
    periods: dict[str, Any] = {}
    for p, name in enumerate(PERIOD_NAMES):
        periods[name] = (_spectrum_summary(settings, nominal, period_spectra[p],
                                           period_ms[p] / 1000.0)
                         if period_ms[p] > 0 else None)
    period_difference, period_tonal = screen_tones(period_spectra, nominal, thresholds)

    tones = _tones(nominal, thresholds, parts, period_tonal, period_difference)
    band_check, findings = _band_check(settings, readings_sheet, parts.interval_difference_db)
    starts = format_local(parts.interval_start_ms, tz)
    ends = format_local(parts.interval_end_ms, tz)
    la_list = db_list(parts.interval_la_db)
    difference_list = db_list(parts.interval_difference_db)
    valid_list = seconds_list(parts.interval_ms / 1000.0)
    interval_rows = [
        {"start": starts[j], "end": ends[j], "valid_s": valid_list[j],
         "LAeq_from_bands": la_list[j], "difference_db": difference_list[j],
         "tonal_bands_hz": [float(f) for f in nominal[parts.interval_tonal[j]]]}
        for j in range(parts.interval_start_ms.size)
    ]
    section = {
        "bands_hz": [float(f) for f in nominal],
        "valid_s": seconds(float(period_ms.sum()) / 1000.0),
        "incomplete_readings": parts.incomplete_readings,
        "tone_thresholds_db": db_list(thresholds),
        "low_frequency_threshold_db": settings.spectral.low_frequency_db,
        "periods": periods,
        "band_check": band_check,
        "tones": tones,
        "intervals": interval_rows,
    }
    return section, findings


def _tones(nominal: FloatArray, thresholds: FloatArray, parts: SpectralParts,
           period_tonal: np.ndarray, period_difference: FloatArray) -> list[dict[str, Any]]:
    """Tonal bands per period: in the average spectrum or in any interval spectrum."""
    period_ms, tonal_ms = parts.period_ms, parts.tonal_ms
    out: list[dict[str, Any]] = []
    for p, name in enumerate(PERIOD_NAMES):
        if not period_ms[p] > 0:
            continue
        largest = np.maximum(parts.largest_difference_db[p],
                             np.where(np.isfinite(period_difference[p]),
                                      period_difference[p], -np.inf))
        for k in np.flatnonzero((tonal_ms[p] > 0) | period_tonal[p]):  # tonal bands only
            out.append({
                "band_hz": float(nominal[k]),
                "period": name,
                "in_period_average": bool(period_tonal[p, k]),
                "time_fraction": fraction(tonal_ms[p, k] / period_ms[p]),
                "max_difference_db": db(largest[k]),
                "threshold_db": db(thresholds[k]),
            })
    return out


def _band_check(settings: Settings, readings_sheet: str, difference: FloatArray
                ) -> tuple[dict[str, Any], list[Finding]]:
    """Median band-total difference over the intervals that have one, and its finding."""
    tolerance = settings.spectral.band_total_tolerance_db
    finite = difference[np.isfinite(difference)]
    median = float(np.median(finite)) if finite.size else float("nan")
    median_abs = float(np.median(np.abs(finite))) if finite.size else float("nan")
    mismatch = bool(finite.size) and float(reported_level(median_abs)) > tolerance
    check = {
        "intervals": int(finite.size),
        "median_difference_db": db(median),
        "median_absolute_difference_db": db(median_abs),
        "max_absolute_difference_db": db(np.abs(finite).max()) if finite.size else None,
        "tolerance_db": tolerance,
        "mismatch": mismatch,
    }
    findings = []
    if mismatch:
        findings.append(Finding(
            "band-total-mismatch", Severity.WARNING,
            BAND_MISMATCH_MESSAGE.format(median=median, count=finite.size, tolerance=tolerance),
            readings_sheet))
    return check, findings


@dataclass(frozen=True)
class SelectionSpectrum:
    """Average spectrum of a set of reading (pieces) and its tonal screening."""

    spectrum: FloatArray
    valid_s: float
    tonal: np.ndarray
    difference_db: FloatArray


def selection_spectrum(ctx: Context, bands: Bands, index: IntArray, durations_s: FloatArray
                       ) -> SelectionSpectrum | None:
    """Energy-average spectrum of the readings ``index`` (valid, with a complete spectrum).

    ``index`` and ``durations_s`` are the readings (or reading pieces) of a selection such
    as an assessment's source-on time; None without any chosen reading with a complete
    spectrum.
    """
    keep = bands.complete[index] & (durations_s > 0)
    if not keep.any():
        return None
    levels = bands.levels(ctx, index[keep])
    reference = float(levels.max())
    energy, time = grouped_band_energy_sums(levels, durations_s[keep],
                                            np.zeros(int(keep.sum()), dtype=np.int64), 1,
                                            reference)
    spectrum = level_from_energy_sums(energy[0], time[0], reference)
    difference, tonal = screen_tones(spectrum, bands.nominal_hz,
                                     _thresholds(ctx.settings, bands.nominal_hz))
    return SelectionSpectrum(spectrum, float(time[0, 0]), tonal, difference)


def spectrum_json(ctx: Context, bands: Bands, selection: SelectionSpectrum | None
                  ) -> dict[str, Any] | None:
    """JSON form of a selection's spectrum (None stays None)."""
    if selection is None:
        return None
    return _spectrum_summary(ctx.settings, bands.nominal_hz, selection.spectrum,
                             selection.valid_s)


def tones_json(ctx: Context, bands: Bands, selection: SelectionSpectrum | None
               ) -> list[dict[str, Any]]:
    """Tonal bands of a selection's spectrum with their level differences."""
    if selection is None:
        return []
    thresholds = _thresholds(ctx.settings, bands.nominal_hz)
    return [{"band_hz": float(bands.nominal_hz[k]),
             "difference_db": db(selection.difference_db[k]),
             "threshold_db": db(thresholds[k])}
            for k in np.flatnonzero(selection.tonal)]


def _underived_basis() -> dict[str, Any]:
    """Tonal basis when there is no source-on spectrum to derive the correction from."""
    return {"source": "derived", "method": ONE_THIRD_OCTAVE, "bands_hz": [],
            "reason": ("no complete one-third-octave spectrum in the source-on time: the "
                       "tonal correction could not be derived and is 0 dB; give it by "
                       "hand (corrections_db.tonal = a number) if the source is tonal")}


def tonal_correction(ctx: Context, bands: Bands | None, source_on: SelectionSpectrum | None,
                     residual: SelectionSpectrum | None) -> tuple[float, dict[str, Any]]:
    """Derive the tonal correction and its basis (BS 4142 one-third-octave method).

    Returns
    -------
    correction_db : float
        6 dB when the source-on spectrum shows a tone the residual spectrum does not,
        else 0 (also when there are no band levels to derive it from). [dB]
    basis : dict
        ``{"source": "derived", "method": "one-third-octave", "bands_hz": [...],
        "reason": text}``.
    """
    if bands is None or source_on is None:
        return 0.0, _underived_basis()
    basis: dict[str, Any] = {"source": "derived", "method": ONE_THIRD_OCTAVE, "bands_hz": []}
    correction, counted = one_third_octave_tonal_correction(
        source_on.tonal, None if residual is None else residual.tonal,
        ctx.settings.spectral.tonal_correction_db)
    counted_hz = [float(f) for f in bands.nominal_hz[counted]]
    basis["bands_hz"] = counted_hz
    shared = [float(f) for f in bands.nominal_hz[source_on.tonal & ~counted]]
    if counted_hz:
        text = ", ".join(f"{f:g} Hz" for f in counted_hz)
        reason = (f"one-third-octave tone at {text} in the source-on spectrum"
                  + (", not in the residual spectrum" if residual is not None
                     else "; no residual spectrum to compare with"))
    elif shared:
        text = ", ".join(f"{f:g} Hz" for f in shared)
        reason = (f"the tone at {text} in the source-on spectrum is also in the residual "
                  "spectrum: not attributed to the source")
    else:
        reason = "no one-third-octave tone in the source-on spectrum"
    basis["reason"] = f"{reason} (BS 4142:2014+A1:2019 one-third-octave method)"
    return correction, basis


@dataclass(frozen=True)
class AssessmentSpectra:
    """What the band levels add to one assessment.

    Parameters
    ----------
    tonal_correction_db : float or None
        The derived tonal correction, None when the settings give it. [dB]
    tonal_basis : dict
        ``source`` (``"given"`` / ``"derived"``) and ``reason``.
    fields : dict
        ``spectrum_source_on``, ``spectrum_residual``, ``tones_source_on`` (present only
        when the survey has band levels).
    """

    tonal_correction_db: float | None
    tonal_basis: dict[str, Any]
    fields: dict[str, Any]


def assessment_spectra(ctx: Context, source_on: tuple[IntArray, FloatArray],
                       residual: tuple[IntArray, FloatArray], tonal_method: str | None
                       ) -> AssessmentSpectra:
    """Source-on / residual spectra of an assessment and its tonal correction basis.

    Parameters
    ----------
    ctx : Context
        The survey's shared arrays.
    source_on, residual : tuple of numpy.ndarray
        Reading index and duration [s] of each valid (piece of a) reading in the time.
    tonal_method : str or None
        ``"one-third-octave"`` to derive the tonal correction; None when it is given.
    """
    bands = survey_bands(ctx)
    if bands is None:
        return spectra_without_bands(tonal_method)
    on = selection_spectrum(ctx, bands, *source_on)
    off = selection_spectrum(ctx, bands, *residual)
    fields = {"spectrum_source_on": spectrum_json(ctx, bands, on),
              "spectrum_residual": spectrum_json(ctx, bands, off),
              "tones_source_on": tones_json(ctx, bands, on)}
    if tonal_method != ONE_THIRD_OCTAVE:
        return AssessmentSpectra(None, _given_basis(), fields)
    correction, basis = tonal_correction(ctx, bands, on, off)
    return AssessmentSpectra(correction, basis, fields)


def _given_basis() -> dict[str, Any]:
    return {"source": "given", "method": None, "bands_hz": [],
            "reason": "given in the settings (corrections_db)"}


def spectra_without_bands(tonal_method: str | None) -> AssessmentSpectra:
    """Return what :func:`assessment_spectra` gives for readings without band levels."""
    if tonal_method != ONE_THIRD_OCTAVE:
        return AssessmentSpectra(None, _given_basis(), {})
    return AssessmentSpectra(0.0, _underived_basis(), {})
