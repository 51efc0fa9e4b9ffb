"""The spectral section and the assessment spectra, from band levels of invented readings."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from conftest import build_survey, local_ms

from surveytools.assessment import assess
from surveytools.constants import NOMINAL_THIRD_OCTAVE_HZ
from surveytools.indicators.weighting import band_total
from surveytools.inputs.columns import band_name
from surveytools.settings import Assessment, Settings

#: The 27 bands 25 Hz - 10 kHz (standards.md §1c has their flat-spectrum totals).
BANDS = [f for f in NOMINAL_THIRD_OCTAVE_HZ if 25.0 <= f <= 10000.0]
MINUTE_MS = 60_000


def spectral_survey(tone_from: str | None = "2026-07-03 23:30",
                    tone_to: str = "2026-07-04 00:30", tone_hz: float = 100.0,
                    tone_above_db: float = 20.0, floor_db: float = 60.0,
                    offsets_db: dict[float, float] | None = None):
    """1-min readings 18:00-01:00 local, flat spectrum with an optional tone.

    The logged LAeq is the A-weighted total of the true spectrum, logged to 0.1 dB as a
    meter does; ``offsets_db`` then shifts band columns (a faulty export).
    """
    start = local_ms("2026-07-03 18:00")
    n = 7 * 60
    starts = start + MINUTE_MS * np.arange(n, dtype=np.int64)
    levels = np.full((n, len(BANDS)), floor_db)
    if tone_from is not None:
        on = (starts >= local_ms(tone_from)) & (starts < local_ms(tone_to))
        levels[on, BANDS.index(tone_hz)] = floor_db + tone_above_db
    laeq = np.round(np.asarray(band_total(levels, BANDS, "A")), 1)
    survey = build_survey(starts.tolist(), 60, {"LAeq": laeq})
    for k, f in enumerate(BANDS):
        survey.readings[band_name(f)] = levels[:, k] + (offsets_db or {}).get(f, 0.0)
    return survey


def test_no_band_columns_no_section():
    survey = build_survey([local_ms("2026-07-03 18:00")], 60, {"LAeq": [50.0]})
    assert assess(survey, Settings())["spectral"] is None


def test_period_spectra_and_totals_of_a_flat_spectrum():
    result = assess(spectral_survey(tone_from=None), Settings())
    spectral = result["spectral"]
    assert spectral["bands_hz"] == BANDS
    day = spectral["periods"]["day"]  # 18:00-19:00
    assert day["valid_s"] == 3600.0
    assert day["LZeq"] == [60.0] * len(BANDS)
    # standards.md §1c (computed from IEC 61672-1:2013 Table 3): 27 bands 25 Hz-10 kHz at
    # 60.0 dB give LA = 71.73 dB and LC = 73.55 dB.
    assert day["LAeq_from_bands"] == pytest.approx(71.73, abs=0.05)
    assert day["LCeq_from_bands"] == pytest.approx(73.55, abs=0.05)
    assert day["LC_minus_LA"] == pytest.approx(1.8, abs=0.1)
    assert day["low_frequency"] is False
    assert spectral["tones"] == []
    assert spectral["periods"]["evening"]["valid_s"] == 4 * 3600.0
    assert spectral["periods"]["night"]["valid_s"] == 2 * 3600.0


def test_night_tone_time_fraction_and_average():
    spectral = assess(spectral_survey(), Settings())["spectral"]
    (tone,) = spectral["tones"]
    # ISO 1996-2:2007 Annex D (from memory): 100 Hz lies in 25-125 Hz, threshold 15 dB;
    # the band is 20 dB above both neighbours for 60 of the 120 night minutes.
    assert tone["band_hz"] == 100.0 and tone["period"] == "night"
    assert tone["time_fraction"] == 0.5
    assert tone["max_difference_db"] == 20.0
    assert tone["threshold_db"] == 15.0
    # hand-evaluated night average of the 100 Hz band: 10 lg((10**8 + 10**6) / 2) = 77.03 dB,
    # 17.03 dB above the 60 dB neighbours >= 15 dB: the average spectrum is tonal too.
    night = spectral["periods"]["night"]
    assert night["LZeq"][BANDS.index(100.0)] == pytest.approx(77.03, abs=0.005)
    assert tone["in_period_average"] is True
    assert night["tonal_bands_hz"] == [100.0]
    tonal_intervals = [row["start"] for row in spectral["intervals"] if row["tonal_bands_hz"]]
    assert tonal_intervals == ["2026-07-03T23:30:00+02:00", "2026-07-03T23:45:00+02:00",
                               "2026-07-04T00:00:00+02:00", "2026-07-04T00:15:00+02:00"]


def test_tone_in_a_short_part_of_the_night_only_in_intervals():
    # 15 of 120 minutes: the average 10 lg((10**8 + 7 * 10**6) / 8) = 71.28 dB is only
    # 11.3 dB above its neighbours (< 15 dB), so only the interval spectrum is tonal.
    spectral = assess(spectral_survey(tone_to="2026-07-03 23:45"), Settings())["spectral"]
    (tone,) = spectral["tones"]
    assert tone["time_fraction"] == 0.125
    assert tone["in_period_average"] is False
    assert spectral["periods"]["night"]["tonal_bands_hz"] == []


def test_band_check_agrees_with_logged_laeq():
    spectral = assess(spectral_survey(), Settings())["spectral"]
    check = spectral["band_check"]
    assert check["intervals"] == 28  # 7 h of 15-min intervals
    # the logged LAeq is the band total rounded to 0.1 dB: differences within 0.05 dB
    assert abs(check["median_difference_db"]) <= 0.05
    assert check["mismatch"] is False


def test_band_column_offset_gives_band_total_mismatch():
    # hand-evaluated (IEC 61672-1:2013 Table 3 weights -0.8 / 0.0 / +0.6 dB) for a spectrum
    # of 800 / 1000 / 1250 Hz at 50 / 60 / 50 dB: LA = 60 + 10 lg(1 + 10**-1.08 + 10**-0.94)
    # = 60.78 dB. With the 1 kHz column 3 dB too high the band total is
    # 63 + 10 lg(1 + 10**-1.38 + 10**-1.24) = 63.41 dB: +2.63 dB over the logged 60.8 dB.
    start = local_ms("2026-07-03 18:00")
    starts = [start + MINUTE_MS * k for k in range(60)]
    survey = build_survey(starts, 60, {"LAeq": [60.8] * 60})
    for f, level in ((800.0, 50.0), (1000.0, 63.0), (1250.0, 50.0)):
        survey.readings[band_name(f)] = level
    result = assess(survey, Settings())
    check = result["spectral"]["band_check"]
    assert check["median_difference_db"] == pytest.approx(2.61, abs=0.05)
    assert check["mismatch"] is True
    codes = [f.code for f in survey.findings]
    assert codes == ["band-total-mismatch"]
    assert survey.findings[0].severity == "warning"
    assert survey.finding_counts["band-total-mismatch"] == 1
    # the same bands without the offset agree (60.78 vs 60.8)
    survey_ok = build_survey(starts, 60, {"LAeq": [60.8] * 60})
    for f, level in ((800.0, 50.0), (1000.0, 60.0), (1250.0, 50.0)):
        survey_ok.readings[band_name(f)] = level
    assert assess(survey_ok, Settings())["spectral"]["band_check"]["median_difference_db"] \
        == pytest.approx(-0.02, abs=0.05)
    assert survey_ok.findings == []


def test_tolerance_is_a_setting():
    settings = dataclasses.replace(
        Settings(), spectral=dataclasses.replace(Settings().spectral,
                                                 band_total_tolerance_db=5.0))
    survey = spectral_survey(offsets_db={f: 3.0 for f in BANDS})
    check = assess(survey, settings)["spectral"]["band_check"]
    assert check["median_difference_db"] == pytest.approx(3.0, abs=0.05)
    assert check["mismatch"] is False
    assert survey.findings == []


def test_low_frequency_flag_from_a_low_frequency_spectrum():
    # bands 25-125 Hz 30 dB above the rest: C keeps them, A cuts them by 16-45 dB
    # (IEC 61672-1:2013 Table 3), so LC - LA is well above the 10 dB of WHO 1999
    # (from memory); with a 30 dB threshold it is not flagged.
    survey = spectral_survey(tone_from=None)
    for f in BANDS:
        if f <= 125.0:
            survey.readings[band_name(f)] += 30.0
    spectral = assess(survey, Settings())["spectral"]
    day = spectral["periods"]["day"]
    assert day["LC_minus_LA"] >= 10.0 and day["low_frequency"] is True
    strict = dataclasses.replace(Settings(), spectral=dataclasses.replace(
        Settings().spectral, low_frequency_db=day["LC_minus_LA"] + 0.1))
    assert assess(spectral_survey(tone_from=None), strict)["spectral"]["periods"]["day"][
        "low_frequency"] is False


NIGHT = dict(source_on=(("2026-07-03 23:30", "2026-07-04 00:30"),),
             residual=(("2026-07-04 00:30", "2026-07-04 01:00"),))


def _assessment(**kwargs):
    return Assessment(name="Pump", position="NW-2", **NIGHT, **kwargs)


def test_derived_tonal_correction_flows_into_rating_and_excess():
    derived = assess(spectral_survey(), Settings(assessments=(
        _assessment(corrections_db={"tonal": "one-third-octave"}),)))["assessments"][0]
    given = assess(spectral_survey(), Settings(assessments=(
        _assessment(corrections_db={"tonal": 0.0}),)))["assessments"][0]
    # BS 4142:2014+A1:2019 one-third-octave method (from memory): the 100 Hz tone is in
    # the source-on spectrum and not in the residual one -> +6 dB.
    assert derived["corrections_db"]["tonal"] == 6.0
    assert derived["tonal_basis"]["source"] == "derived"
    assert derived["tonal_basis"]["bands_hz"] == [100.0]
    assert "100 Hz" in derived["tonal_basis"]["reason"]
    assert given["tonal_basis"]["source"] == "given"
    # rating = specific + corrections (BS 4142:2014 9.2), excess = rating - background
    assert derived["specific_level"] == given["specific_level"]
    assert derived["rating_level"] == pytest.approx(derived["specific_level"] + 6.0, abs=0.01)
    assert derived["rating_level"] - given["rating_level"] == pytest.approx(6.0, abs=0.011)
    assert derived["excess_over_background"] - given["excess_over_background"] == \
        pytest.approx(6.0, abs=0.011)
    assert derived["tones_source_on"] == [
        {"band_hz": 100.0, "difference_db": 20.0, "threshold_db": 15.0}]
    assert derived["spectrum_source_on"]["LZeq"][BANDS.index(100.0)] == 80.0
    assert derived["spectrum_residual"]["tonal_bands_hz"] == []


def test_tone_also_in_residual_gives_no_correction():
    survey = spectral_survey(tone_to="2026-07-04 01:00")
    (a,) = assess(survey, Settings(assessments=(
        _assessment(corrections_db={"tonal": "one-third-octave"}),)))["assessments"]
    assert a["corrections_db"]["tonal"] == 0.0
    assert "also in the residual" in a["tonal_basis"]["reason"]


def test_no_bands_derived_correction_is_zero_with_reason():
    survey = build_survey([local_ms("2026-07-03 23:30") + MINUTE_MS * k for k in range(90)],
                          60, {"LAeq": [50.0] * 60 + [40.0] * 30})
    (a,) = assess(survey, Settings(assessments=(
        _assessment(corrections_db={"tonal": "one-third-octave"}),)))["assessments"]
    assert a["corrections_db"]["tonal"] == 0.0
    assert "could not be derived" in a["tonal_basis"]["reason"]
    assert "spectrum_source_on" not in a


def test_empty_and_incomplete_band_columns_give_no_nan():
    import json

    start = local_ms("2026-07-03 18:00")
    starts = [start + MINUTE_MS * k for k in range(30)]
    survey = build_survey(starts, 60, {"LAeq": [50.0] * 30})
    survey.readings[band_name(1000.0)] = np.nan  # a band column left empty
    survey.readings[band_name(1250.0)] = 45.0
    spectral = assess(survey, Settings())["spectral"]
    json.dumps(spectral, allow_nan=False)
    assert spectral["bands_hz"] == [1000.0, 1250.0]
    assert spectral["periods"] == {"day": None, "evening": None, "night": None}
    assert spectral["band_check"]["intervals"] == 0
    assert spectral["band_check"]["mismatch"] is False
    assert spectral["incomplete_readings"] == 30
    assert spectral["tones"] == [] and spectral["intervals"] == []


def test_readings_with_a_missing_band_value_are_left_out():
    survey = spectral_survey(tone_from=None)
    column = band_name(1000.0)
    values = survey.readings[column].to_numpy(copy=True)
    values[:30] = np.nan  # the first half hour of the day lacks the 1 kHz band
    survey.readings[column] = values
    spectral = assess(survey, Settings())["spectral"]
    assert spectral["incomplete_readings"] == 30
    assert spectral["periods"]["day"]["valid_s"] == 1800.0
    assert spectral["periods"]["day"]["LZeq"] == [60.0] * len(BANDS)
