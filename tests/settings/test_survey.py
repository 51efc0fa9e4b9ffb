"""[survey]: survey defaults and the time zone check."""

from __future__ import annotations

import pytest

from surveytools.settings import settings_from_mapping
from tests.settings.example import assert_names_the_key

BAD = [
    # (settings text, regex the message must match)
    ('[survey]\ntime_zone = "Mars/Olympus"\n',
     r"survey\.time_zone: expected an IANA time zone name .*found 'Mars/Olympus'"),
    ('[survey]\ntime_zone = "UTC+2"\n', r"survey\.time_zone: expected an IANA"),
    ('[survey]\ntime_zone = "../../etc/passwd"\n', r"survey\.time_zone: expected an IANA"),
    ('[survey]\nclock = "gps"\n', r"survey\.clock: expected one of 'local', 'UTC'"),
]


@pytest.mark.parametrize(("text", "pattern"), BAD, ids=[f"bad{i}" for i in range(len(BAD))])
def test_bad_settings_name_the_key(tmp_path, text, pattern):
    assert_names_the_key(tmp_path, text, pattern)


@pytest.mark.parametrize("zone", ["Europe/Berlin", "America/New_York", "UTC", "UTC+02:00",
                                  "UTC-05:30"])
def test_time_zones_accepted(zone):
    # IANA time zone database names; fixed offsets in the contract's UTC±hh:mm form.
    assert settings_from_mapping({"survey": {"time_zone": zone}}).survey.time_zone == zone
