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
e.g. LAeq,1h from 15-minute intervals. Such a criterion also lists every longer-interval
figure under ``interval_figures`` (start, period, value, reported, sufficient, judged:
inside the criterion's period), so the workbook can show the hourly values it judged.

A criterion with a ``schedule`` judges only figures whose time (an interval, or the period
of an assessment day) lies wholly inside one of its windows (:mod:`~.schedule`); the rest
are counted as ``outside_schedule``. Consecutive judged figures whose reported level is
above the warning level (or the limit, without one) form ``episodes``.
"""

from __future__ import annotations

from collections.abc import Collection, Sequence
from dataclasses import dataclass
from datetime import date, datetime, timedelta, tzinfo
from typing import Any

import numpy as np
import pandas as pd

from surveytools.assessment._common import db
from surveytools.assessment.schedule import parse_schedule, within_schedule
from surveytools.assessment.timegrid import MINUTES_PER_HOUR, parse_hhmm, wall_to_utc_ms
from surveytools.errors import SettingsError
from surveytools.indicators.levels import energy_average
from surveytools.indicators.reporting import reported_level
from surveytools.settings import Criterion, Periods

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
                      ) -> list[tuple[str, float | None, bool, str, str]]:
    """(start, value, sufficient, period, end) per longer interval, from the reporting intervals.

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
                    members[0]["period"], members[-1]["end"]))
    return out


@dataclass(frozen=True)
class _Figures:
    """Figures of one criterion in time order: label, value, sufficiency and time span."""

    when: list[str]
    values: list[float | None]
    sufficient: list[bool]
    start_ms: np.ndarray
    end_ms: np.ndarray
    start_text: list[str]
    end_text: list[str]

    def take(self, keep: np.ndarray) -> _Figures:
        """Return the figures where ``keep`` is True."""
        idx = np.flatnonzero(keep).tolist()
        return _Figures([self.when[i] for i in idx], [self.values[i] for i in idx],
                        [self.sufficient[i] for i in idx], self.start_ms[keep],
                        self.end_ms[keep], [self.start_text[i] for i in idx],
                        [self.end_text[i] for i in idx])


def iso_to_utc_ms(texts: Sequence[str]) -> np.ndarray:
    """UTC instants [ms] of ISO 8601 texts carrying their UTC offset (results timestamps)."""
    if not texts:
        return np.zeros(0, dtype=np.int64)
    index = pd.to_datetime(pd.Series(list(texts)), utc=True, format="ISO8601")
    return np.asarray(index.dt.tz_convert("UTC").dt.tz_localize(None).astype("datetime64[ms]")
                      .to_numpy().astype(np.int64))


def find_episodes(start_ms: np.ndarray, end_ms: np.ndarray, start_text: Sequence[str],
                  end_text: Sequence[str], values: Sequence[float | None], limit_db: float,
                  warning_db: float | None = None) -> list[dict[str, Any]]:
    """Episodes: runs of consecutive judged figures above the warning level (or the limit).

    Figures are consecutive when one ends where the next starts. A figure is above when its
    reported level (:func:`~surveytools.indicators.reporting.reported_level`) is above the
    warning level, or the limit where no warning level is set; a figure without a value
    ends a run.

    Parameters
    ----------
    start_ms, end_ms : numpy.ndarray of int64
        Span of each judged figure, in time order. [ms]
    start_text, end_text : sequence of str
        The same spans as shown (local ISO 8601).
    values : sequence of float or None
        Unrounded levels. [dB]
    limit_db, warning_db : float
        Limit and optional warning level. [dB]

    Returns
    -------
    list of dict
        ``start``, ``end``, ``intervals`` (figures in the run), ``max_db`` (highest
        reported level) and ``severity`` (``"limit"`` when a figure is above the limit,
        else ``"warning"``).
    """
    n = len(values)
    if n == 0:
        return []
    levels = np.array([np.nan if v is None else float(v) for v in values], dtype=np.float64)
    reported = np.asarray(reported_level(levels), dtype=np.float64).reshape(-1)
    threshold = limit_db if warning_db is None else warning_db
    with np.errstate(invalid="ignore"):
        above = reported > threshold
    if not above.any():
        return []
    joined = np.zeros(n, dtype=bool)
    joined[1:] = above[1:] & above[:-1] & (start_ms[1:] == end_ms[:-1])
    first = np.flatnonzero(above & ~joined)
    run = np.cumsum(above & ~joined) - 1  # episode number of each figure above
    members = np.flatnonzero(above)
    counts = np.bincount(run[members], minlength=first.size)
    highest = np.full(first.size, -np.inf)
    np.maximum.at(highest, run[members], reported[members])
    last = first + counts - 1
    return [{"start": start_text[int(f)], "end": end_text[int(e)], "intervals": int(c),
             "max_db": float(h), "severity": "limit" if h > limit_db else "warning"}
            for f, e, c, h in zip(first, last, counts, highest, strict=True)]


