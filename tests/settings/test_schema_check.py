"""Schema errors become located problems, every one listed."""

from __future__ import annotations

import pytest

from surveytools.errors import SettingsError
from surveytools.settings import load_settings
from tests.settings.example import write


def test_every_schema_error_is_listed(tmp_path):
    text = '[periods.lden]\nday_start = "7 am"\n[survey]\nclock = "gps"\npercentiles = 5\n'
    with pytest.raises(SettingsError, match=r"3 problems") as info:
        load_settings(write(tmp_path, text))
    lines = str(info.value).splitlines()[1:]
    assert len(lines) == 3
    assert all(line.startswith("settings.toml: ") for line in lines)
    assert {line.split(": ")[1] for line in lines} == {
        "periods.lden.day_start", "survey.clock", "survey.percentiles"}
