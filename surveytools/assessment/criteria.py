"""Criteria: limits on indicators, checked per assessment day, interval or assessment.

A figure fails when its reported value — rounded once, half up, to
:data:`~surveytools.constants.REPORTED_LEVEL_DECIMALS` decimals from its unrounded value by
:func:`~surveytools.indicators.reporting.reported_level`, as every output shows it — is
above the limit (so 45.049 dB passes a 45 dB limit and 45.05 dB fails it). The JSON levels
the figures come from re-round to the same reported figure (``_common.db_list``); each
failure and the criterion's ``highest`` figure carry the ``reported`` value judged. Every figure
with a value is checked, also figures whose coverage is below the threshold: their
failures carry ``"sufficient": false`` so a reader can discount them. ``passed`` is
``failed == 0``, or null when nothing could be checked.

A criterion with ``interval_s`` checks LAeq (energy average over the valid time) or LAFmax
(highest) over longer intervals built from the reporting intervals in the site's civil time,
e.g. LAeq,1h from 15-minute intervals.
"""

from __future__ import annotations

from datetime import datetime
from typing import Any

from surveytools.assessment._common import db
from surveytools.errors import SettingsError
from surveytools.indicators.levels import energy_average
from surveytools.indicators.reporting import reported_level
from surveytools.settings import Criterion

#: Indicators checked per assessment day.
DAY_INDICATORS = ("Lday", "Levening", "Lnight", "Lden", "Ldn", "CNEL", "LAeq_16h", "LAeq_8h")
#: Indicators checked per assessment.
ASSESSMENT_INDICATORS = ("rating_level", "excess_over_background")
#: Interval periods a criterion may choose.
INTERVAL_PERIODS = ("day", "evening", "night", "any")


def _interval_indicators(percentiles: tuple[float, ...]) -> tuple[str, ...]:
    return ("LAeq", "LAFmax", *(f"LA{p:g}" for p in percentiles))


def _figure(when: str, value: float, sufficient: bool) -> dict[str, Any]:
    """One judged figure: its JSON level and the reported value it was judged on."""
    return {"when": when, "value": db(value), "reported": float(reported_level(value)),
            "sufficient": sufficient}


def _check(criterion: Criterion, applies_to: str,
           candidates: list[tuple[str, float | None, bool]]) -> dict[str, Any]:
    checked = [_figure(when, value, ok) for when, value, ok in candidates if value is not None]
    failures = [f for f in checked if f["reported"] > criterion.limit_db]
    # the highest reported figure (the first of equals): what the outcome hinges on
    highest = max(checked, key=lambda f: f["reported"], default=None)
    result = {
        "name": criterion.name or f"{criterion.indicator} <= {criterion.limit_db:g} dB",
        "indicator": criterion.indicator,
        "period": criterion.period,
        "limit_db": float(criterion.limit_db),
        "applies_to": applies_to,
        "checked": len(checked),
        "failed": len(failures),
        "passed": (len(failures) == 0) if checked else None,
        "failures": failures,
        "highest": highest,
    }
    if criterion.interval_s is not None:
        result["interval_s"] = float(criterion.interval_s)
    return result


def _longer_intervals(intervals: list[dict[str, Any]], indicator: str, interval_s: float,
                      reporting_s: float, threshold: float, name: str,
                      interval_laeq: list[float] | None = None,
                      ) -> list[tuple[str, float | None, bool, str]]:
    """(start, value, sufficient, period) per longer interval, from the reporting intervals.

    ``interval_laeq`` holds the unrounded LAeq of each reporting interval (aligned with
    ``intervals``); the longer interval's LAeq is their energy average over the valid time,
    so the figure is rounded once, when judged. Without it the JSON levels are used.

    Raises
    ------
    SettingsError
        When the interval is not a whole multiple of the reporting interval dividing a day,
        or the indicator cannot be combined (only LAeq and LAFmax can).
    """
    ratio = interval_s / reporting_s
    if abs(ratio - round(ratio)) > 1e-9 or round(ratio) < 1 or 86_400 % interval_s:
        raise SettingsError(
            f"criterion {name!r}: interval {interval_s:g} s must be a whole multiple of the "
            f"reporting interval ({reporting_s:g} s) that divides a day"
        )
    if indicator not in ("LAeq", "LAFmax"):
        raise SettingsError(
            f"criterion {name!r}: only LAeq and LAFmax can be checked over a longer interval; "
            f"{indicator} uses the reporting interval (remove 'interval')"
        )
    unrounded = (interval_laeq if interval_laeq is not None
                 and len(interval_laeq) == len(intervals) else None)
    groups: dict[tuple[str, str, int], list[dict[str, Any]]] = {}
    for k, iv in enumerate(intervals):
        if unrounded is not None and indicator == "LAeq":
            iv = {**iv, "LAeq": unrounded[k] if iv.get("LAeq") is not None else None}
        local = datetime.fromisoformat(iv["start"])
        seconds = local.hour * 3600 + local.minute * 60 + local.second
        key = (local.date().isoformat(), str(local.utcoffset()), int(seconds // interval_s))
        groups.setdefault(key, []).append(iv)
    out = []
    for members in groups.values():  # one entry per longer interval (a handful per day)
        valid = [m for m in members if m.get(indicator) is not None and m["valid_s"] > 0]
        value: float | None = None
        if valid:
            if indicator == "LAeq":
                level = float(energy_average([m["LAeq"] for m in valid],
                                             [m["valid_s"] for m in valid]))
                value = level  # unrounded: judged once by reported_level
            else:
                value = max(float(m["LAFmax"]) for m in valid)
        valid_s = sum(float(m["valid_s"]) for m in members)
        out.append((members[0]["start"], value, valid_s >= threshold * interval_s,
                    members[0]["period"]))
    return out


def criteria_section(
    criteria: tuple[Criterion, ...],
    position: str | None,
    days: list[dict[str, Any]],
    intervals: list[dict[str, Any]],
    assessments: list[dict[str, Any]],
    percentiles: tuple[float, ...],
    reporting_interval_s: float = 900.0,
    coverage_threshold: float = 0.75,
    interval_laeq: list[float] | None = None,
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
            if criterion.interval_s is not None and criterion.interval_s != reporting_interval_s:
                longer = _longer_intervals(intervals, indicator, criterion.interval_s,
                                           reporting_interval_s, coverage_threshold,
                                           criterion.name or indicator, interval_laeq)
                candidates = [(start, value, ok) for start, value, ok, period in longer
                              if criterion.period in ("any", period)]
            else:
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
