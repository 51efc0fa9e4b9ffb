"""[columns]: extra header spellings and their targets."""

from __future__ import annotations

import pytest

from surveytools.settings import settings_from_mapping
from tests.settings.example import assert_names_the_key

BAD = [
    # (settings text, regex the message must match)
    ("[columns]\nLeq = 5\n", r"columns\.Leq: expected text, found 5"),
    ('[columns]\nLeq = "Bogus"\n',
     r"columns\.Leq: expected a canonical column name .*found 'Bogus'$"),
    ('[columns]\n"Level" = "LAeq (dB)"\n',
     r"columns\.Level: .*found 'LAeq \(dB\)'; did you mean 'LAeq'\?"),
]


@pytest.mark.parametrize(("text", "pattern"), BAD, ids=[f"bad{i}" for i in range(len(BAD))])
def test_bad_settings_name_the_key(tmp_path, text, pattern):
    assert_names_the_key(tmp_path, text, pattern)


@pytest.mark.parametrize("target", ["LAeq", "LAF90", "Wind speed", "LZeq_1000Hz", "position"])
def test_column_map_targets_accepted(target):
    # Canonical names of the input layout (design.md section 3) and one-third-octave bands
    # (IEC 61260-1 nominal 1000 Hz).
    assert settings_from_mapping({"columns": {"My header": target}}).column_map == {
        "My header": target}
