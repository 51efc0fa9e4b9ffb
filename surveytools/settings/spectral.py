"""``[spectral]``: frequency analysis from one-third-octave band levels.

Tone-test level differences (ISO 1996-2:2007 Annex D), the LC - LA low-frequency flag
(WHO 1999), the band-total tolerance (own choice) and the size of a derived tonal
correction (BS 4142:2014+A1:2019); every default and its source is in
:mod:`surveytools.constants`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import Any

from surveytools import constants as C  # noqa: N812
from surveytools.settings._parse import Problem, floats

#: Keys of the ``[spectral]`` table, all numbers in dB.
SPECTRAL_KEYS = ("tone_low_db", "tone_mid_db", "tone_high_db", "low_frequency_db",
                 "band_total_tolerance_db", "tonal_correction_db")


@dataclass(frozen=True)
class Spectral:
    """Thresholds of the frequency analysis [dB].

    ``tone_low_db`` / ``tone_mid_db`` / ``tone_high_db``: how far a band must stand above
    both adjacent bands to hold a tone in 25-125 Hz / 160-400 Hz / 500 Hz-10 kHz.
    ``low_frequency_db``: LC - LA at or above which a spectrum is flagged low-frequency.
    ``band_total_tolerance_db``: largest median absolute difference between the
    A-weighted band total and the logged LAeq per reporting interval.
    ``tonal_correction_db``: the tonal correction a derived one-third-octave test gives.
    """

    tone_low_db: float = C.TONE_LOW_DIFFERENCE_DB
    tone_mid_db: float = C.TONE_MID_DIFFERENCE_DB
    tone_high_db: float = C.TONE_HIGH_DIFFERENCE_DB
    low_frequency_db: float = C.LOW_FREQUENCY_C_MINUS_A_DB
    band_total_tolerance_db: float = C.BAND_TOTAL_TOLERANCE_DB
    tonal_correction_db: float = C.ONE_THIRD_OCTAVE_TONAL_CORRECTION_DB


def build_spectral(given: Mapping[str, Any]) -> tuple[Spectral, list[Problem]]:
    """Build :class:`Spectral` from the schema-valid ``[spectral]`` table.

    Returns
    -------
    spectral : Spectral
    problems : list of (key path, problem)
        Always empty: the schema bounds every value.
    """
    return replace(Spectral(), **floats(given, SPECTRAL_KEYS)), []
