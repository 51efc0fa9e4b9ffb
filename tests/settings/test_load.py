"""Reading settings: defaults, a full example, native TOML values and located file errors."""

from __future__ import annotations

import pytest

from surveytools.errors import SettingsError
from surveytools.settings import (
    Assessment,
    Criterion,
    Settings,
    load_settings,
    settings_from_mapping,
)
from tests.settings.example import FULL_EXAMPLE, write


def test_none_gives_documented_defaults():
    s = load_settings(None)
    assert s == Settings()
    # Directive 2002/49/EC Annex I: default periods 07-19 / 19-23 / 23-07.
    assert (s.periods.lden.day_start, s.periods.lden.evening_start,
            s.periods.lden.night_start) == ("07:00", "19:00", "23:00")
    # 15 min reporting interval (common practice) = 900 s (ISO 80000-3: 1 min = 60 s).
    assert s.reporting_interval_s == 900.0


def test_empty_file_gives_defaults(tmp_path):
    assert load_settings(write(tmp_path, "")) == Settings()


def test_full_example_loads(tmp_path):
    s = load_settings(write(tmp_path, FULL_EXAMPLE))
    # hand-evaluated durations (ISO 80000-3): 15 min = 900 s, 1 h = 3600 s, 30 min = 1800 s.
    assert s.reporting_interval_s == 900.0
    assert s.background.reference_interval_day_s == 3600.0
    assert s.background.reference_interval_night_s == 900.0
    assert s.exclusions.rain_settle_s == 1800.0
    assert s.percentiles == (10.0, 50.0, 90.0, 95.0)
    assert s.coverage_threshold == 0.8
    assert s.periods.lden.day_start == "06:00" and s.periods.lden.night_start == "22:00"
    # Ldn without evening_start: the evening collapses onto the night start (no evening).
    assert s.periods.ldn.evening_start == s.periods.ldn.night_start == "22:00"
    assert s.periods.cnel.night_start == "22:00"  # kept default
    assert s.background.method == "median"
    assert s.exclusions.exclude_overloads is False
    assert s.exclusions.level_min_db == 15.0
    assert s.calibration.on_excess_drift == "exclude"
    assert s.survey.time_zone == "Europe/Berlin" and s.survey.timestamps == "end"
    assert s.column_map == {"Leq": "LAeq", "L90 (dB)": "LAF90"}
    assert s.output.readings_row_limit == 20000
    assert s.assessments[0] == Assessment(
        name="Plant at night", position="NW-2",
        source_on=(("2026-07-03 22:00", "2026-07-03 23:00"),),
        residual=(("2026-07-03 23:30", "2026-07-04 00:30"),),
        use_operating_column=False,
        corrections_db={"tonal": 2.0, "impulsive": 0.0, "intermittency": 0.0, "other": 0.0})
    assert s.assessments[1].use_operating_column is True
    assert s.criteria == (
        Criterion("Lnight", 45.0, "any", "Night limit", "NW-2"),
        Criterion("LAFmax", 60.0, "night", None, None),
    )


def test_native_toml_times_and_seconds_spelling(tmp_path):
    text = (
        "reporting_interval_s = 300\n"
        "[periods.lden]\nday_start = 07:00:00\n"
        "[[assessments]]\nname = \"A\"\nposition = \"P\"\n"
        "source_on = [[2026-07-03T22:00:00, 2026-07-03T22:30:00]]\n"
    )
    s = load_settings(write(tmp_path, text))
    assert s.reporting_interval_s == 300.0
    assert s.periods.lden.day_start == "07:00"
    assert s.assessments[0].source_on == (("2026-07-03 22:00", "2026-07-03 22:30"),)


def test_toml_syntax_error_names_line_and_column(tmp_path):
    with pytest.raises(SettingsError,
                       match=r"bad\.toml: line 2, column \d+: not valid TOML"):
        load_settings(write(tmp_path, 'percentiles = [10]\nmethod "mode"\n', "bad.toml"))


def test_missing_and_non_utf8_files(tmp_path):
    with pytest.raises(SettingsError, match=r"nope\.toml: cannot read the settings file"):
        load_settings(tmp_path / "nope.toml")
    p = tmp_path / "latin.toml"
    p.write_bytes('[survey]\nsite = "K\xf6ln"\n'.encode("latin-1"))
    with pytest.raises(SettingsError, match=r"latin\.toml: expected UTF-8 text"):
        load_settings(p)


def test_non_mapping_rejected():
    with pytest.raises(SettingsError, match=r"src: expected a table of settings"):
        settings_from_mapping([1, 2], "src")  # type: ignore[arg-type]
