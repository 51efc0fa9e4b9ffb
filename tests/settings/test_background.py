"""[background]: reference intervals and the background method."""

from __future__ import annotations

import pytest

from tests.settings.example import assert_names_the_key

BAD = [
    # (settings text, regex the message must match)
    ('[background]\nreference_interval_night = "25h"\n',
     r"background\.reference_interval_night: expected a duration above 0 and at most 24 h"),
    ('[background]\nmethod = "average"\n',
     r"background\.method: expected one of 'mode', 'median', 'mean', found 'average'"),
]


@pytest.mark.parametrize(("text", "pattern"), BAD, ids=[f"bad{i}" for i in range(len(BAD))])
def test_bad_settings_name_the_key(tmp_path, text, pattern):
    assert_names_the_key(tmp_path, text, pattern)
