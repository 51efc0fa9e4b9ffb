"""Top-level keys: reporting interval, percentiles, coverage, unknown keys."""

from __future__ import annotations

import pytest

from surveytools.settings import load_settings
from tests.settings.example import assert_names_the_key, write

BAD = [
    # (settings text, regex the message must match)
    ('colour = "red"\n', r"settings\.toml: colour: unknown key"),
    ("percentiles = [10, 100]\n", r"percentiles\[2\]: expected a number < 100, found 100"),
    ("percentiles = [0]\n", r"percentiles\[1\]: expected a number > 0"),
    ("percentiles = [10, 10]\n", r"percentiles: expected no repeated values"),
    ('percentiles = "10"\n', r"percentiles: expected a list, found '10'"),
    ("coverage_threshold = 1.5\n", r"coverage_threshold: expected a number <= 1"),
    ('reporting_interval = "15 minutes"\n',
     r"reporting_interval: expected a duration such as '15min'"),
    ("reporting_interval = 0\n", r"reporting_interval: expected a duration above 0"),
    ('reporting_interval = "2d"\n', r"reporting_interval: expected a duration"),
    ('reporting_interval = "15min"\nreporting_interval_s = 900\n',
     r"reporting_interval: give either 'reporting_interval' or 'reporting_interval_s'"),
]


@pytest.mark.parametrize(("text", "pattern"), BAD, ids=[f"bad{i}" for i in range(len(BAD))])
def test_bad_settings_name_the_key(tmp_path, text, pattern):
    assert_names_the_key(tmp_path, text, pattern)


@pytest.mark.parametrize(("text", "seconds"), [
    # ISO 80000-3: 1 h = 3600 s, 1 min = 60 s; hand-evaluated.
    ('"15min"', 900.0), ('"1h"', 3600.0), ('"30s"', 30.0), ('"900s"', 900.0),
    ("900", 900.0), ('"1.5h"', 5400.0), ('"1500ms"', 1.5), ('" 10 min "', 600.0),
])
def test_duration_spellings(tmp_path, text, seconds):
    s = load_settings(write(tmp_path, f"reporting_interval = {text}\n"))
    assert s.reporting_interval_s == seconds
