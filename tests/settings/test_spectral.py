"""[spectral] and the derived tonal correction of [[assessments]]."""

from __future__ import annotations

import pytest

from surveytools import constants as C  # noqa: N812
from surveytools.settings import Settings, load_settings, settings_from_dict
from tests.settings.example import FULL_EXAMPLE, assert_names_the_key, write


def test_defaults_name_their_sources():
    # ISO 1996-2:2007 Annex D (from memory): 15 / 8 / 5 dB; WHO 1999: LC - LA 10 dB;
    # own choice: 1.0 dB band-total tolerance; BS 4142:2014+A1:2019 (from memory): 6 dB.
    s = Settings().spectral
    assert (s.tone_low_db, s.tone_mid_db, s.tone_high_db) == (15.0, 8.0, 5.0)
    assert s.low_frequency_db == C.LOW_FREQUENCY_C_MINUS_A_DB == 10.0
    assert s.band_total_tolerance_db == 1.0
    assert s.tonal_correction_db == 6.0


def test_full_example_and_round_trip(tmp_path):
    s = load_settings(write(tmp_path, FULL_EXAMPLE))
    assert s.spectral.tone_mid_db == 7.0 and s.spectral.band_total_tolerance_db == 1.5
    assert s.spectral.tone_low_db == 15.0  # omitted keys keep their default
    pump = s.assessments[1]
    assert pump.tonal_method == "one-third-octave"
    assert pump.given_correction_db("tonal") == 0.0
    assert pump.given_correction_db("impulsive") == 3.0
    assert s.assessments[0].tonal_method is None
    assert s.assessments[0].given_correction_db("tonal") == 2.0
    recorded = s.to_dict()
    assert recorded["assessments"][1]["corrections_db"]["tonal"] == "one-third-octave"
    assert settings_from_dict(recorded) == s


BAD = [
    ("[spectral]\ntone_low_db = -1\n", r"spectral\.tone_low_db"),
    ('[spectral]\nband_total_tolerance_db = "1 dB"\n', r"spectral\.band_total_tolerance_db"),
    ("[spectral]\ntone_hight_db = 5\n", r"spectral\.tone_hight_db: unknown key"),
    ('[[assessments]]\nname = "A"\nposition = "P"\nuse_operating_column = true\n'
     'corrections_db = { tonal = "one-third octave" }\n',
     r"assessments\[1\]\.corrections_db\.tonal"),
]


@pytest.mark.parametrize(("text", "pattern"), BAD, ids=[f"bad{i}" for i in range(len(BAD))])
def test_bad_settings_name_the_key(tmp_path, text, pattern):
    assert_names_the_key(tmp_path, text, pattern)
