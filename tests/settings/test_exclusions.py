"""[exclusions]: automatic exclusion limits."""

from __future__ import annotations

import pytest

from tests.settings.example import assert_names_the_key

BAD = [
    # (settings text, regex the message must match)
    ("[exclusions]\nexclude_overloads = 1\n",
     r"exclusions\.exclude_overloads: expected true or false, found 1"),
    ("[exclusions]\nlevel_min_db = 90\nlevel_max_db = 80\n",
     r"exclusions\.level_max_db: expected a level above level_min_db"),
]


@pytest.mark.parametrize(("text", "pattern"), BAD, ids=[f"bad{i}" for i in range(len(BAD))])
def test_bad_settings_name_the_key(tmp_path, text, pattern):
    assert_names_the_key(tmp_path, text, pattern)
