"""``[background]``: reference intervals, day/night split and method of the LA90 background."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from surveytools import constants as C  # noqa: N812
from surveytools.settings._parse import Problem, clock_text, hours_text, read_duration

#: Ways per-interval LA90 values combine into one background value.
BACKGROUND_METHODS = ("mode", "median", "mean")


@dataclass(frozen=True)
class Background:
    """Background (LA90) settings."""

    reference_interval_day_s: float = C.REFERENCE_INTERVAL_DAY_S
    reference_interval_night_s: float = C.REFERENCE_INTERVAL_NIGHT_S
    day_start: str = hours_text(C.BS4142_DAY_START_H)
    night_start: str = hours_text(C.BS4142_NIGHT_START_H)
    #: How per-interval LA90 values combine into one representative value:
    #: "median", "mode" (of whole-dB values) or "mean" (arithmetic).
    method: str = "mode"


def build_background(given: Mapping[str, Any]) -> tuple[Background, list[Problem]]:
    """Build :class:`Background` from the schema-valid ``[background]`` table.

    Returns
    -------
    background : Background
    problems : list of (key path, problem)
        Reference intervals given twice or outside (0, 24 h]; day and night starting at
        the same time.
    """
    base = Background()
    day_s, problems = read_duration(given, "reference_interval_day", "background",
                                    at_least_s=C.MIN_RESULT_INTERVAL_S)
    night_s, found = read_duration(given, "reference_interval_night", "background",
                                   at_least_s=C.MIN_RESULT_INTERVAL_S)
    problems += found
    background = Background(
        reference_interval_day_s=base.reference_interval_day_s if day_s is None else day_s,
        reference_interval_night_s=(base.reference_interval_night_s if night_s is None
                                    else night_s),
        day_start=clock_text(given.get("day_start", base.day_start)),
        night_start=clock_text(given.get("night_start", base.night_start)),
        method=str(given.get("method", base.method)),
    )
    if background.day_start == background.night_start:
        problems.append(("background.night_start", "expected a time different from day_start, "
                                                   f"found '{background.night_start}' for both"))
    return background, problems
