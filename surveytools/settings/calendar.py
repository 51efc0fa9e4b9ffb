"""``[calendar]``: the site's holidays, and the day names criterion schedules use.

Schedules (``[[criteria]] schedule``) name days ``Mon`` ... ``Sun`` in comma lists and
ranges; a date listed in ``holidays`` counts as a Sunday for every schedule.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from datetime import date
from typing import Any

from surveytools.settings._parse import Problem

#: Day names in ISO 8601 order (Monday = 0 as in :meth:`datetime.date.weekday`).
DAY_NAMES = ("Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun")
_FULL_NAMES = ("monday", "tuesday", "wednesday", "thursday", "friday", "saturday", "sunday")
#: Days in a week. Definition (ISO 8601).
DAYS_PER_WEEK = 7
_ISO_DATE = re.compile(r"\d{4}-\d{2}-\d{2}")


@dataclass(frozen=True)
class Calendar:
    """The site's calendar."""

    #: Public holidays (``YYYY-MM-DD``): schedules treat these dates as Sundays.
    holidays: tuple[str, ...] = ()


def _day_number(name: str) -> int:
    low = name.strip().lower()
    for k, (short, full) in enumerate(zip(DAY_NAMES, _FULL_NAMES, strict=True)):
        if low in (short.lower(), full):
            return k
    raise ValueError(f"{name.strip()!r} is not a day name; use {', '.join(DAY_NAMES)}")


def parse_days(text: str) -> frozenset[int]:
    """Weekday numbers (Monday = 0) of a day list such as ``"Mon-Fri"`` or ``"Sat,Sun"``.

    A range runs forward through the week and may wrap (``"Fri-Mon"`` is Fri, Sat, Sun,
    Mon).

    Raises
    ------
    ValueError
        If a part is not a day name or a range of two day names.
    """
    if not isinstance(text, str) or not text.strip():
        raise ValueError("days must be text such as 'Mon-Fri' or 'Sat,Sun'")
    out: set[int] = set()
    for part in text.split(","):
        if not part.strip():
            raise ValueError(f"{text!r} has an empty item; write e.g. 'Mon-Fri,Sun'")
        ends = part.split("-")
        if len(ends) == 1:
            out.add(_day_number(ends[0]))
        elif len(ends) == 2:
            first, last = _day_number(ends[0]), _day_number(ends[1])
            span = (last - first) % DAYS_PER_WEEK
            out.update((first + k) % DAYS_PER_WEEK for k in range(span + 1))
        else:
            raise ValueError(f"{part.strip()!r} is not a day or a range such as 'Mon-Fri'")
    return frozenset(out)


def parse_holidays(values: Iterable[object]) -> tuple[date, ...]:
    """Dates of a holiday list (``"YYYY-MM-DD"`` text or dates), sorted, unique.

    Raises
    ------
    ValueError
        With ``[i]`` (1-based) naming the entry that is not a date.
    """
    out: set[date] = set()
    for i, value in enumerate(values, start=1):
        if isinstance(value, date):
            out.add(value)
            continue
        text = str(value).strip()
        try:
            if not _ISO_DATE.fullmatch(text):
                raise ValueError(text)
            out.add(date.fromisoformat(text))
        except ValueError as exc:
            raise ValueError(f"[{i}]: {value!r} is not a date; write it as '2026-12-25'"
                             ) from exc
    return tuple(sorted(out))


def build_calendar(given: Mapping[str, Any]) -> tuple[Calendar, list[Problem]]:
    """Build :class:`Calendar` from the schema-valid ``[calendar]`` table.

    Returns
    -------
    calendar : Calendar
    problems : list of (key path, problem)
        A holiday that is not a real date (``2026-02-30``).
    """
    problems: list[Problem] = []
    texts = [str(v) for v in given.get("holidays", [])]
    for i, text in enumerate(texts, start=1):
        try:
            parse_holidays([text])
        except ValueError:
            problems.append((f"calendar.holidays[{i}]",
                             f"expected a real date YYYY-MM-DD, found '{text}'"))
    if problems:
        return Calendar(), problems
    return Calendar(tuple(d.isoformat() for d in parse_holidays(texts))), []
