"""Timestamps to UTC instants: ``start_ms``, ``duration_ms``, ``offset_s``.

Meters write naive wall-clock times. This module turns the timestamp cells of a table
(one date-time column, strict ISO 8601 text, or Date + Time columns) into integer UTC
milliseconds using the meter's clock (UTC, a fixed offset, or local time with daylight
saving), and derives interval lengths.

Two different things (design.md §9): the *clock* (:class:`Clock`, Survey ``Clock``) is
how the meter stamped its readings; the *site zone* (:func:`parse_site_zone`, Survey
``Time zone``) is the civil time of the place, with its summer time, which every period,
assessment day and local time shown follows. A meter on UTC or on a fixed ``UTC+00:00``
at a site in Europe/London is converted to UTC here and shown in London time later.
Everything is vectorised over rows; rows that cannot be placed in time are reported,
never guessed.

Daylight saving on a local clock (see ``reference/reliability.md`` §4):

- autumn: the repeated hour is placed by order. In sheet order the readings of the
  repeated hour run forward, jump back (or repeat a time) once, and run forward again;
  before the jump is the first pass (summer time), after it the second (standard time).
  If that pattern is not there (one pass only, or out of order) the earlier offset is
  used and a warning ``timestamp-ambiguous`` is given;
- spring: the skipped hour is simply absent; a reading stamped inside it does not exist
  (``timestamp-nonexistent``).
"""

from __future__ import annotations

import re
import zoneinfo
from dataclasses import dataclass, field
from datetime import UTC, timedelta, timezone, tzinfo
from typing import Literal

import numpy as np
import pandas as pd

from surveytools.constants import (
    MAX_INTERVAL_DURATION_S,
    PLAUSIBLE_READING_YEAR_END,
    PLAUSIBLE_READING_YEAR_MIN,
)
from surveytools.inputs.raw import RawColumn, cell_number_text
from surveytools.validation.findings import Finding, FindingCollector, Severity
from surveytools.zone_offsets import utc_offsets_ms

MS_PER_S = 1000
MS_PER_DAY = 86_400_000
_NAT = np.iinfo(np.int64).min
#: Longest cell text quoted in a message (reference/reliability.md §7: raw value truncated
#: to 200 characters).
_MAX_QUOTE = 200
#: Earliest accepted date-time: 1900-03-01, the first day after Excel's fictitious
#: 1900-02-29 (reference/reliability.md §4). [ms since 1970]
EARLIEST_MS = int(np.datetime64("1900-03-01T00:00:00", "ms").astype(np.int64))

_ISO_DATETIME = re.compile(
    r"^\s*(?P<date>\d{4}-\d{2}-\d{2})(?:[T ](?P<h>\d{2}):(?P<m>\d{2})"
    r"(?::(?P<s>\d{2})(?:[.,](?P<f>\d{1,9}))?)?)?\s*(?P<z>Z|[+-]\d{2}:?\d{2})?\s*$")
_ISO_TIME = re.compile(
    r"^\s*(?P<h>\d{1,2}):(?P<m>\d{2})(?::(?P<s>\d{2})(?:[.,](?P<f>\d{1,9}))?)?\s*$")
_FIXED = re.compile(r"^UTC(?P<sign>[+-])(?P<h>\d{2}):(?P<m>\d{2})$")


# --------------------------------------------------------------------------------------
# Clocks
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Clock:
    """How a position's timestamps relate to UTC.

    Parameters
    ----------
    kind : {"utc", "fixed", "local"}
        UTC, a fixed offset all year, or the local time of an IANA zone (with DST).
    offset_s : int
        The fixed offset (``kind="fixed"``). [s]
    zone : str, optional
        IANA zone name (``kind="local"``).
    """

    kind: Literal["utc", "fixed", "local"]
    offset_s: int = 0
    zone: str | None = None

    def tzinfo(self) -> tzinfo:
        """Return the clock as a :class:`datetime.tzinfo` (UTC, a fixed offset or the zone)."""
        if self.kind == "local":
            return zoneinfo.ZoneInfo(str(self.zone))
        return timezone(timedelta(seconds=self.offset_s)) if self.offset_s else UTC

    @property
    def label(self) -> str:
        """Human text of the clock (``UTC``, ``UTC+01:00``, ``local time (Europe/Berlin)``)."""
        if self.kind == "local":
            return f"local time ({self.zone})"
        if self.kind == "utc":
            return "UTC"
        return format_offset(self.offset_s)


