"""Shared pieces of the settings tests: an invented full settings file and a writer."""

from __future__ import annotations

from pathlib import Path

import pytest

from surveytools.errors import SettingsError
from surveytools.settings import load_settings

# An invented survey (position "NW-2" at no real site).
FULL_EXAMPLE = """\
reporting_interval = "15min"
percentiles = [10, 50, 90, 95]
coverage_threshold = 0.8

[periods]
laeq16_start = "07:00"
laeq16_end = "23:00"

[periods.lden]
day_start = "06:00"
evening_start = "18:00"
night_start = "22:00"
evening_penalty_db = 5
night_penalty_db = 10

[periods.ldn]
night_start = "22:00"

[periods.cnel]
evening_start = "19:00"

[background]
reference_interval_day = "1h"
reference_interval_night = "15min"
method = "median"

[exclusions]
wind_max_m_s = 5
rain_max_mm = 0
rain_settle = "30min"
level_min_db = 15
level_max_db = 135
exclude_overloads = false

[calibration]
drift_limit_db = 0.3
on_excess_drift = "exclude"

[survey]
position = "NW-2"
site = "Invented Works"
time_zone = "Europe/Berlin"
clock = "local"
timestamps = "end"

[residual]
no_correction_above_db = 10
upper_bound_at_or_below_db = 3

[events]
night_lafmax_threshold_db = 60
nth_highest = 10

[columns]
"Leq" = "LAeq"
"L90 (dB)" = "LAF90"

[output]
readings_row_limit = 20000

[spectral]
tone_mid_db = 7
band_total_tolerance_db = 1.5

[[assessments]]
name = "Plant at night"
position = "NW-2"
source_on = [["2026-07-03 22:00", "2026-07-03 23:00"]]
residual = [["2026-07-03 23:30", "2026-07-04 00:30"]]
corrections_db = { tonal = 2.0, impulsive = 0 }

[[assessments]]
name = "Pump by column"
position = "NW-2"
use_operating_column = true
corrections_db = { tonal = "one-third-octave", impulsive = 3 }

[[criteria]]
indicator = "Lnight"
limit_db = 45
name = "Night limit"
position = "NW-2"

[[criteria]]
indicator = "LAFmax"
limit_db = 60
period = "night"
"""


def write(tmp_path: Path, text: str, name: str = "settings.toml") -> Path:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def assert_names_the_key(tmp_path: Path, text: str, pattern: str) -> None:
    """Loading ``text`` fails with a message matching ``pattern`` (file name, key path)."""
    with pytest.raises(SettingsError, match=pattern):
        load_settings(write(tmp_path, text))
