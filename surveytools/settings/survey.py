"""``[survey]``: survey facts used when the Survey sheet (or a CSV input) does not give them."""

from __future__ import annotations

import re
import zoneinfo
from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import Any

from surveytools.settings._parse import Problem, show

_FIXED_OFFSET = re.compile(r"^UTC[+-](0\d|1[0-4]):[0-5]\d$")


@dataclass(frozen=True)
class SurveyDefaults:
    """Values used when the Survey sheet (or a CSV input) does not give them."""

    position: str | None = None
    site: str | None = None
    #: The site's civil time zone; None: not given here (a zone is then assumed, with the
    #: warning ``time-zone-assumed``, unless the Survey sheet gives one).
    time_zone: str | None = None
    #: How the meter stamped its readings: "local", "UTC" or "UTC±hh:mm".
    clock: str = "local"
    #: Whether timestamps mark interval "start" or "end".
    timestamps: str = "start"
    #: Survey facts a CSV input (which has no Survey sheet) can only get from here. [dB] [m]
    meter_class: int | None = None
    calibration_before_db: float | None = None
    calibration_after_db: float | None = None
    calibrator_level_db: float | None = None
    microphone: str | None = None
    height_m: float | None = None


def _valid_time_zone(name: str) -> bool:
    if _FIXED_OFFSET.match(name):
        return True
    try:
        zoneinfo.ZoneInfo(name)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError, OSError):
        return False
    return True


def build_survey(given: Mapping[str, Any]) -> tuple[SurveyDefaults, list[Problem]]:
    """Build :class:`SurveyDefaults` from the schema-valid ``[survey]`` table.

    Returns
    -------
    survey : SurveyDefaults
    problems : list of (key path, problem)
        A time zone that is neither an IANA name known here nor ``UTC±hh:mm``.
    """
    changes: dict[str, Any] = {
        k: str(given[k]) for k in ("position", "site", "time_zone", "clock", "timestamps",
                                   "microphone") if k in given}
    changes.update({k: float(given[k]) for k in ("calibration_before_db",
                                                 "calibration_after_db",
                                                 "calibrator_level_db", "height_m")
                    if k in given})
    if "meter_class" in given:
        changes["meter_class"] = int(given["meter_class"])
    survey = replace(SurveyDefaults(), **changes)
    problems: list[Problem] = []
    if survey.time_zone is not None and not _valid_time_zone(survey.time_zone):
        problems.append(("survey.time_zone", "expected an IANA time zone name such as "
                                             "'Europe/Berlin', or 'UTC+hh:mm', found "
                                             f"{show(survey.time_zone)}"))
    return survey, problems
