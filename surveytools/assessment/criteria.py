"""Criteria: limits on indicators, checked per assessment day, interval or assessment.

A figure fails when its value (rounded to 0.01 dB, as reported) is above the limit.
Every figure with a value is checked, also figures whose coverage is below the threshold:
their failures carry ``"sufficient": false`` so a reader can discount them. ``passed``
is ``failed == 0``, or null when nothing could be checked.
"""

from __future__ import annotations

from typing import Any

from surveytools.errors import SettingsError
from surveytools.settings import Criterion

#: Indicators checked per assessment day.
DAY_INDICATORS = ("Lday", "Levening", "Lnight", "Lden", "Ldn", "CNEL", "LAeq_16h", "LAeq_8h")
#: Indicators checked per assessment.
ASSESSMENT_INDICATORS = ("rating_level", "excess_over_background")
#: Interval periods a criterion may choose.
INTERVAL_PERIODS = ("day", "evening", "night", "any")


def _interval_indicators(percentiles: tuple[float, ...]) -> tuple[str, ...]:
    return ("LAeq", "LAFmax", *(f"LA{p:g}" for p in percentiles))


def _check(criterion: Criterion, applies_to: str,
           candidates: list[tuple[str, float | None, bool]]) -> dict[str, Any]:
    checked = [(when, value, ok) for when, value, ok in candidates if value is not None]
    failures = [{"when": when, "value": value, "sufficient": ok}
                for when, value, ok in checked if value > criterion.limit_db]
    return {
        "name": criterion.name or f"{criterion.indicator} <= {criterion.limit_db:g} dB",
        "indicator": criterion.indicator,
        "period": criterion.period,
        "limit_db": float(criterion.limit_db),
        "applies_to": applies_to,
        "checked": len(checked),
        "failed": len(failures),
        "passed": (len(failures) == 0) if checked else None,
        "failures": failures,
    }


def criteria_section(
    criteria: tuple[Criterion, ...],
    position: str | None,
    days: list[dict[str, Any]],
    intervals: list[dict[str, Any]],
    assessments: list[dict[str, Any]],
    percentiles: tuple[float, ...],
) -> list[dict[str, Any]]:
    """Check each criterion of this position (or of every position) against the results.

    Raises
    ------
    SettingsError
        If a criterion names an unknown indicator or interval period.
    """
    interval_indicators = _interval_indicators(percentiles)
    out: list[dict[str, Any]] = []
    for criterion in criteria:
        if criterion.position is not None and criterion.position != position:
            continue
        indicator = criterion.indicator
        if indicator in DAY_INDICATORS:
            candidates = [(d["date"], d[indicator], bool(d["sufficient"][indicator]))
                          for d in days]
            out.append(_check(criterion, "day", candidates))
        elif indicator in interval_indicators:
            if criterion.period not in INTERVAL_PERIODS:
                raise SettingsError(
                    f"criterion {criterion.name or indicator!r}: period {criterion.period!r} "
                    f"is not one of {', '.join(INTERVAL_PERIODS)}"
                )
            candidates = [(i["start"], i.get(indicator), bool(i["sufficient"]))
                          for i in intervals
                          if criterion.period in ("any", i["period"])]
            out.append(_check(criterion, "interval", candidates))
        elif indicator in ASSESSMENT_INDICATORS:
            candidates = [(a["name"], a[indicator], a["note"] is None or
                           a["specific_basis"] != "not available") for a in assessments]
            out.append(_check(criterion, "assessment", candidates))
        else:
            valid = (*DAY_INDICATORS, *interval_indicators, *ASSESSMENT_INDICATORS)
            raise SettingsError(
                f"criterion {criterion.name or indicator!r}: unknown indicator {indicator!r}; "
                f"choose one of {', '.join(valid)}"
            )
    return out
