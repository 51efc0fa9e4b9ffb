"""[residual]: residual-correction thresholds."""

from __future__ import annotations

import pytest

from tests.settings.example import assert_names_the_key

BAD = [
    # (settings text, regex the message must match)
    ("[residual]\nupper_bound_at_or_below_db = 12\n",
     r"residual\.upper_bound_at_or_below_db: expected a value at or below"),
]


@pytest.mark.parametrize(("text", "pattern"), BAD, ids=[f"bad{i}" for i in range(len(BAD))])
def test_bad_settings_name_the_key(tmp_path, text, pattern):
    assert_names_the_key(tmp_path, text, pattern)
