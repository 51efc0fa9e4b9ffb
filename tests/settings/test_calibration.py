"""[calibration]: field calibration checks."""

from __future__ import annotations

import pytest

from tests.settings.example import assert_names_the_key

BAD = [
    # (settings text, regex the message must match)
    ('[calibration]\non_excess_drift = "ignore"\n', r"calibration\.on_excess_drift"),
]


@pytest.mark.parametrize(("text", "pattern"), BAD, ids=[f"bad{i}" for i in range(len(BAD))])
def test_bad_settings_name_the_key(tmp_path, text, pattern):
    assert_names_the_key(tmp_path, text, pattern)
