"""``[periods]``: day / evening / night boundaries and penalties of Lden, Ldn and CNEL."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from typing import Any

from surveytools import constants as C  # noqa: N812
from surveytools.settings._parse import (
    MINUTES_PER_DAY,
    Problem,
    clock_minutes,
    clock_text,
    hours_text,
    section,
)


@dataclass(frozen=True)
class PeriodScheme:
    """Day / evening / night boundaries and penalties of one indicator (Lden, Ldn, CNEL).

    ``evening_start`` equal to ``night_start`` means the scheme has no evening (Ldn).
    """

    day_start: str
    evening_start: str
    night_start: str
    evening_penalty_db: float
    night_penalty_db: float


def _lden() -> PeriodScheme:
    return PeriodScheme(hours_text(C.LDEN_DAY_START_H), hours_text(C.LDEN_EVENING_START_H),
                        hours_text(C.LDEN_NIGHT_START_H), C.LDEN_EVENING_PENALTY_DB,
                        C.LDEN_NIGHT_PENALTY_DB)


def _ldn() -> PeriodScheme:
    return PeriodScheme(hours_text(C.LDN_DAY_START_H), hours_text(C.LDN_NIGHT_START_H),
                        hours_text(C.LDN_NIGHT_START_H), 0.0, C.LDN_NIGHT_PENALTY_DB)


def _cnel() -> PeriodScheme:
    return PeriodScheme(hours_text(C.CNEL_DAY_START_H), hours_text(C.CNEL_EVENING_START_H),
                        hours_text(C.CNEL_NIGHT_START_H), C.CNEL_EVENING_PENALTY_DB,
                        C.CNEL_NIGHT_PENALTY_DB)


@dataclass(frozen=True)
class Periods:
    """Period schemes; the assessment day starts at ``lden.day_start``."""

    lden: PeriodScheme = field(default_factory=_lden)
    ldn: PeriodScheme = field(default_factory=_ldn)
    cnel: PeriodScheme = field(default_factory=_cnel)
    laeq16_start: str = hours_text(C.LAEQ16_START_H)
    laeq16_end: str = hours_text(C.LAEQ16_END_H)


def _check_scheme(path: str, scheme: PeriodScheme) -> list[Problem]:
    """Day < evening <= night within one 24 h cycle that starts at day_start."""
    d = clock_minutes(scheme.day_start)
    e = (clock_minutes(scheme.evening_start) - d) % MINUTES_PER_DAY
    n = (clock_minutes(scheme.night_start) - d) % MINUTES_PER_DAY
    if 0 < e <= n:
        return []
    return [(path, "expected day_start < evening_start <= night_start within one 24 h cycle "
                   f"starting at day_start, found day_start '{scheme.day_start}', evening_start "
                   f"'{scheme.evening_start}', night_start '{scheme.night_start}'")]


def _build_scheme(given: Mapping[str, Any], default: PeriodScheme,
                  evening_follows_night: bool) -> PeriodScheme:
    values: dict[str, Any] = {}
    for key in ("day_start", "evening_start", "night_start"):
        if key in given:
            values[key] = clock_text(given[key])
    if evening_follows_night and "evening_start" not in values and "night_start" in values:
        values["evening_start"] = values["night_start"]
    for key in ("evening_penalty_db", "night_penalty_db"):
        if key in given:
            values[key] = float(given[key])
    return replace(default, **values)


def build_periods(given: Mapping[str, Any]) -> tuple[Periods, list[Problem]]:
    """Build :class:`Periods` from the schema-valid ``[periods]`` table.

    An Ldn scheme given only a ``night_start`` has no evening (it starts with the night).

    Returns
    -------
    periods : Periods
    problems : list of (key path, problem)
        Schemes whose boundaries are out of order; an LAeq,16h window of no length.
    """
    base = Periods()
    periods = Periods(
        lden=_build_scheme(section(given, "lden"), base.lden, False),
        ldn=_build_scheme(section(given, "ldn"), base.ldn, True),
        cnel=_build_scheme(section(given, "cnel"), base.cnel, False),
        laeq16_start=clock_text(given.get("laeq16_start", base.laeq16_start)),
        laeq16_end=clock_text(given.get("laeq16_end", base.laeq16_end)),
    )
    problems: list[Problem] = []
    for name in ("lden", "ldn", "cnel"):
        problems += _check_scheme(f"periods.{name}", getattr(periods, name))
    if periods.laeq16_start == periods.laeq16_end:
        problems.append(("periods.laeq16_end", "expected a time different from laeq16_start, "
                                               f"found '{periods.laeq16_end}' for both"))
    return periods, problems
