"""A / C / Z weightings against IEC 61672-1:2013 Table 3 and Annex E."""

from __future__ import annotations

import math

import numpy as np
import pytest

from surveytools.indicators.weighting import (
    NOMINAL_THIRD_OCTAVE_HZ,
    POLE_F1_HZ,
    POLE_F2_HZ,
    POLE_F3_HZ,
    POLE_F4_HZ,
    WEIGHTINGS,
    a_weighting,
    band_total,
    c_weighting,
    exact_band_frequency,
    z_weighting,
)

# IEC 61672-1:2013 Table 3 (standards.md §1a, CONFIRMED): nominal frequency [Hz],
# A [dB], C [dB], printed to 0.1 dB at the exact frequencies 1000*10**(n/10), n=-20..13.
TABLE_3 = [
    (10, -70.4, -14.3), (12.5, -63.4, -11.2), (16, -56.7, -8.5), (20, -50.5, -6.2),
    (25, -44.7, -4.4), (31.5, -39.4, -3.0), (40, -34.6, -2.0), (50, -30.2, -1.3),
    (63, -26.2, -0.8), (80, -22.5, -0.5), (100, -19.1, -0.3), (125, -16.1, -0.2),
    (160, -13.4, -0.1), (200, -10.9, 0.0), (250, -8.6, 0.0), (315, -6.6, 0.0),
    (400, -4.8, 0.0), (500, -3.2, 0.0), (630, -1.9, 0.0), (800, -0.8, 0.0),
    (1000, 0.0, 0.0), (1250, 0.6, 0.0), (1600, 1.0, -0.1), (2000, 1.2, -0.2),
    (2500, 1.3, -0.3), (3150, 1.2, -0.5), (4000, 1.0, -0.8), (5000, 0.5, -1.3),
    (6300, -0.1, -2.0), (8000, -1.1, -3.0), (10000, -2.5, -4.4), (12500, -4.3, -6.2),
    (16000, -6.6, -8.5), (20000, -9.3, -11.2),
]
# Table printed to 0.1 dB -> half a unit of the last digit.
TABLE_TOL_DB = 0.05


def test_band_list_matches_table_3():
    assert len(NOMINAL_THIRD_OCTAVE_HZ) == 34
    assert [row[0] for row in TABLE_3] == list(NOMINAL_THIRD_OCTAVE_HZ)


@pytest.mark.parametrize(("nominal", "a_db", "c_db"), TABLE_3, ids=[str(r[0]) for r in TABLE_3])
def test_table_3_at_exact_frequencies(nominal, a_db, c_db):
    exact = exact_band_frequency(nominal)
    assert a_weighting(exact) == pytest.approx(a_db, abs=TABLE_TOL_DB)
    assert c_weighting(exact) == pytest.approx(c_db, abs=TABLE_TOL_DB)
    assert z_weighting(exact) == 0.0


def test_exact_frequencies():
    # IEC 61672-1:2013 Table 3 / standards.md §1a: exact frequencies 1000*10**(n/10),
    # printed there to 4 significant figures: 12.59, 31.62, 63.10, 1259, 19950.
    np.testing.assert_allclose(
        exact_band_frequency([12.5, 31.5, 63.0, 1250.0, 20000.0]),
        [12.59, 31.62, 63.10, 1259.0, 19950.0], rtol=5e-4)
    # hand-evaluated: 1000*10**(-15/10) = 31.6228 exactly to 6 figures
    assert exact_band_frequency(31.5) == pytest.approx(1000 * 10 ** -1.5, rel=1e-12)
    # not a one-third-octave band / not a frequency -> NaN
    assert np.isnan(exact_band_frequency([1100.0, -5.0, np.nan])).all()


def test_normalised_at_1khz():
    # IEC 61672-1:2013 Annex E: A(1 kHz) = C(1 kHz) = 0 dB (within 0.001 dB, standards.md §1b).
    assert a_weighting(1000.0) == pytest.approx(0.0, abs=0.001)
    assert c_weighting(1000.0) == pytest.approx(0.0, abs=0.001)