#: Which scheme's times bound each day indicator: (scheme, from key, to key).
_DAY_SPANS: dict[str, tuple[str, str, str]] = {
    "Lday": ("lden", "day_start", "evening_start"),
    "Levening": ("lden", "evening_start", "night_start"),
    "Lnight": ("lden", "night_start", "day_start"),
    "Lden": ("lden", "day_start", "day_start"),
    "Ldn": ("ldn", "day_start", "day_start"),
    "CNEL": ("cnel", "day_start", "day_start"),
    "LAeq_16h": ("pair", "laeq16_start", "laeq16_end"),
    "LAeq_8h": ("pair", "laeq16_end", "laeq16_start"),
}


def day_spans(dates: Sequence[str], indicator: str, periods: Periods, tz: tzinfo
              ) -> tuple[np.ndarray, np.ndarray]:
    """UTC span [ms] of a day indicator's period on each assessment day.

    A time earlier than the scheme's first time (the day start) lies on the next calendar
    date, as in :func:`~surveytools.assessment.timegrid.day_offset_boundaries`; an end at
    or before the day start too (the night ends on the next morning).
    """
    scheme_name, from_key, to_key = _DAY_SPANS[indicator]
    if scheme_name == "pair":
        times = {"laeq16_start": periods.laeq16_start, "laeq16_end": periods.laeq16_end}
        base_text = periods.laeq16_start
    else:
        scheme = getattr(periods, scheme_name)
        times = {"day_start": scheme.day_start, "evening_start": scheme.evening_start,
                 "night_start": scheme.night_start}
        base_text = scheme.day_start

    def minutes(text: str) -> int:
        hour, minute = parse_hhmm(text)
        return hour * MINUTES_PER_HOUR + minute

    base = minutes(base_text)
    a, b = minutes(times[from_key]), minutes(times[to_key])
    starts, ends = [], []
    for text in dates:  # one per assessment day
        day = date.fromisoformat(text)
        on = day + timedelta(days=1) if a < base else day
        off = day + timedelta(days=1) if b <= base else day
        starts.append(wall_to_utc_ms(on, *divmod(a, MINUTES_PER_HOUR), tz))
        ends.append(wall_to_utc_ms(off, *divmod(b, MINUTES_PER_HOUR), tz))
    return np.asarray(starts, dtype=np.int64), np.asarray(ends, dtype=np.int64)


def _judge(criterion: Criterion, applies_to: str, figures: _Figures, tz: tzinfo,
           holidays: Collection[date]) -> dict[str, Any]:
    """Apply the schedule, check the limit, find the episodes."""
    outside = 0
    if criterion.schedule:
        windows = parse_schedule(criterion.schedule)
        keep = within_schedule(figures.start_ms, figures.end_ms, windows, tz, holidays)
        outside = int(np.count_nonzero(~keep))
        figures = figures.take(keep)
    result = _check(criterion, applies_to, list(zip(figures.when, figures.values,
                                                    figures.sufficient, strict=True)))
    result["warning_db"] = None if criterion.warning_db is None else float(criterion.warning_db)
    result["schedule"] = [dict(w) for w in criterion.schedule] or None
    result["outside_schedule"] = outside
    result["episodes"] = find_episodes(figures.start_ms, figures.end_ms, figures.start_text,
                                       figures.end_text, figures.values, criterion.limit_db,
                                       criterion.warning_db)
    return result


