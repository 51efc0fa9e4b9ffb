"""[[assessments]]: windows, the Operating column and corrections."""

from __future__ import annotations

import pytest

from tests.settings.example import assert_names_the_key

BAD = [
    # (settings text, regex the message must match)
    ('[[assessments]]\nname = "A"\nsource_on = [["2026-07-03 22:00", "2026-07-03 23:00"]]\n',
     r"assessments\[1\]\.position: missing"),
    ('[[assessments]]\nname = "A"\nposition = "P"\n'
     'source_on = [["2026-07-03 23:00", "2026-07-03 22:00"]]\n',
     r"assessments\[1\]\.source_on\[1\]: expected from < to"),
    ('[[assessments]]\nname = "A"\nposition = "P"\n'
     'source_on = [["2026-07-03 22:00"]]\n',
     r"assessments\[1\]\.source_on\[1\]: expected a window"),
    ('[[assessments]]\nname = "A"\nposition = "P"\n'
     'source_on = [["3 July 22:00", "2026-07-03 23:00"]]\n',
     r"assessments\[1\]\.source_on\[1\]\[1\]: expected a site civil time 'YYYY-MM-DD HH:MM'"),
    ('[[assessments]]\nname = "A"\nposition = "P"\n'
     'source_on = [["2026-02-30 22:00", "2026-03-01 23:00"]]\n',
     r"assessments\[1\]\.source_on\[1\]\[1\]: expected a site civil time"),
    ('[[assessments]]\nname = "A"\nposition = "P"\n'
     'source_on = [["2026-07-03T22:00+02:00", "2026-07-03 23:00"]]\n',
     r"assessments\[1\]\.source_on\[1\]\[1\]: expected a site civil time .*no UTC offset"),
    ('[[assessments]]\nname = "A"\nposition = "P"\n',
     r"assessments\[1\]\.source_on: missing; give at least one"),
    ('[[assessments]]\nname = "A"\nposition = "P"\nuse_operating_column = true\n'
     'source_on = [["2026-07-03 22:00", "2026-07-03 23:00"]]\n',
     r"assessments\[1\]: give source_on/residual windows or use_operating_column"),
    ('[[assessments]]\nname = "A"\nposition = "P"\n'
     'source_on = [["2026-07-03 22:00", "2026-07-03 23:00"]]\n'
     'residual = [["2026-07-03 22:30", "2026-07-03 23:30"]]\n',
     r"assessments\[1\]\.residual: expected residual windows outside the source_on windows"),
    ('[[assessments]]\nname = "A"\nposition = "P"\nuse_operating_column = true\n'
     '[[assessments]]\nname = "A"\nposition = "Q"\nuse_operating_column = true\n',
     r"assessments\[2\]\.name: expected a name not used before"),
    ('[[assessments]]\nname = "A"\nposition = "P"\nuse_operating_column = true\n'
     "corrections_db = { tonal = 2, tonality = 3 }\n",
     r"assessments\[1\]\.corrections_db\.tonality: unknown key"),
]


@pytest.mark.parametrize(("text", "pattern"), BAD, ids=[f"bad{i}" for i in range(len(BAD))])
def test_bad_settings_name_the_key(tmp_path, text, pattern):
    assert_names_the_key(tmp_path, text, pattern)