def test_pole_frequencies():
    # standards.md §1b (CONFIRMED: pyfar constants and recomputation):
    # f1 = 20.598997, f2 = 107.65265, f3 = 737.86223, f4 = 12194.217 Hz.
    poles = (POLE_F1_HZ, POLE_F2_HZ, POLE_F3_HZ, POLE_F4_HZ)
    published = (20.598997, 107.65265, 737.86223, 12194.217)
    half_last_digit = (5e-7, 5e-6, 5e-6, 5e-4)
    for pole, value, tol in zip(poles, published, half_last_digit, strict=True):
        assert abs(pole - value) <= tol


def test_nominal_frequency_pitfall():
    # standards.md §1a "test pitfall": at the *nominal* 160 Hz the formula gives -13.2,
    # not Table 3's -13.4 — so the exact frequency matters.
    assert round(a_weighting(160.0), 1) == -13.2
    assert round(a_weighting(exact_band_frequency(160.0)), 1) == -13.4


def test_bad_frequencies():
    out = a_weighting([0.0, -1.0, np.nan])
    assert out[0] == -np.inf and np.isnan(out[1:]).all()
    assert np.isnan(c_weighting(-10.0)) and np.isnan(z_weighting(np.nan))


# standards.md §1c: band-to-overall check values COMPUTED there from the Table 3 values
# (rounded to 0.1 dB). Our weights are the analytic ones, each within 0.05 dB of the
# table, so the totals agree within 0.05 dB.
ALL_34 = list(NOMINAL_THIRD_OCTAVE_HZ)
BANDS_25_TO_10K = [f for f in ALL_34 if 25.0 <= f <= 10000.0]


@pytest.mark.parametrize(
    ("bands", "weighting", "expected"),
    [
        pytest.param(ALL_34, "Z", 75.31, id="34-bands-Z"),
        pytest.param(ALL_34, "A", 71.94, id="34-bands-A"),
        pytest.param(ALL_34, "C", 73.73, id="34-bands-C"),
        pytest.param(BANDS_25_TO_10K, "Z", 74.31, id="27-bands-Z"),
        pytest.param(BANDS_25_TO_10K, "A", 71.73, id="27-bands-A"),
        pytest.param(BANDS_25_TO_10K, "C", 73.55, id="27-bands-C"),
        pytest.param([800.0, 1000.0, 1250.0], "Z", 64.77, id="one-octave-Z"),
    ],
)
def test_band_totals_computed_from_table_3(bands, weighting, expected):
    assert len(BANDS_25_TO_10K) == 27
    assert band_total([60.0] * len(bands), bands, weighting) == pytest.approx(expected, abs=0.05)


def test_band_total_rows_and_nan():
    levels = np.array([
        [60.0, 60.0, 60.0],
        [60.0, np.nan, 60.0],
        [np.nan, np.nan, np.nan],
    ])
    out = band_total(levels, [800.0, 1000.0, 1250.0], "Z")
    # hand-evaluated: three 60 dB bands 60 + 10 lg 3 = 64.771; two: 63.010; none: NaN
    np.testing.assert_allclose(out, [64.771, 63.010, np.nan], atol=5e-4)
    # A-weighted single 1 kHz band: unchanged (A(1 kHz) = 0)
    assert band_total([55.0], [1000.0], "A") == pytest.approx(55.0, abs=0.001)
    # a column that is not a band is left out
    assert band_total([60.0, 60.0], [1000.0, 1100.0], "Z") == pytest.approx(60.0, abs=1e-12)


def test_band_total_programming_errors():
    assert WEIGHTINGS == ("A", "C", "Z")
    with pytest.raises(ValueError, match="A, C, Z"):
        band_total([60.0], [1000.0], "B")
    with pytest.raises(ValueError, match="one frequency per band column"):
        band_total([60.0, 60.0], [1000.0], "A")
    assert math.isnan(band_total([np.nan], [1000.0], "C"))
