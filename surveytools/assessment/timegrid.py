"""The site's civil time: wall-clock boundaries as UTC instants, and local ISO text.

Everything inside the assessment runs on one time axis, UTC epoch milliseconds (int64).
Period boundaries are *site civil* times ("07:00", "23:00" in the site's ``Time zone``,
with its summer time) converted to UTC instants per calendar day with :mod:`zoneinfo`,
so a DST day keeps its wall-clock bounds and simply lasts 23 h or 25 h (a night of 7 h
or 9 h). Timestamps shown to people are ISO 8601 in the site's civil time with its UTC
offset. The meter's ``Clock`` (local, UTC or a fixed offset) only decides how its
readings became UTC instants (:mod:`surveytools.validation.timebase`); it never moves a
period (design.md §9).
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence
from datetime import date, datetime, timedelta, tzinfo

import numpy as np
from numpy.typing import ArrayLike, NDArray

from surveytools.constants import HOURS_PER_DAY, SECONDS_PER_HOUR
from surveytools.errors import SettingsError
from surveytools.zone_offsets import utc_offsets_ms

IntArray = NDArray[np.int64]

#: Milliseconds per second [ms/s]. Definition (SI prefix milli).
MS_PER_S = 1000
#: Minutes per hour and seconds per minute. Definition (ISO 80000-3).
MINUTES_PER_HOUR = 60
SECONDS_PER_MINUTE = 60

def site_tz(metadata: dict[str, object]) -> tzinfo:
    """Return the site's civil time zone (``time_zone``), whatever the meter's clock.

    ``time_zone`` is an IANA name (with summer time), ``"UTC"`` or ``"UTC+hh:mm"``. When
    it is missing (validation fills an assumed zone and warns ``time-zone-assumed``;
    this covers Surveys built directly), a fixed-offset clock's offset is the site time,
    otherwise UTC.

    Raises
    ------
    SettingsError
        If the zone is not one of those forms (validation reports it for the Survey sheet
        first; reaching here means the default from the settings is wrong).
    """
    from surveytools.validation.timebase import parse_clock, parse_site_zone

    zone = str(metadata.get("time_zone") or "").strip()
    clock = str(metadata.get("clock") or "local").strip()
    clock = {"local": "local", "utc": "UTC"}.get(clock.lower(), clock)
    try:
        if zone:
            return parse_site_zone(zone)
        return parse_clock(clock, "UTC").tzinfo()
    except ValueError as exc:
        what = (f"time zone {zone!r} is not an IANA zone name; give e.g. 'Europe/Berlin' "
                "or a fixed offset such as 'UTC+01:00'" if zone
                else f"clock {clock!r} is not 'local', 'UTC' or 'UTC+hh:mm'")
        raise SettingsError(what) from exc


#: Former name of :func:`site_tz` (periods always follow the site's civil time).
position_tz = site_tz


def parse_hhmm(text: str) -> tuple[int, int]:
    """Return (hour, minute) of ``"HH:MM"`` text (settings times of day).

    Raises
    ------
    SettingsError
        If the text is not a time of day.
    """
    match = re.fullmatch(r"\s*(\d{1,2}):(\d{2})\s*", str(text))
    if not match or int(match.group(1)) > 23 or int(match.group(2)) >= MINUTES_PER_HOUR:
        raise SettingsError(f"time of day {text!r} is not HH:MM (00:00 to 23:59)")
    return int(match.group(1)), int(match.group(2))


def hhmm_hours(text: str) -> float:
    """Return ``"HH:MM"`` as decimal hours [h]."""
    hour, minute = parse_hhmm(text)
    return hour + minute / MINUTES_PER_HOUR


def wall_to_utc_ms(day: date, hour: int, minute: int, tz: tzinfo) -> int:
    """UTC instant [ms] of a local wall-clock time on a calendar day.

    A wall-clock time that does not exist (spring-forward gap) maps to the instant the
    clock would show with the pre-transition offset (zoneinfo ``fold=0``); an ambiguous
    one (autumn repeat) to its first occurrence.
    """
    local = datetime(day.year, day.month, day.day, hour, minute, tzinfo=tz)
    return round(local.timestamp() * MS_PER_S)


def local_text_to_utc_ms(text: str, tz: tzinfo) -> int:
    """UTC instant [ms] of local ISO text such as ``"2026-07-03 22:00"``.

    Text with its own offset (``"2026-07-03T22:00+02:00"``) keeps it.

    Raises
    ------
    SettingsError
        If the text is not an ISO 8601 date-time.
    """
    try:
        moment = datetime.fromisoformat(str(text).strip())
    except ValueError as exc:
        raise SettingsError(
            f"assessment window time {text!r} is not a date and time; write it as "
            "'2026-07-03 22:00' (the site's civil time)"
        ) from exc
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=tz)
    return round(moment.timestamp() * MS_PER_S)


def local_date(ms: int, tz: tzinfo) -> date:
    """Local calendar date of a UTC instant [ms]."""
    return datetime.fromtimestamp(ms / MS_PER_S, tz=tz).date()


def calendar_days(first_ms: int, last_ms: int, tz: tzinfo, margin_days: int = 1) -> list[date]:
    """Local calendar dates from ``first_ms`` to ``last_ms``, widened by ``margin_days``."""
    first = local_date(first_ms, tz) - timedelta(days=margin_days)
    last = local_date(last_ms, tz) + timedelta(days=margin_days)
    return [first + timedelta(days=k) for k in range((last - first).days + 1)]


def day_offset_boundaries(
    days: Sequence[date], times: Sequence[str], tz: tzinfo
) -> IntArray:
    """Boundaries of a cyclic scheme, ``len(times)`` per day plus the next day's first.

    ``times`` are local wall-clock starts in cyclic order (``["07:00", "19:00", "23:00"]``);
    a time earlier than the first belongs to the next calendar date (a night starting at
    00:30). Result: ``len(days) * len(times) + 1`` sorted UTC instants; segment
    ``1 + d * len(times) + k`` of :func:`~surveytools.indicators.periods.split_at_boundaries`
    is period ``k`` of day ``d``.
    """
    parsed = [parse_hhmm(t) for t in times]
    first_minutes = parsed[0][0] * MINUTES_PER_HOUR + parsed[0][1]
    out: list[int] = []
    all_days = [*days, days[-1] + timedelta(days=1)] if days else []
    for i, day in enumerate(all_days):
        for k, (hour, minute) in enumerate(parsed):
            if i == len(days) and k > 0:
                break
            minutes = hour * MINUTES_PER_HOUR + minute
            on = day + timedelta(days=1) if minutes < first_minutes else day
            out.append(wall_to_utc_ms(on, hour, minute, tz))
    bounds = np.asarray(out, dtype=np.int64)
    return np.maximum.accumulate(bounds) if bounds.size else bounds


def stepped_grid(
    starts_ms: ArrayLike, ends_ms: ArrayLike, step_s: ArrayLike
) -> tuple[IntArray, IntArray]:
    """Grid instants from each start in steps of ``step_s``, cut at the matching end.

    For consecutive spans (``ends[i] == starts[i+1]``) the result is a sorted boundary
    array: every span's grid instants and the final end. The last step of a span may be
    short. ``step_s`` is one step for all spans or one per span [s].

    Returns
    -------
    boundaries_ms : numpy.ndarray of int64
        Sorted instants, one more than the number of grid intervals. [ms]
    span : numpy.ndarray of int64
        The span each grid interval belongs to.
    """
    starts = np.asarray(starts_ms, dtype=np.int64).ravel()
    ends = np.asarray(ends_ms, dtype=np.int64).ravel()
    steps = np.broadcast_to(
        np.maximum(np.rint(np.asarray(step_s, dtype=np.float64) * MS_PER_S), 1), starts.shape
    ).astype(np.int64)
    counts = np.maximum(-(-(ends - starts) // steps), 1)
    span = np.repeat(np.arange(starts.size, dtype=np.int64), counts)
    k = np.arange(span.size, dtype=np.int64) - np.repeat(np.cumsum(counts) - counts, counts)
    grid = starts[span] + k * steps[span]
    bounds = np.concatenate([grid, ends[-1:]]) if ends.size else grid
    return bounds, span


def format_local(ms: ArrayLike, tz: tzinfo) -> list[str]:
    """ISO 8601 text in the site's civil time with offset; milliseconds only when non-zero.

    ``1781085600000`` in Europe/Berlin -> ``"2026-06-10T12:00:00+02:00"``;
    with 100 ms -> ``"2026-06-10T12:00:00.100+02:00"``. Vectorised: the wall-clock part
    with ``numpy.datetime_as_string``, the offset text once per distinct offset.
    """
    values = np.asarray(ms, dtype=np.int64).ravel()
    if values.size == 0:
        return []
    offsets = utc_offsets_ms(values, tz)
    wall = np.datetime_as_string((values + offsets).astype("datetime64[ms]"), unit="ms")
    whole = (values % MS_PER_S) == 0
    wall = np.where(whole, np.char.partition(wall.astype(str), ".")[:, 0], wall)
    distinct, inverse = np.unique(offsets, return_inverse=True)
    texts = np.array([_offset_text(int(o)) for o in distinct], dtype=object)
    return [w + o for w, o in zip(wall.tolist(), texts[inverse].tolist(), strict=True)]


def _offset_text(offset_ms: int) -> str:
    sign = "-" if offset_ms < 0 else "+"
    minutes = abs(offset_ms) // (MS_PER_S * SECONDS_PER_MINUTE)
    return f"{sign}{minutes // MINUTES_PER_HOUR:02d}:{minutes % MINUTES_PER_HOUR:02d}"


def local_hours_of_day(ms: ArrayLike, tz: tzinfo) -> NDArray[np.float64]:
    """Local wall-clock time of day of each instant [h] (0 <= h < 24)."""
    values = np.asarray(ms, dtype=np.int64)
    local = values + utc_offsets_ms(values, tz)
    day_ms = int(HOURS_PER_DAY * SECONDS_PER_HOUR * MS_PER_S)
    return (local % day_ms) / (SECONDS_PER_HOUR * MS_PER_S)


def iso_dates(days: Iterable[date]) -> list[str]:
    """``YYYY-MM-DD`` text of each date."""
    return [d.isoformat() for d in days]