def format_offset(offset_s: int) -> str:
    """Return ``UTC+hh:mm`` text of an offset [s]."""
    sign = "+" if offset_s >= 0 else "-"
    m = abs(int(offset_s)) // 60
    return f"UTC{sign}{m // 60:02d}:{m % 60:02d}"


def _fixed_offset_s(text: str) -> int | None:
    m = _FIXED.match(text)
    if not m:
        return None
    s = int(m["h"]) * 3600 + int(m["m"]) * 60
    return -s if m["sign"] == "-" else s


def parse_site_zone(time_zone: str) -> tzinfo:
    """Return the site's civil time zone: IANA (with summer time), UTC or ``UTC±hh:mm``.

    Parameters
    ----------
    time_zone : str
        IANA zone name (``"Australia/Sydney"``), ``"UTC"`` or ``"UTC+01:00"``.

    Returns
    -------
    datetime.tzinfo

    Raises
    ------
    ValueError
        When the text is none of those forms (the Survey schema and the settings reject
        such values before they get here).
    """
    text = str(time_zone).strip()
    if text == "UTC":
        return UTC
    off = _fixed_offset_s(text)
    if off is not None:
        return Clock("fixed", off).tzinfo()
    try:
        return zoneinfo.ZoneInfo(text)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError) as exc:
        raise ValueError(f"unknown time zone {time_zone!r}") from exc


def parse_clock(clock: str, time_zone: str) -> Clock:
    """Combine the Survey ``clock`` and ``time_zone`` values into a :class:`Clock`.

    Parameters
    ----------
    clock : str
        ``"local"``, ``"UTC"`` or ``"UTC+01:00"`` style fixed offset.
    time_zone : str
        IANA zone name, ``"UTC"`` or a fixed offset (used when ``clock`` is ``"local"``).

    Returns
    -------
    Clock

    Raises
    ------
    ValueError
        When the text is not one of the accepted forms (the Survey schema rejects such
        values before they get here).
    """
    if clock == "UTC":
        return Clock("utc")
    off = _fixed_offset_s(clock)
    if off is not None:
        return Clock("fixed", off)
    if clock != "local":
        raise ValueError(f"clock must be 'local', 'UTC' or 'UTC+hh:mm', not {clock!r}")
    if time_zone == "UTC":
        return Clock("utc")
    off = _fixed_offset_s(time_zone)
    if off is not None:
        return Clock("fixed", off)
    try:
        zoneinfo.ZoneInfo(time_zone)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError, OSError) as exc:
        # OSError: a name too long for a file path (the zone database is a folder tree)
        shown = time_zone if len(time_zone) <= 60 else time_zone[:57] + "..."
        raise ValueError(f"unknown time zone {shown!r}") from exc
    return Clock("local", 0, time_zone)


