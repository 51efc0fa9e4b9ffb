"""Long-term figures of one position from its merged parts.

Days are built by :func:`~surveytools.assessment.daily.day_entries`, the function behind
``run``'s ``days``, on scheme results rebuilt from the merged parts. A month or a year is
the energy average of all valid time of each period type over its assessment days (an
assessment day belongs to the month and year of its date), then the Directive's formulas
(:func:`~surveytools.assessment.daily.penalised`) — the long-term average of Directive
2002/49/EC, Annex I. Coverage is valid time over the real length of each period type over
every assessment day of the month or year inside the report's date range, so an
incomplete year shows as such.
"""

from __future__ import annotations

from collections import defaultdict
from datetime import date, timedelta, tzinfo
from typing import Any

import numpy as np

from surveytools.archive.window import DateWindow
from surveytools.assessment._common import MS_PER_S, db, db_list, fraction, seconds
from surveytools.assessment.criteria import DAY_INDICATORS, criteria_section
from surveytools.assessment.daily import (
    PERIOD_NAMES,
    day_entries,
    lden_period_names,
    period_figures,
    scheme_times,
    scheme_times_of,
)
from surveytools.assessment.intervals import ln_key
from surveytools.assessment.parts import (
    FIRST_LEVEL_STEP,
    LEVEL_STEPS_PER_DB,
    PositionParts,
)
from surveytools.assessment.schedule import parse_holidays
from surveytools.assessment.timegrid import day_offset_boundaries, format_local
from surveytools.indicators.levels import level_from_energy_sums
from surveytools.indicators.percentiles import exceedance_levels_from_step_times
from surveytools.settings import Settings

#: Scheme rows of the day parts used by months and years (Lden and Ldn).
_LDEN, _LDN = 0, 1


def _days_of(first: date, last: date) -> list[date]:
    return [first + timedelta(days=k) for k in range((last - first).days + 1)]


def _span_figures(parts: PositionParts, rows: np.ndarray, calendar: list[date],
                  settings: Settings, tz: tzinfo) -> dict[str, Any]:
    """Figures of one month or year: day rows of the parts and its calendar days."""
    days = parts.days
    periods = settings.periods
    levels = []
    valid_lden = np.zeros(3)
    for scheme in (_LDEN, _LDN):
        energy = days.energy[scheme][rows].sum(axis=0)
        valid = days.valid_ms[scheme][rows].sum(axis=0)
        levels.append(level_from_energy_sums(energy, valid, days.reference_db))
        if scheme == _LDEN:
            valid_lden = valid
    bounds = day_offset_boundaries(calendar, scheme_times(periods.lden), tz)
    length_ms = np.diff(bounds).reshape(len(calendar), 3).sum(axis=0).astype(np.float64)
    coverage = np.divide(valid_lden, length_ms, out=np.zeros(3), where=length_ms > 0)
    lden, ldn = levels
    return {
        **period_figures(lden, ldn, periods),
        "coverage": {name: fraction(coverage[k]) for k, name in enumerate(PERIOD_NAMES)},
        "valid_s": {name: seconds(valid_lden[k] / MS_PER_S)
                    for k, name in enumerate(PERIOD_NAMES)},
        "sufficient": bool(np.all(coverage >= settings.coverage_threshold)),
        "days_with_data": int(np.count_nonzero(days.touched[rows])),
    }


def _grouped_spans(parts: PositionParts, window: DateWindow, key_of: Any, span_of: Any,
                   settings: Settings, tz: tzinfo, key_name: str) -> list[dict[str, Any]]:
    day_list = parts.days.days
    by_key: dict[Any, list[int]] = defaultdict(list)
    for k, day in enumerate(day_list):
        if parts.days.touched[k] and window.holds(day):
            by_key[key_of(day)].append(k)
    out = []
    for key in sorted(by_key):
        first, last = span_of(key)
        first, last = window.clip(first, last)
        entry = {key_name: key}
        entry.update(_span_figures(parts, np.asarray(by_key[key]), _days_of(first, last),
                                   settings, tz))
        entry["from"] = first.isoformat()
        entry["to"] = last.isoformat()
        out.append(entry)
    return out


