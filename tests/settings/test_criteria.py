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
