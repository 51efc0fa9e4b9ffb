"""One-third-octave spectra: tonal screening, band totals, low-frequency content."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from surveytools.indicators.spectra import (
    band_numbers,
    grouped_band_spectra,
    low_frequency_content,
    one_third_octave_tonal_correction,
    screen_tones,
    tone_level_differences,
    tone_thresholds,
)
from surveytools.indicators.weighting import NOMINAL_THIRD_OCTAVE_HZ, band_total
from tests.indicators.test_weighting import TABLE_3

BANDS = np.array(NOMINAL_THIRD_OCTAVE_HZ)


def _spectrum_with_peak(peak_hz: float, above_db: float, floor_db: float) -> np.ndarray:
    """Flat spectrum at ``floor_db`` with one band ``above_db`` higher."""
    levels = np.full(BANDS.size, floor_db)
    levels[list(BANDS).index(peak_hz)] = round(floor_db + above_db, 1)
    return levels


# ISO 1996-2:2007 Annex D / BS 4142:2014+A1:2019 Annex C (shared reference §5, from
# memory): a band holds a tone when it exceeds BOTH adjacent bands by at least 15 dB in
# 25-125 Hz, 8 dB in 160-400 Hz, 5 dB in 500 Hz-10 kHz. Floors like 55.3 dB make the
# binary difference miss the decimal one (60.3 - 55.3 = 4.99999...), so the test also pins
# that the difference is judged at 0.1 dB.
BOUNDARY_CASES = [
    pytest.param(500.0, 5.0, True, id="500Hz-5.0-tonal"),
    pytest.param(500.0, 4.9, False, id="500Hz-4.9-not"),
    pytest.param(160.0, 8.0, True, id="160Hz-8.0-tonal"),
    pytest.param(160.0, 7.9, False, id="160Hz-7.9-not"),
    pytest.param(125.0, 15.0, True, id="125Hz-15.0-tonal"),
    pytest.param(125.0, 14.9, False, id="125Hz-14.9-not"),
    pytest.param(400.0, 8.0, True, id="400Hz-8.0-tonal"),
    pytest.param(10000.0, 5.0, True, id="10kHz-5.0-tonal"),
    pytest.param(25.0, 14.9, False, id="25Hz-14.9-not"),
]


@pytest.mark.parametrize(("band", "above", "tonal"), BOUNDARY_CASES)
@pytest.mark.parametrize("floor", [55.3, 40.0, 61.7])
def test_screening_at_each_boundary_region(band, above, tonal, floor):
    levels = _spectrum_with_peak(band, above, floor)
    difference, found = screen_tones(levels, BANDS)
    k = list(BANDS).index(band)
    assert difference[k] == pytest.approx(above, abs=1e-9)
    assert bool(found[k]) is tonal
    assert found.sum() == int(tonal)  # no other band is flagged


def test_both_neighbours_must_be_exceeded():
    # ISO 1996-2:2007 Annex D (from memory): the band must exceed both adjacent bands.
    levels = _spectrum_with_peak(1000.0, 10.0, 50.0)
    levels[list(BANDS).index(1250.0)] = 57.0  # only 3 dB below the 1 kHz band
    difference, found = screen_tones(levels, BANDS)
    assert difference[list(BANDS).index(1000.0)] == pytest.approx(3.0)
    assert not found.any()


def test_first_last_and_gap_bands_are_not_screened():
    # Only bands with both neighbours present and adjacent can be screened (the test
    # compares with the adjacent bands; ISO 1996-2:2007 Annex D, from memory).
    bands = np.array([400.0, 500.0, 630.0, 1000.0, 1250.0, 1600.0])  # 800 Hz missing
    levels = np.array([80.0, 50.0, 80.0, 50.0, 80.0, 50.0])
    difference = tone_level_differences(levels, bands)
    assert np.isnan(difference[[0, 2, 3, 5]]).all()  # first, last, beside the gap
    assert difference[1] == pytest.approx(-30.0)
    assert difference[4] == pytest.approx(30.0)
    _, found = screen_tones(levels, bands)
    assert found.tolist() == [False, False, False, False, True, False]


def test_thresholds_per_range_and_unscreened_bands():
    # Ranges and differences as in the module docstring's source (from memory).
    thresholds = tone_thresholds([20.0, 25.0, 125.0, 160.0, 400.0, 500.0, 10000.0, 12500.0])
    assert np.isnan(thresholds[[0, 7]]).all()
    assert thresholds[1:7].tolist() == [15.0, 15.0, 8.0, 8.0, 5.0, 5.0]
    assert tone_thresholds([500.0], high_db=3.0).tolist() == [3.0]


def test_band_numbers():
    # IEC 61260-1:2014 base-ten bands: 1 kHz is n = 0, 31.5 Hz is n = -15, 20 kHz n = 13.
    assert band_numbers([31.5, 1000.0, 20000.0]).tolist() == [-15.0, 0.0, 13.0]
    assert np.isnan(band_numbers([700.0])).all()


@pytest.mark.parametrize(("nominal", "a_db", "c_db"), TABLE_3, ids=[str(r[0]) for r in TABLE_3])
def test_single_band_totals_carry_table_3_weights(nominal, a_db, c_db):
    # IEC 61672-1:2013 Table 3 (standards.md §1a, printed to 0.1 dB): a spectrum with one
    # band at 70 dB (its neighbours far below) totals 70 dB + that band's weight.
    levels = np.full(BANDS.size, -100.0)
    levels[list(BANDS).index(nominal)] = 70.0
    assert band_total(levels, BANDS, "A") == pytest.approx(70.0 + a_db, abs=0.05)
    assert band_total(levels, BANDS, "C") == pytest.approx(70.0 + c_db, abs=0.05)


# IEC 61672-1:2013 Table 3 (standards.md §1a): A weights, to 0.1 dB.
def test_a_total_of_three_bands_hand_evaluated():
    # hand-evaluated with the Table 3 weights 0.0 / +0.6 / +1.0 dB at 1000 / 1250 / 1600 Hz:
    # 60 + 10 lg(1 + 10**0.06 + 10**0.10) = 60 + 10 lg(3.40708) = 65.32 dB
    total = band_total([60.0, 60.0, 60.0], [1000.0, 1250.0, 1600.0], "A")
    assert total == pytest.approx(65.32, abs=0.05)


def test_a_total_of_flat_spectrum_from_table_3():
    # standards.md §1c (computed from the Table 3 values): the 27 bands 25 Hz-10 kHz at
    # 60.0 dB give LA = 71.73 dB, LC = 73.55 dB, LZ = 74.31 dB.
    bands = BANDS[(BANDS >= 25.0) & (BANDS <= 10000.0)]
    levels = np.full(bands.size, 60.0)
    assert band_total(levels, bands, "A") == pytest.approx(71.73, abs=0.05)
    assert band_total(levels, bands, "C") == pytest.approx(73.55, abs=0.05)
    assert band_total(levels, bands, "Z") == pytest.approx(74.31, abs=0.05)


def test_low_frequency_octave_c_minus_a():
    # hand-evaluated with IEC 61672-1:2013 Table 3 weights, 50 / 63 / 80 Hz at 70 dB:
    # C: -1.3 / -0.8 / -0.5 -> 70 + 10 lg(0.74131 + 0.83176 + 0.89125) = 73.92 dB
    # A: -30.2 / -26.2 / -22.5 -> 70 + 10 lg(0.000955 + 0.002399 + 0.005623) = 49.53 dB
    bands = [50.0, 63.0, 80.0]
    lc = band_total([70.0] * 3, bands, "C")
    la = band_total([70.0] * 3, bands, "A")
    assert lc == pytest.approx(73.92, abs=0.05)
    assert la == pytest.approx(49.53, abs=0.05)
    difference, flagged = low_frequency_content(lc, la, 10.0)
    assert float(difference) == pytest.approx(24.4, abs=0.1)
    assert bool(flagged)


def test_low_frequency_threshold_is_reached_at_equality():
    # WHO Guidelines for Community Noise (1999), from memory: a C-A difference of 10 dB
    # calls for frequency analysis; "reaches" includes equality at the reported 0.1 dB.
    difference, flagged = low_frequency_content([70.3, 70.2], [60.3, 60.3], 10.0)
    assert difference.tolist() == [10.0, 9.9]
    assert flagged.tolist() == [True, False]


def test_grouped_band_spectra_energy_average():
    # hand-evaluated: two equal-length readings at 60 and 70 dB in one band:
    # 10 lg((10**6 + 10**7) / 2) = 67.40 dB; the other band is constant at 50 dB.
    levels = np.array([[60.0, 50.0], [70.0, 50.0], [80.0, 80.0]])
    spectra = grouped_band_spectra(levels, [1.0, 1.0, 1.0], [0, 0, -1], 2)
    assert spectra[0, 0] == pytest.approx(10 * math.log10((1e6 + 1e7) / 2), abs=1e-9)
    assert spectra[0, 1] == pytest.approx(50.0, abs=1e-9)
    assert np.isnan(spectra[1]).all()


def test_grouped_band_spectra_leaves_out_missing_band_values():
    # A missing band value does not dilute that band's average (its time is not counted).
    levels = np.array([[60.0, np.nan], [60.0, 40.0]])
    spectra = grouped_band_spectra(levels, [1.0, 3.0], [0, 0], 1)
    assert spectra[0].tolist() == pytest.approx([60.0, 40.0])


def test_derived_tonal_correction():
    # BS 4142:2014+A1:2019 one-third-octave method (from memory): 6 dB when the
    # source-on spectrum shows a tone the residual spectrum does not, else 0.
    on = np.array([False, True, False])
    assert one_third_octave_tonal_correction(on, [False, False, False])[0] == 6.0
    assert one_third_octave_tonal_correction(on, [False, True, False])[0] == 0.0
    assert one_third_octave_tonal_correction(on, None)[0] == 6.0
    assert one_third_octave_tonal_correction([False] * 3, None)[0] == 0.0


@settings(max_examples=50, deadline=None)
@given(st.lists(st.floats(20.0, 90.0), min_size=len(BANDS), max_size=len(BANDS)),
       st.integers(-30, 30))
def test_screening_depends_on_level_differences_only(levels, shift):
    # Property: the tone test compares a band with its neighbours, so adding the same
    # whole number of dB to every band cannot change which bands are tonal.
    levels = np.round(np.array(levels), 1)
    _, found = screen_tones(levels, BANDS)
    _, shifted = screen_tones(levels + shift, BANDS)
    assert found.tolist() == shifted.tolist()
