"""[periods]: Lden/Ldn/CNEL boundaries and the LAeq,16h window."""

from __future__ import annotations

import pytest

from tests.settings.example import assert_names_the_key

BAD = [
    # (settings text, regex the message must match)
    # (settings text, regex the message must match)
    ('[periods.lden]\nday_start = "7 am"\n',
     r"settings\.toml: periods\.lden\.day_start: expected a time 'HH:MM', found '7 am'"),
    ('[periods.lden]\nday_start = "24:00"\n', r"periods\.lden\.day_start: expected a time"),
    ('[periods.lden]\nday_strat = "07:00"\n',
     r"periods\.lden\.day_strat: unknown key; did you mean 'day_start'\?"),
    ('[periods.lden]\nevening_start = "23:30"\nnight_start = "23:00"\n',
     r"periods\.lden: expected day_start < evening_start <= night_start"),
    ('[periods.cnel]\nday_start = "19:00"\n', r"periods\.cnel: expected day_start <"),
    ('[periods]\nlaeq16_start = "07:00"\nlaeq16_end = "07:00"\n', r"periods\.laeq16_end"),
]


@pytest.mark.parametrize(("text", "pattern"), BAD, ids=[f"bad{i}" for i in range(len(BAD))])
def test_bad_settings_name_the_key(tmp_path, text, pattern):
    assert_names_the_key(tmp_path, text, pattern)