def site_offsets_s(utc_ms: np.ndarray, zone: tzinfo) -> np.ndarray:
    """Return the UTC offset [s] of the site's civil time at each instant (vectorised).

    Parameters
    ----------
    utc_ms : numpy.ndarray of int64
        Instants. [ms]
    zone : datetime.tzinfo
        The site's zone (:func:`parse_site_zone`).

    Returns
    -------
    numpy.ndarray of int32
    """
    offsets_ms = utc_offsets_ms(utc_ms, zone)
    return (offsets_ms // MS_PER_S).astype(np.int32)


def assumed_site_zone(clock: str) -> str:
    """Return the site zone assumed when nobody gave one: a fixed clock's offset, or UTC.

    A meter on a fixed offset was most likely set to the site's standard time; a local
    or UTC clock gives no hint, and UTC is the neutral choice. Either way it is a warning
    (``time-zone-assumed``), never silent.
    """
    return clock if _fixed_offset_s(clock) is not None else "UTC"


# --------------------------------------------------------------------------------------
# Cells -> naive milliseconds
# --------------------------------------------------------------------------------------


@dataclass
class NaiveTimes:
    """Naive wall-clock times of a column, per data position.

    ``ms`` is valid where ``ok``; ``has_offset``/``offset_s`` hold an explicit UTC offset
    written in ISO text (it overrides the clock); ``problem`` holds the reason text of a
    cell that is not empty but cannot be read (``flagged`` marks those positions, so
    that finding them needs no element-wise look at the object array), ``raw`` its
    content; ``empty`` marks empty cells.
    """

    ms: np.ndarray
    ok: np.ndarray
    empty: np.ndarray
    has_offset: np.ndarray
    offset_s: np.ndarray
    problem: np.ndarray
    raw: np.ndarray
    flagged: np.ndarray

    @classmethod
    def blank(cls, n: int) -> NaiveTimes:
        """Return an all-empty result for ``n`` positions."""
        return cls(np.full(n, _NAT, np.int64), np.zeros(n, bool), np.ones(n, bool),
                   np.zeros(n, bool), np.zeros(n, np.int64), np.full(n, None, object),
                   np.full(n, None, object), np.zeros(n, bool))

    def fail(self, pos: np.ndarray, reason: str | np.ndarray, raw: np.ndarray | None) -> None:
        """Mark positions as unreadable with a reason."""
        self.ok[pos] = False
        self.empty[pos] = False
        self.problem[pos] = reason
        self.flagged[pos] = True
        if raw is not None:
            self.raw[pos] = raw


def _fraction_ms(frac: pd.Series) -> np.ndarray:
    """Fraction-of-second digits (``"125"``, ``"1"``) to whole ms, rounded half up."""
    filled = frac.fillna("0").str.ljust(9, "0").astype(np.int64).to_numpy()
    return (filled + 500_000) // 1_000_000


def _hms_ms(parts: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """Hours/minutes/seconds/fraction columns to ms since midnight plus a validity mask."""
    h = pd.to_numeric(parts["h"]).fillna(0).astype(np.int64).to_numpy()
    m = pd.to_numeric(parts["m"]).fillna(0).astype(np.int64).to_numpy()
    s = pd.to_numeric(parts["s"]).fillna(0).astype(np.int64).to_numpy()
    ok = (h <= 23) & (m <= 59) & (s <= 59)
    ms = ((h * 60 + m) * 60 + s) * MS_PER_S + _fraction_ms(parts["f"])
    return ms, ok


def parse_iso_text(texts: pd.Series) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Parse strict ISO 8601 date-time text (vectorised).

    Accepted: ``YYYY-MM-DD``, optionally ``T`` or a space and ``hh:mm[:ss[.fff…]]``,
    optionally ``Z`` or ``±hh:mm`` / ``±hhmm``. Never day-first guesses.

    Parameters
    ----------
    texts : pandas.Series of str

    Returns
    -------
    ms : numpy.ndarray of int64
        Naive wall-clock time, ms since 1970 (undefined where not ``ok``). [ms]
    ok : numpy.ndarray of bool
    has_offset : numpy.ndarray of bool
    offset_s : numpy.ndarray of int64
        Explicit offset where given. [s]
    """
    n = len(texts)
    parts = texts.astype(object).where(texts.notna(), "").astype(str).str.extract(
        _ISO_DATETIME)
    matched = parts["date"].notna().to_numpy()
    day = pd.to_datetime(parts["date"], format="%Y-%m-%d", errors="coerce")
    day_ok = day.notna().to_numpy() & matched
    day_ms = np.where(day_ok, day.to_numpy().astype("datetime64[ms]").astype(np.int64), 0)
    tod_ms, tod_ok = _hms_ms(parts)
    z = parts["z"].fillna("")
    has_off = (z != "").to_numpy()
    zz = z.str.replace(":", "", regex=False).str.replace("Z", "+0000", regex=False)
    off_h = pd.to_numeric(zz.str[1:3], errors="coerce").fillna(0).astype(np.int64).to_numpy()
    off_m = pd.to_numeric(zz.str[3:5], errors="coerce").fillna(0).astype(np.int64).to_numpy()
    sign = np.where(zz.str[:1].to_numpy() == "-", -1, 1)
    off_ok = ~has_off | ((off_h <= 14) & (off_m <= 59))
    offset_s = sign * (off_h * 3600 + off_m * 60) * has_off
    ok = day_ok & tod_ok & off_ok
    ms = np.where(ok, day_ms + tod_ms, _NAT).astype(np.int64)
    assert ms.shape == (n,)
    return ms, ok, has_off & ok, offset_s.astype(np.int64)


def _datetime_values_ms(values: pd.Series) -> tuple[np.ndarray, np.ndarray]:
    arr = pd.to_datetime(values, errors="coerce").to_numpy().astype("datetime64[ms]")
    present = ~np.isnat(arr)
    return arr.astype(np.int64), present


def _base(col: RawColumn, n: int) -> NaiveTimes:
    """Empty result plus the error / formula cells of ``col`` marked as problems."""
    out = NaiveTimes.blank(n)
    if col.error_cells:
        pos = np.fromiter(col.error_cells, np.int64)
        raw = np.array(list(col.error_cells.values()), dtype=object)
        out.fail(pos, np.array([f"the cell holds the error value {r}" for r in raw],
                               dtype=object), raw)
    if col.formula_without_value:
        pos = np.fromiter(sorted(col.formula_without_value), np.int64)
        out.fail(pos, "the cell holds a formula without a stored value — open and save the "
                 "file in a spreadsheet program, or enter the value", None)
    return out


def _text_series(col: RawColumn, n: int) -> pd.Series:
    """Text of every position: the text cells, plus the values of a text column."""
    if col.kind == "text":
        s = col.values.astype(object).where(col.values.notna(), None)
    else:
        s = pd.Series([None] * n, dtype=object)
    if col.text_cells:
        s = s.copy()
        s.iloc[list(col.text_cells)] = list(col.text_cells.values())
    return s


def column_datetimes(col: RawColumn, n: int) -> NaiveTimes:
    """Read a date-time column (date-time cells or ISO 8601 text) as naive ms.

    A time of day without a date, a number or a yes/no value is a problem, not a guess.
    """
    out = _base(col, n)
    if col.kind == "datetime":
        ms, present = _datetime_values_ms(col.values)
        early = present & (ms < EARLIEST_MS)
        good = present & ~early
        out.ms[good] = ms[good]
        out.ok[good] = True
        out.empty[present] = False
        if col.utc:  # instants in UTC (a zoned Parquet timestamp): the clock does not apply
            out.has_offset[good] = True
            out.offset_s[good] = 0
        pos = np.flatnonzero(early)
        out.fail(pos, "the cell holds a time of day without a date (or a date before "
                 "1900-03-01) — enter the full date and time", format_naive_ms(ms[pos]))
    elif col.kind in ("number", "bool"):
        vals = col.values.to_numpy(dtype=object)
        present = pd.notna(col.values).to_numpy()
        pos = np.flatnonzero(present)
        out.fail(pos, "the cell holds a number, not a date-time — format the cell as a date "
                 "and time, or write ISO 8601 text such as 2026-07-03 22:00:00",
                 np.array([cell_number_text(v) for v in vals[pos]], dtype=object))
    if col.kind != "text" and not col.text_cells:
        return _implausible_years(out)  # typed cells only: no text to parse
    texts = _text_series(col, n)
    has_text = texts.notna().to_numpy()
    if has_text.any():
        pos = np.flatnonzero(has_text)
        sub = texts.iloc[pos].reset_index(drop=True)
        ms, ok, has_off, off_s = parse_iso_text(sub)
        good = pos[ok]
        out.ms[good] = ms[ok]
        out.ok[good] = True
        out.empty[good] = False
        out.has_offset[good] = has_off[ok]
        out.offset_s[good] = off_s[ok]
        bad = pos[~ok]
        out.fail(bad, "not a date-time in a supported form — write ISO 8601 text such as "
                 "2026-07-03 22:00:00 or 2026-07-03T22:00:00+02:00, or use a date-time cell",
                 sub[~ok].to_numpy(dtype=object))
    return _implausible_years(out)


#: Plausible reading times, naive ms: [1980-01-01, 2100-01-01) (see constants).
_PLAUSIBLE_FIRST_MS = int(np.datetime64(f"{PLAUSIBLE_READING_YEAR_MIN}-01-01", "ms")
                          .astype(np.int64))
_PLAUSIBLE_END_MS = int(np.datetime64(f"{PLAUSIBLE_READING_YEAR_END}-01-01", "ms")
                        .astype(np.int64))


def _implausible_years(out: NaiveTimes) -> NaiveTimes:
    """Mark readable times outside the plausible years as problems (the row is left out).

    A year typed wrong (1926, 9999) or a huge date serial must not stretch the survey to
    a century: it is a located finding, and no later step sees the time.
    """
    far = out.ok & ((out.ms < _PLAUSIBLE_FIRST_MS) | (out.ms >= _PLAUSIBLE_END_MS))
    if far.any():
        pos = np.flatnonzero(far)
        out.fail(pos, f"the year is outside {PLAUSIBLE_READING_YEAR_MIN}–"
                 f"{PLAUSIBLE_READING_YEAR_END - 1}, so this cannot be when the reading was "
                 "logged — correct the year; the row is left out", format_naive_ms(out.ms[pos]))
        out.ms[pos] = _NAT
    return out


def column_dates(col: RawColumn, n: int) -> NaiveTimes:
    """Read a Date column (date cells or ISO ``YYYY-MM-DD`` text) as ms at midnight."""
    out = column_datetimes(col, n)
    day = np.floor_divide(out.ms[out.ok], MS_PER_DAY) * MS_PER_DAY
    out.ms[out.ok] = day
    return out


def column_times(col: RawColumn, n: int) -> NaiveTimes:
    """Read a Time column as ms since midnight.

    Accepted: date-time cells (their time of day; a time-only Excel cell arrives as a
    date-time on the spreadsheet's zero date), numbers in [0, 1) (fraction of a day, the
    spreadsheet's own time value) and ``hh:mm[:ss[.fff]]`` text.
    """
    out = _base(col, n)
    if col.kind == "datetime":
        ms, present = _datetime_values_ms(col.values)
        out.ms[present] = np.mod(ms[present], MS_PER_DAY)
        out.ok[present] = True
        out.empty[present] = False
    elif col.kind == "number":
        x = col.values.to_numpy(dtype=float)
        present = ~np.isnan(x)
        good = present & (x >= 0) & (x < 1)
        out.ms[good] = np.rint(x[good] * MS_PER_DAY).astype(np.int64)
        out.ok[good] = True
        out.empty[present] = False
        pos = np.flatnonzero(present & ~good)
        out.fail(pos, "the number is not a time of day (a fraction of a day from 0 to 1) — "
                 "enter a time such as 22:00:00", np.array([repr(v) for v in x[pos]], object))
    if col.kind != "text" and not col.text_cells:
        return out  # typed cells only: no text to parse
    texts = _text_series(col, n)
    has_text = texts.notna().to_numpy()
    if has_text.any():
        pos = np.flatnonzero(has_text)
        sub = texts.iloc[pos].reset_index(drop=True).astype(str)
        parts = sub.str.extract(_ISO_TIME)
        matched = parts["h"].notna().to_numpy()
        ms, ok = _hms_ms(parts)
        ok &= matched
        out.ms[pos[ok]] = ms[ok]
        out.ok[pos[ok]] = True
        out.empty[pos[ok]] = False
        out.fail(pos[~ok], "not a time of day — write hh:mm:ss, e.g. 22:00:00",
                 sub[~ok].to_numpy(dtype=object))
    return out


def combine_date_time(date: NaiveTimes, tod: NaiveTimes) -> NaiveTimes:
    """Date + time-of-day columns to one naive date-time; a problem in either is kept."""
    n = date.ms.shape[0]
    out = NaiveTimes.blank(n)
    ok = date.ok & tod.ok
    out.ms[ok] = date.ms[ok] + tod.ms[ok]
    out.ok = ok
    out.empty = date.empty & tod.empty
    for part, other in ((date, tod), (tod, date)):
        pos = np.flatnonzero(part.flagged)
        out.fail(pos, part.problem[pos], part.raw[pos])
        # half given: the other cell is empty
        miss = np.flatnonzero(part.ok & other.empty & ~other.flagged)
        out.fail(miss, "the date or the time is missing — fill both the Date and the Time "
                 "cell", None)
    return out


def format_naive_ms(ms: np.ndarray) -> np.ndarray:
    """Naive ms to ``2026-07-03 22:00:00`` text (milliseconds shown only when not zero)."""
    text = [str(v).replace("T", " ") for v in ms.astype("datetime64[ms]")]
    return np.array([t[:-4] if t.endswith(".000") else t for t in text], dtype=object)


# --------------------------------------------------------------------------------------
# Naive -> UTC
# --------------------------------------------------------------------------------------


@dataclass
class Localised:
    """UTC instants of naive times.

    ``utc_ms`` / ``offset_s`` are valid where ``placed``; ``nonexistent`` marks wall-clock
    times skipped by a spring change; ``ambiguous_unresolved`` marks repeated-hour times
    that could not be placed by order (the earlier offset was used); ``notes`` are
    ``(date, text)`` pairs describing each DST rule applied.
    """

    utc_ms: np.ndarray
    offset_s: np.ndarray
    placed: np.ndarray
    nonexistent: np.ndarray
    ambiguous_unresolved: np.ndarray
    notes: list[str] = field(default_factory=list)


def localise(naive: NaiveTimes, clock: Clock) -> Localised:
    """Convert naive wall-clock times to UTC for ``clock`` (vectorised).

    Parameters
    ----------
    naive : NaiveTimes
        In sheet order: the order of the rows decides the repeated autumn hour.
    clock : Clock

    Returns
    -------
    Localised
    """
    n = naive.ms.shape[0]
    ok = naive.ok.copy()
    utc = np.full(n, _NAT, np.int64)
    off = np.zeros(n, np.int64)
    nonexistent = np.zeros(n, bool)
    unresolved = np.zeros(n, bool)
    notes: list[str] = []
    explicit = ok & naive.has_offset
    clocked = ok & ~naive.has_offset
    if clock.kind in ("utc", "fixed"):
        off[clocked] = clock.offset_s
        utc[clocked] = naive.ms[clocked] - clock.offset_s * MS_PER_S
    elif clocked.any():
        assert clock.zone is not None
        pos = np.flatnonzero(clocked)
        wall = naive.ms[pos]
        idx = pd.DatetimeIndex(wall.astype("datetime64[ms]"))
        ones = np.ones(pos.size, bool)
        early = idx.tz_localize(clock.zone, ambiguous=ones, nonexistent="NaT").as_unit(
            "ms").asi8
        late = idx.tz_localize(clock.zone, ambiguous=~ones, nonexistent="NaT").as_unit(
            "ms").asi8
        gone = early == _NAT
        amb = ~gone & (early != late)
        second = np.zeros(pos.size, bool)
        if amb.any():
            second, bad = _order_passes(wall, amb)
            unresolved[pos[bad]] = True
            for d in np.unique(wall[amb] // MS_PER_DAY):
                in_day = amb & (wall // MS_PER_DAY == d) & ~bad
                if in_day.any():
                    notes.append(
                        f"{_day(d)}: the repeated hour after the clocks went back was placed "
                        "by the order of the rows (first pass summer time, second pass "
                        "standard time); that local day has 25 hours")
        chosen = np.where(second, late, early)
        utc[pos] = chosen
        off[pos] = (wall - chosen) // MS_PER_S
        nonexistent[pos[gone]] = True
        ok[pos[gone]] = False
        notes.extend(_forward_notes(clock.zone, wall[~gone], chosen[~gone]))
    off[explicit] = naive.offset_s[explicit]
    utc[explicit] = naive.ms[explicit] - naive.offset_s[explicit] * MS_PER_S
    return Localised(utc, off.astype(np.int32), ok, nonexistent, unresolved, notes)


def _day(day_number: np.integer | int) -> str:
    return str(np.datetime64(int(day_number), "D"))


def _order_passes(wall: np.ndarray, amb: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Decide first/second pass of repeated-hour times by row order.

    Per local day, the ambiguous times in sheet order must go forward, jump back (or repeat)
    exactly once and go forward again. Returns (second-pass mask, cannot-place mask) over ``wall``.
    """
    second = np.zeros(wall.size, bool)
    bad = np.zeros(wall.size, bool)
    where = np.flatnonzero(amb)
    t = pd.Series(wall[where])
    day = pd.Series(wall[where] // MS_PER_DAY)
    # a time not later than the one before it starts the second pass; equal counts too, so
    # hourly logs (02:00 written twice) are placed as well as 10-min logs (02:50 -> 02:00)
    back = (t <= t.groupby(day).shift()).astype(np.int64)
    jumps = back.groupby(day).transform("sum").to_numpy()
    after = back.groupby(day).cumsum().to_numpy() > 0
    good = jumps == 1
    second[where] = after & good
    bad[where] = ~good
    return second, bad


def _forward_notes(zone: str, wall: np.ndarray, utc: np.ndarray) -> list[str]:
    """Describe spring changes (offset increases) crossed by the data, in UTC order."""
    if wall.size < 2:
        return []
    order = np.argsort(utc, kind="stable")
    off = (wall[order] - utc[order]) // MS_PER_S
    up = np.flatnonzero(off[1:] > off[:-1]) + 1
    return [f"{_day(wall[order][i] // MS_PER_DAY)}: the clocks went forward "
            f"({format_offset(int(off[i - 1]))} to {format_offset(int(off[i]))} in {zone}); "
            "the skipped hour is not a gap and that local day has 23 hours"
            for i in up]


# --------------------------------------------------------------------------------------
# Durations
# --------------------------------------------------------------------------------------


def modal_step_ms(instants_ms: np.ndarray) -> int | None:
    """Most common positive step between sorted distinct instants (ties: the shortest).

    Parameters
    ----------
    instants_ms : numpy.ndarray of int64
        Instants in any order. [ms]

    Returns
    -------
    int or None
        The modal step [ms]; None with fewer than two distinct instants.
    """
    steps = np.diff(instants_ms)
    if steps.size and steps.min() < 0:  # not in order: sort (the usual log is in order)
        steps = np.diff(np.sort(instants_ms))
    steps = steps[steps > 0]
    if steps.size == 0:
        return None
    # A regular log has one step for most of its rows: when the median step holds more than
    # half of them it is the mode (no tie possible), found without sorting 10^6 values.
    median = np.partition(steps, steps.size // 2)[steps.size // 2]
    if 2 * np.count_nonzero(steps == median) > steps.size:
        return int(median)
    # sort-based (np.unique's hash path is several times slower on 10^6 int64 values)
    steps = np.sort(steps)
    starts = np.flatnonzero(np.r_[True, steps[1:] != steps[:-1]])
    counts = np.diff(np.r_[starts, steps.size])
    return int(steps[starts[np.argmax(counts)]])


def durations_from_seconds(values: RawColumn | None, n: int) -> tuple[np.ndarray, np.ndarray,
                                                                       np.ndarray]:
    """Duration (s) column to whole ms.

    Returns
    -------
    duration_ms : numpy.ndarray of int64
        0 where not valid. [ms]
    valid : numpy.ndarray of bool
        A finite number > 0 was given.
    given : numpy.ndarray of bool
        The cell is not empty (text and error cells count as given).
    """
    if values is None:
        return np.zeros(n, np.int64), np.zeros(n, bool), np.zeros(n, bool)
    x = pd.to_numeric(values.values, errors="coerce").to_numpy(dtype=float) \
        if values.kind != "number" else values.values.to_numpy(dtype=float)
    given = ~np.isnan(x)
    for cells in (values.text_cells, values.error_cells):
        if cells:
            given[np.fromiter(cells, np.int64)] = True
    if values.formula_without_value:
        given[np.fromiter(values.formula_without_value, np.int64)] = True
    with np.errstate(invalid="ignore"):
        valid = np.isfinite(x) & (x > 0) & (x <= MAX_INTERVAL_DURATION_S)
    ms = np.zeros(n, np.int64)
    ms[valid] = np.rint(x[valid] * MS_PER_S).astype(np.int64)
    valid &= ms > 0
    return ms, valid, given


def report_time_problems(
    collector: FindingCollector,
    sheet: str,
    first_row: int,
    letter: str | None,
    naive: NaiveTimes,
    loc: Localised,
    clock: Clock,
    header: str | None = None,
) -> None:
    """Add ``timestamp-invalid``, ``timestamp-nonexistent`` and ``timestamp-ambiguous``.

    A problem shared by most of the column (every timestamp written day/month/year) is
    reported once, as ``timestamp-column-unreadable``, naming the column by its letter
    and ``header`` text; per-cell findings stay for the scattered rest.
    """
    bad = np.flatnonzero(naive.flagged)
    if bad.size:
        bad = _report_column_wide(collector, sheet, first_row, letter, naive, bad, header)
    if bad.size:
        msgs = [f"{_quote(naive.raw[i])}{naive.problem[i]}" for i in bad[:collector.max_per_code]]
        collector.add_rows("timestamp-invalid", Severity.ERROR, sheet, bad + first_row,
                           letter, msgs)
    gone = np.flatnonzero(loc.nonexistent)
    if gone.size:
        txt = format_naive_ms(naive.ms[gone[:collector.max_per_code]])
        collector.add_rows(
            "timestamp-nonexistent", Severity.ERROR, sheet, gone + first_row, letter,
            [f"{t} does not exist in {clock.label}: the clocks went forward "
             "over it — check the meter's clock; the reading cannot be placed in time"
             for t in txt])
    amb = np.flatnonzero(loc.ambiguous_unresolved)
    if amb.size:
        txt = format_naive_ms(naive.ms[amb[:collector.max_per_code]])
        collector.add_rows(
            "timestamp-ambiguous", Severity.WARNING, sheet, amb + first_row, letter,
            [f"{t} occurs twice in {clock.label} (the clocks went back) and "
             "the order of the rows does not tell which pass it is; the earlier (summer "
             "time) offset was used — check the order of the rows" for t in txt])
    for note in loc.notes:
        collector.add(Finding("dst-policy-applied", Severity.INFO, note, sheet))


def _quote(raw: object) -> str:
    return "" if raw is None else f"'{str(raw)[:_MAX_QUOTE]}': "


#: A timestamp problem is reported once for the column when it affects at least this many
#: rows and this share of the column's non-empty cells. Own choice.
COLUMN_WIDE_MIN_ROWS = 10
COLUMN_WIDE_MIN_FRACTION = 0.5
_DAY_FIRST = re.compile(r"^\s*\d{1,2}[./-]\d{1,2}[./-]\d{2,4}\b")


def _report_column_wide(collector: FindingCollector, sheet: str, first_row: int,
                        letter: str | None, naive: NaiveTimes, bad: np.ndarray,
                        header: str | None = None) -> np.ndarray:
    """Report the column's dominant timestamp problem once; return the positions left over.

    The rows stay unplaced (left out) all the same; only the reporting is folded into one
    finding naming the column, how many rows, an example and the fix.
    """
    filled = int(np.count_nonzero(~naive.empty))
    if bad.size < COLUMN_WIDE_MIN_ROWS or bad.size < COLUMN_WIDE_MIN_FRACTION * filled:
        return bad
    reasons = pd.Series(naive.problem[bad], dtype=object).astype(str)
    top = reasons.value_counts()
    reason, count = str(top.index[0]), int(top.iloc[0])
    if count < COLUMN_WIDE_MIN_ROWS or count < COLUMN_WIDE_MIN_FRACTION * filled:
        return bad
    same = bad[(reasons == reason).to_numpy()]
    raw = pd.Series(naive.raw[same], dtype=object).astype(str)
    day_first = raw.str.match(_DAY_FIRST).to_numpy()
    example = f"'{str(naive.raw[same[0]])[:_MAX_QUOTE]}' in row {same[0] + first_row}"
    where = f"column {letter}" if letter else "the time column"
    if header:
        where += f" ('{header[:_MAX_QUOTE]}')"
    if day_first.mean() >= COLUMN_WIDE_MIN_FRACTION:
        why = ("they are written day/month/year (or month/day/year), an order that cannot be "
               "told apart for days 1-12 and is never guessed — format the column as date-time "
               "cells, or write ISO 8601 text such as 2026-07-03 22:00:00, and run again")
    else:
        why = reason
    collector.add(Finding(
        "timestamp-column-unreadable", Severity.ERROR,
        f"{where}: {count:,} of {filled:,} timestamps cannot be read (e.g. {example}): {why}; "
        "these rows are left out", sheet, max(first_row - 1, 1), letter))
    return np.setdiff1d(bad, same, assume_unique=True)
