"""Schedules: when a criterion applies, as windows of the site's civil time.

A schedule is a list of windows, each ``days`` (day names ``Mon`` ... ``Sun``, comma lists
and ranges such as ``"Mon-Fri"`` or ``"Sat,Sun"``), ``from`` and ``to`` (``"HH:MM"``, the
site's civil time). A window whose ``to`` is earlier than its ``from`` crosses midnight and
belongs to the day it starts on (``Fri 23:00-07:00`` runs into Saturday morning); ``to``
equal to ``from`` is a whole day from ``from``. Dates in the calendar's holidays count as
Sundays.

Windows are laid out per calendar day with the same wall-clock → UTC helper the periods use
(:func:`~surveytools.assessment.timegrid.wall_to_utc_ms`), so a window keeps its wall-clock
bounds on a DST change day and simply lasts an hour more or less. An interval is judged
when it lies wholly inside one window (touching or overlapping windows are merged first);
outside every window the criterion does not apply.
"""

from __future__ import annotations

from collections.abc import Collection, Iterable, Mapping, Sequence
from dataclasses import dataclass
from datetime import date, timedelta, tzinfo

import numpy as np
from numpy.typing import ArrayLike, NDArray

from surveytools.assessment.timegrid import (
    MINUTES_PER_HOUR,
    calendar_days,
    parse_hhmm,
    wall_to_utc_ms,
)
from surveytools.errors import SettingsError
from surveytools.settings.calendar import DAY_NAMES, parse_days, parse_holidays

IntArray = NDArray[np.int64]

__all__ = ["DAY_NAMES", "Window", "parse_days", "parse_holidays", "parse_schedule",
           "parse_window", "schedule_weekday", "window_spans", "within_schedule"]

#: Weekday number a holiday is treated as (Sunday).
HOLIDAY_WEEKDAY = 6


@dataclass(frozen=True)
class Window:
    """One schedule window: on ``weekdays`` from ``start_min`` to ``end_min`` (local).

    ``end_min <= start_min`` crosses midnight into the next day (equal: 24 h).
    """

    weekdays: frozenset[int]
    start_min: int
    end_min: int


def parse_window(entry: Mapping[str, object]) -> Window:
    """Return the :class:`Window` of one settings entry ``{days, from, to}``.

    Raises
    ------
    ValueError
        If a key is missing or unknown, or a value is not a day list / ``HH:MM``; the
        message names the key.
    """
    unknown = sorted(set(entry) - {"days", "from", "to"})
    if unknown:
        raise ValueError(f"unknown key {unknown[0]!r}; a window has days, from and to")
    for key in ("days", "from", "to"):
        if key not in entry:
            raise ValueError(f"missing {key!r}; a window has days, from and to")
    try:
        weekdays = parse_days(entry["days"])  # type: ignore[arg-type]
    except ValueError as exc:
        raise ValueError(f"days: {exc}") from exc
    minutes = []
    for key in ("from", "to"):
        try:
            hour, minute = parse_hhmm(str(entry[key]))
        except SettingsError as exc:
            raise ValueError(f"{key}: {exc}") from exc
        minutes.append(hour * MINUTES_PER_HOUR + minute)
    return Window(weekdays, minutes[0], minutes[1])


def parse_schedule(entries: Iterable[Mapping[str, object]]) -> tuple[Window, ...]:
    """Return the windows of a schedule (see :func:`parse_window`).

    Raises
    ------
    ValueError
        With ``[i]`` (1-based) naming the window at fault.
    """
    out = []
    for i, entry in enumerate(entries, start=1):
        if not isinstance(entry, Mapping):
            raise ValueError(f"[{i}]: a window is a table {{days, from, to}}")
        try:
            out.append(parse_window(entry))
        except ValueError as exc:
            raise ValueError(f"[{i}].{exc}") from exc
    if not out:
        raise ValueError(": a schedule needs at least one window (or leave it out)")
    return tuple(out)


def schedule_weekday(day: date, holidays: Collection[date]) -> int:
    """Weekday (Monday = 0) a date counts as: a holiday counts as Sunday."""
    return HOLIDAY_WEEKDAY if day in holidays else day.weekday()


def window_spans(
    windows: Sequence[Window], days: Sequence[date], tz: tzinfo,
    holidays: Collection[date] = (),
) -> tuple[IntArray, IntArray]:
    """Return the merged UTC spans of the windows that start on the given local dates.

    Parameters
    ----------
    windows : sequence of Window
        The schedule.
    days : sequence of date
        Local calendar dates whose windows are laid out (a window belongs to the date
        it starts on).
    tz : tzinfo
        The site's civil time.
    holidays : collection of date
        Dates that count as Sundays.

    Returns
    -------
    starts_ms, ends_ms : numpy.ndarray of int64
        Sorted, non-overlapping, non-touching spans [start, end). [ms]
    """
    starts: list[int] = []
    ends: list[int] = []
    for day in days:  # a handful of windows per calendar day, not per reading
        weekday = schedule_weekday(day, holidays)
        for w in windows:
            if weekday not in w.weekdays:
                continue
            end_day = day if w.end_min > w.start_min else day + timedelta(days=1)
            s = wall_to_utc_ms(day, *divmod(w.start_min, MINUTES_PER_HOUR), tz)
            e = wall_to_utc_ms(end_day, *divmod(w.end_min, MINUTES_PER_HOUR), tz)
            if e > s:
                starts.append(s)
                ends.append(e)
    if not starts:
        empty = np.zeros(0, dtype=np.int64)
        return empty, empty.copy()
    s_arr = np.asarray(starts, dtype=np.int64)
    e_arr = np.asarray(ends, dtype=np.int64)
    order = np.argsort(s_arr, kind="stable")
    s_arr, e_arr = s_arr[order], e_arr[order]
    reach = np.maximum.accumulate(e_arr)
    # a new merged span starts where a window starts after everything before has ended
    new = np.ones(s_arr.size, dtype=bool)
    new[1:] = s_arr[1:] > reach[:-1]
    first = np.flatnonzero(new)
    last = np.append(first[1:] - 1, s_arr.size - 1)
    return s_arr[first], reach[last]


def within_schedule(
    starts_ms: ArrayLike, ends_ms: ArrayLike, windows: Sequence[Window], tz: tzinfo,
    holidays: Collection[date] = (),
) -> NDArray[np.bool_]:
    """Whether each interval [start, end) lies wholly inside the schedule's windows.

    Vectorised over intervals: the windows are laid out once per calendar day of the
    intervals (one day of margin each side, for windows crossing midnight) and each
    interval is found among them with :func:`numpy.searchsorted`.

    Parameters
    ----------
    starts_ms, ends_ms : array-like of int
        Interval starts and ends (UTC epoch). [ms]
    windows : sequence of Window
        The schedule.
    tz : tzinfo
        The site's civil time.
    holidays : collection of date
        Dates that count as Sundays.

    Returns
    -------
    numpy.ndarray of bool
        True where the interval is judged.
    """
    starts = np.asarray(starts_ms, dtype=np.int64).ravel()
    ends = np.asarray(ends_ms, dtype=np.int64).ravel()
    if starts.size == 0:
        return np.zeros(0, dtype=bool)
    days = calendar_days(int(starts.min()), int(ends.max()), tz, margin_days=1)
    span_s, span_e = window_spans(windows, days, tz, holidays)
    if span_s.size == 0:
        return np.zeros(starts.size, dtype=bool)
    j = np.searchsorted(span_s, starts, side="right") - 1
    at = np.maximum(j, 0)
    return (j >= 0) & (starts >= span_s[at]) & (ends <= span_e[at])
