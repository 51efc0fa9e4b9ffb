"""Criteria: limits on indicators, checked per assessment day, interval or assessment.

A figure fails when its reported value — rounded half up to
:data:`~surveytools.constants.REPORTED_LEVEL_DECIMALS` decimals, as the workbooks show it —
is above the limit (so 45.04 dB passes a 45 dB limit and 45.05 dB fails it). Every figure
with a value is checked, also figures whose coverage is below the threshold: their
failures carry ``"sufficient": false`` so a reader can discount them. ``passed`` is
``failed == 0``, or null when nothing could be checked.

A criterion with ``interval_s`` checks LAeq (energy average over the valid time) or LAFmax
(highest) over longer intervals built from the reporting intervals on the local clock,
e.g. LAeq,1h from 15-minute intervals. Such a criterion also lists every longer-interval
figure under ``interval_figures`` (start, period, value, reported, sufficient, judged), so
the workbook can show the hourly values it was judged on.
"""

from __future__ import annotations

from datetime import datetime
from decimal import ROUND_HALF_UP, Decimal
from typing import Any

from surveytools.constants import REPORTED_LEVEL_DECIMALS
from surveytools.errors import SettingsError
from surveytools.indicators.levels import energy_average
from surveytools.settings import Criterion

#: Indicators checked per assessment day.
DAY_INDICATORS = ("Lday", "Levening", "Lnight", "Lden", "Ldn", "CNEL", "LAeq_16h", "LAeq_8h")
#: Indicators checked per assessment.
ASSESSMENT_INDICATORS = ("rating_level", "excess_over_background")
#: Interval periods a criterion may choose.
INTERVAL_PERIODS = ("day", "evening", "night", "any")


def _interval_indicators(percentiles: tuple[float, ...]) -> tuple[str, ...]:
    return ("LAeq", "LAFmax", *(f"LA{p:g}" for p in percentiles))


_QUANTUM = Decimal(1).scaleb(-REPORTED_LEVEL_DECIMALS)


def reported_value(value: float) -> float:
    """Return ``value`` as reported, rounded half up to the reported decimals [dB]."""
    return float(Decimal(repr(float(value))).quantize(_QUANTUM, rounding=ROUND_HALF_UP))


def _check(criterion: Criterion, applies_to: str,
           candidates: list[tuple[str, float | None, bool]]) -> dict[str, Any]:
    checked = [(when, value, ok) for when, value, ok in candidates if value is not None]
    failures = [{"when": when, "value": value, "reported": reported_value(value),
                 "sufficient": ok}
                for when, value, ok in checked if reported_value(value) > criterion.limit_db]
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
    }
    if criterion.interval_s is not None:
        result["interval_s"] = float(criterion.interval_s)
    return result


def _longer_intervals(intervals: list[dict[str, Any]], indicator: str, interval_s: float,
                      reporting_s: float, threshold: float, name: str
                      ) -> list[tuple[str, float | None, bool, str]]:
    """(start, value, sufficient, period) per longer interval, from the reporting intervals.

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
    groups: dict[tuple[str, str, int], list[dict[str, Any]]] = {}
    for iv in intervals:
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
                value = round(level, 2)
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
                                           criterion.name or indicator)
                candidates = [(start, value, ok) for start, value, ok, period in longer
                              if criterion.period in ("any", period)]
                checked = _check(criterion, "interval", candidates)
                # every longer-interval figure (judged or not), so a reader can see the
                # hourly values the criterion was judged on, not only the failures
                checked["interval_figures"] = [
                    {"start": start, "period": period, "value": value,
                     "reported": None if value is None else reported_value(value),
                     "sufficient": ok, "judged": criterion.period in ("any", period)}
                    for start, value, ok, period in longer]
                out.append(checked)
                continue
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
