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
    ('[survey]\nclock = "gps"\n',
     r"survey\.clock: expected 'local', 'UTC' or a fixed offset such as 'UTC\+01:00'"),
    ('[survey]\nclock = "UTC+1"\n', r"survey\.clock: expected 'local', 'UTC' or a fixed"),
    ('[survey]\nclock = "UTC+25:00"\n', r"survey\.clock: expected 'local', 'UTC' or a fixed"),
]


@pytest.mark.parametrize(("text", "pattern"), BAD, ids=[f"bad{i}" for i in range(len(BAD))])
def test_bad_settings_name_the_key(tmp_path, text, pattern):
    assert_names_the_key(tmp_path, text, pattern)


@pytest.mark.parametrize("zone", ["Europe/Berlin", "America/New_York", "UTC", "UTC+02:00",
                                  "UTC-05:30"])
def test_time_zones_accepted(zone):
    # IANA time zone database names; fixed offsets in the contract's UTC±hh:mm form.
    assert settings_from_mapping({"survey": {"time_zone": zone}}).survey.time_zone == zone


@pytest.mark.parametrize("clock", ["local", "UTC", "UTC+01:00", "UTC-05:30", "UTC+00:00"])
def test_clocks_accepted(clock):
    # README [survey]: clock = "local", "UTC" or a fixed "UTC+01:00" (as on the Survey sheet)
    assert settings_from_mapping({"survey": {"clock": clock}}).survey.clock == clock


def test_no_time_zone_by_default():
    # design.md §9: a time zone nobody gave is assumed with a warning, so the settings
    # must not pretend to give one
    assert settings_from_mapping({}).survey.time_zone is None