def _month_span(key: str) -> tuple[date, date]:
    year, month = (int(x) for x in key.split("-"))
    first = date(year, month, 1)
    nxt = date(year + month // 12, month % 12 + 1, 1)
    return first, nxt - timedelta(days=1)


def _year_span(key: int) -> tuple[date, date]:
    return date(key, 1, 1), date(key, 12, 31)


def interval_rows(parts: PositionParts, settings: Settings, tz: tzinfo) -> list[dict[str, Any]]:
    """Return the reporting intervals as ``run`` lists them (the keys criteria use)."""
    iv = parts.intervals
    if iv.start_ms.size == 0:
        return []
    levels = db_list(iv.levels_db())
    lafmax = db_list(iv.lafmax)
    valid_s = iv.valid_ms / MS_PER_S
    length_s = (iv.end_ms - iv.start_ms) / MS_PER_S
    sufficient = np.divide(valid_s, length_s, out=np.zeros(valid_s.size),
                           where=length_s > 0) >= settings.coverage_threshold
    starts = format_local(iv.start_ms, tz)
    ends = format_local(iv.end_ms, tz)
    periods = lden_period_names(parts.days.days, settings, tz, iv.start_ms)
    rows = [{"start": starts[j], "end": ends[j], "LAeq": levels[j], "LAFmax": lafmax[j],
             "valid_s": float(valid_s[j]), "sufficient": bool(sufficient[j]),
             "period": periods[j]} for j in range(iv.start_ms.size)]
    if parts.interval_levels is not None:  # LN per interval from the merged level steps
        percents = list(settings.percentiles)
        ln = parts.interval_levels.levels_db(iv.start_ms, percents)
        for k, p in enumerate(percents):
            for row, value in zip(rows, db_list(ln[:, k]), strict=True):
                row[ln_key(p)] = value
    return rows


def criteria_counts(parts: PositionParts, position: str, days: list[dict[str, Any]],
                    settings: Settings, tz: tzinfo) -> list[dict[str, Any]]:
    """Per criterion of this position: how many days or intervals were above its limit.

    The judgement is ``run``'s (:func:`criteria_section`: the reported value, rounded half
    up to 0.1 dB, above the limit). Interval criteria on LN (``LA90``) take each
    interval's LN from the time per 0.1 dB step of its valid readings (the samples, as
    ``run`` takes it for levels on that grid); where the meter logged that LN itself
    (``run`` then combines the logged values) they are not counted (``checked`` is 0).
    """
    wanted = tuple(c for c in settings.criteria if c.indicator not in
                   ("rating_level", "excess_over_background"))
    if not wanted:
        return []
    needs_intervals = any(c.indicator not in DAY_INDICATORS for c in wanted)
    intervals = interval_rows(parts, settings, tz) if needs_intervals else []
    checked = criteria_section(
        wanted, position, days, intervals, [], settings.percentiles,
        settings.reporting_interval_s, settings.coverage_threshold, tz=tz,
        periods=settings.periods, holidays=parse_holidays(settings.calendar.holidays),
        interval_laeq=parts.intervals.levels_db().tolist() if needs_intervals else None)
    out = []
    for item in checked:
        failures = item["failures"]
        entry = {key: item[key] for key in ("name", "indicator", "period", "limit_db",
                                            "applies_to", "checked")}
        entry["above"] = int(item["failed"])
        entry["above_with_sufficient_coverage"] = sum(1 for f in failures if f["sufficient"])
        entry["first_above"] = failures[0]["when"] if failures else None
        entry["last_above"] = failures[-1]["when"] if failures else None
        out.append(entry)
    return out


def level_section(parts: PositionParts, settings: Settings) -> dict[str, Any]:
    """LN per Lden period type from the merged time per 0.1 dB step."""
    table = parts.levels.time_ms
    percents = list(settings.percentiles)
    values = exceedance_levels_from_step_times(table, FIRST_LEVEL_STEP, LEVEL_STEPS_PER_DB,
                                               percents)
    out: dict[str, Any] = {"basis": "samples",
                           "step_db": 1.0 / LEVEL_STEPS_PER_DB}
    for k, name in enumerate(PERIOD_NAMES):
        entry: dict[str, Any] = {ln_key(p): db(values[k, j]) for j, p in enumerate(percents)}
        entry["valid_s"] = seconds(table[k].sum() / MS_PER_S)
        out[name] = entry
    return out


def position_section(position: str, parts: PositionParts, settings: Settings, tz: tzinfo,
                     window: DateWindow) -> dict[str, Any]:
    """Every long-term figure of one position."""
    schemes = parts.days.scheme_results(scheme_times_of(settings), tz)
    events = ((parts.days.night_count, parts.days.night_highest[:, -1])
              if parts.has_lafmax else None)
    days = [d for d in day_entries(parts.days.days, settings, schemes, events)
            if window.holds(date.fromisoformat(d["date"]))]
    years = _grouped_spans(parts, window, lambda d: d.year, _year_span, settings, tz, "year")
    months = _grouped_spans(parts, window, lambda d: f"{d.year:04d}-{d.month:02d}",
                            _month_span, settings, tz, "month")
    return {
        "position": position,
        "rows": parts.rows,
        "first": format_local([parts.first_ms], tz)[0],
        "last": format_local([parts.last_ms], tz)[0],
        "years": years,
        "months": months,
        "days": days,
        "levels": level_section(parts, settings),
        "criteria": criteria_counts(parts, position, days, settings, tz),
    }
