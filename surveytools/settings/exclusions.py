"""``[exclusions]``: limits of the automatic exclusions (weather, level range, overloads)."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import Any

from surveytools import constants as C  # noqa: N812
from surveytools.settings._parse import Problem, floats, opt, read_duration


@dataclass(frozen=True)
class ExclusionRules:
    """Automatic exclusion limits."""

    wind_max_m_s: float = C.WIND_LIMIT_M_S
    rain_max_mm: float = C.RAIN_LIMIT_MM
    rain_settle_s: float = C.RAIN_SETTLE_S
    level_min_db: float = C.PLAUSIBLE_LEVEL_MIN_DB
    level_max_db: float = C.PLAUSIBLE_LEVEL_MAX_DB
    exclude_overloads: bool = True


def build_exclusions(given: Mapping[str, Any]) -> tuple[ExclusionRules, list[Problem]]:
    """Build :class:`ExclusionRules` from the schema-valid ``[exclusions]`` table.

    Returns
    -------
    exclusions : ExclusionRules
    problems : list of (key path, problem)
        The rain settle time given twice; a level range with nothing in it.
    """
    settle_s, problems = read_duration(given, "rain_settle", "exclusions", at_most_a_day=False)
    settle: dict[str, Any] = {} if settle_s is None else {"rain_settle_s": settle_s}
    exclusions = replace(
        ExclusionRules(),
        **floats(given, ("wind_max_m_s", "rain_max_mm", "level_min_db", "level_max_db")),
        **settle,
        **opt(given, "exclude_overloads", bool),
    )
    if exclusions.level_min_db >= exclusions.level_max_db:
        problems.append(("exclusions.level_max_db",
                         f"expected a level above level_min_db ({exclusions.level_min_db:g}), "
                         f"found {exclusions.level_max_db:g}"))
    return exclusions, problems
