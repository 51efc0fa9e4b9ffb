"""[[criteria]]: limits, periods and longer intervals."""

from __future__ import annotations

from pathlib import Path

import pytest

from surveytools.errors import SettingsError
from surveytools.settings import load_settings, settings_from_mapping, settings_to_mapping
from tests.settings.example import assert_names_the_key

BAD = [
    # (settings text, regex the message must match)
    ('[[criteria]]\nindicator = "Lnite"\nlimit_db = 45\n',
     r"criteria\[1\]\.indicator: expected one of 'Lday'"),
    ('[[criteria]]\nindicator = "Lnight"\n', r"criteria\[1\]\.limit_db: missing"),
    ('[[criteria]]\nindicator = "LAeq"\nlimit_db = 45\nperiod = "weekend"\n',
     r"criteria\[1\]\.period: expected one of"),
]


@pytest.mark.parametrize(("text", "pattern"), BAD, ids=[f"bad{i}" for i in range(len(BAD))])
def test_bad_settings_name_the_key(tmp_path, text, pattern):
    assert_names_the_key(tmp_path, text, pattern)


def test_criterion_over_a_longer_interval(tmp_path: Path) -> None:
    # ISO 80000-3: 1 h = 3600 s. The example of the issue: "LAeq,1h day <= 55".
    path = tmp_path / "c.toml"
    path.write_text('[[criteria]]\nindicator = "LAeq"\nlimit_db = 55\nperiod = "day"\n'
                    'interval = "1h"\n', encoding="utf-8")
    settings = load_settings(path)
    (criterion,) = settings.criteria
    assert criterion.interval_s == 3600.0
    assert settings_from_mapping(settings_to_mapping(settings)) == settings
    path.write_text('[[criteria]]\nindicator = "LAeq"\nlimit_db = 55\ninterval = "1h"\n'
                    'interval_s = 3600\n', encoding="utf-8")
    with pytest.raises(SettingsError, match=r"criteria\[1\]\.interval: give the interval once"):
        load_settings(path)


SCHEDULED = ('[[criteria]]\nindicator = "LAeq"\nlimit_db = 75\nwarning_db = 70\n'
             'schedule = [{ days = "Mon-Fri", from = 07:00:00, to = "19:00" },\n'
             '            { days = "sat", from = "8:00", to = "13:00" }]\n'
             '[calendar]\nholidays = ["2026-12-26", "2026-12-25"]\n')


def test_schedule_warning_level_and_calendar_load_and_round_trip(tmp_path: Path) -> None:
    path = tmp_path / "c.toml"
    path.write_text(SCHEDULED, encoding="utf-8")
    settings = load_settings(path)
    (criterion,) = settings.criteria
    assert criterion.warning_db == 70.0
    # TOML local times and "8:00" are normalised to HH:MM text
    assert criterion.schedule == ({"days": "Mon-Fri", "from": "07:00", "to": "19:00"},
                                  {"days": "sat", "from": "08:00", "to": "13:00"})
    assert settings.calendar.holidays == ("2026-12-25", "2026-12-26")  # sorted
    assert settings_from_mapping(settings_to_mapping(settings)) == settings
    assert settings_from_mapping(settings.to_dict()) == settings


BAD_SCHEDULES = [
    (SCHEDULED.replace('"Mon-Fri"', '"Mon-Fry"'),
     r"criteria\[1\]\.schedule\[1\]\.days: 'Fry' is not a day name"),
    (SCHEDULED.replace('to = "13:00"', 'to = "13.00"'), r"criteria\[1\]\.schedule\[2\]\.to"),
    (SCHEDULED.replace('from = "8:00", ', ''), r"criteria\[1\]\.schedule\[2\]\.from: missing"),
    (SCHEDULED.replace("warning_db = 70", "warning_db = 75"),
     r"criteria\[1\]\.warning_db: expected a warning level below the limit \(75 dB\)"),
    (SCHEDULED.replace('"2026-12-25"', '"2026-02-30"'),
     r"calendar\.holidays\[2\]: expected a real date YYYY-MM-DD, found '2026-02-30'"),
    (SCHEDULED.replace('"2026-12-25"', '"25/12/2026"'), r"calendar\.holidays\[2\]"),
    (SCHEDULED.replace('"LAeq"', '"rating_level"'),
     r"criteria\[1\]\.schedule: a schedule applies to interval and day indicators"),
]


@pytest.mark.parametrize(("text", "pattern"), BAD_SCHEDULES,
                         ids=[f"bad-schedule{i}" for i in range(len(BAD_SCHEDULES))])
def test_bad_schedules_name_the_key(tmp_path, text, pattern):
    assert_names_the_key(tmp_path, text, pattern)