def criteria_section(
    criteria: tuple[Criterion, ...],
    position: str | None,
    days: list[dict[str, Any]],
    intervals: list[dict[str, Any]],
    assessments: list[dict[str, Any]],
    percentiles: tuple[float, ...],
    reporting_interval_s: float = 900.0,
    coverage_threshold: float = 0.75,
    *,
    tz: tzinfo | None = None,
    periods: Periods | None = None,
    holidays: Collection[date] = (),
    interval_laeq: list[float] | None = None,
) -> list[dict[str, Any]]:
    """Check each criterion of this position (or of every position) against the results.

    ``tz`` is the site's civil time (schedules, day spans; UTC if not given), ``periods``
    the period schemes (day spans), ``holidays`` the dates schedules treat as Sundays,
    ``interval_laeq`` the unrounded LAeq of each reporting interval (longer intervals).

    Raises
    ------
    SettingsError
        If a criterion names an unknown indicator or interval period, or has a schedule
        where it cannot apply (assessment indicators).
    """
    from datetime import UTC

    from surveytools.assessment.timegrid import format_local

    zone: tzinfo = tz if tz is not None else UTC
    scheme = periods if periods is not None else Periods()
    interval_indicators = _interval_indicators(percentiles)
    out: list[dict[str, Any]] = []
    for criterion in criteria:
        if criterion.position is not None and criterion.position != position:
            continue
        indicator = criterion.indicator
        label = criterion.name or indicator
        if indicator in DAY_INDICATORS:
            dates = [d["date"] for d in days]
            s_ms, e_ms = day_spans(dates, indicator, scheme, zone)
            figures = _Figures(dates, [d[indicator] for d in days],
                               [bool(d["sufficient"][indicator]) for d in days], s_ms, e_ms,
                               format_local(s_ms, zone), format_local(e_ms, zone))
            out.append(_judge(criterion, "day", figures, zone, holidays))
        elif indicator in interval_indicators:
            if criterion.period not in INTERVAL_PERIODS:
                raise SettingsError(
                    f"criterion {label!r}: period {criterion.period!r} "
                    f"is not one of {', '.join(INTERVAL_PERIODS)}"
                )
            interval_figures: list[dict[str, Any]] | None = None
            if criterion.interval_s is not None and criterion.interval_s != reporting_interval_s:
                longer = _longer_intervals(intervals, indicator, criterion.interval_s,
                                           reporting_interval_s, coverage_threshold, label,
                                           interval_laeq)
                chosen = [g for g in longer if criterion.period in ("any", g[3])]
                when = [g[0] for g in chosen]
                ends = [g[4] for g in chosen]
                values = [g[1] for g in chosen]
                ok = [g[2] for g in chosen]
                # every longer-interval figure (judged or not), so a reader can see the
                # hourly values the criterion was judged on, not only the failures
                interval_figures = [
                    {"start": g[0], "period": g[3], "value": g[1],
                     "reported": None if g[1] is None else float(reported_level(g[1])),
                     "sufficient": g[2], "judged": criterion.period in ("any", g[3])}
                    for g in longer]
            else:
                rows = [i for i in intervals if criterion.period in ("any", i["period"])]
                when = [i["start"] for i in rows]
                ends = [i["end"] for i in rows]
                values = [i.get(indicator) for i in rows]
                ok = [bool(i["sufficient"]) for i in rows]
            figures = _Figures(when, values, ok, iso_to_utc_ms(when), iso_to_utc_ms(ends),
                               when, ends)
            out.append(_judge(criterion, "interval", figures, zone, holidays))
            if interval_figures is not None:
                out[-1]["interval_figures"] = interval_figures
        elif indicator in ASSESSMENT_INDICATORS:
            if criterion.schedule:
                raise SettingsError(
                    f"criterion {label!r}: a schedule applies to interval and day "
                    f"indicators, not to {indicator} (an assessment has its own windows); "
                    "remove 'schedule'"
                )
            candidates = [(a["name"], a[indicator], a["note"] is None or
                           a["specific_basis"] != "not available") for a in assessments]
            result = _check(criterion, "assessment", candidates)
            result["warning_db"] = (None if criterion.warning_db is None
                                    else float(criterion.warning_db))
            result["schedule"] = None
            result["outside_schedule"] = 0
            result["episodes"] = []  # assessments are not a time series
            out.append(result)
        else:
            valid = (*DAY_INDICATORS, *interval_indicators, *ASSESSMENT_INDICATORS)
            raise SettingsError(
                f"criterion {label!r}: unknown indicator {indicator!r}; "
                f"choose one of {', '.join(valid)}"
            )
    return out
