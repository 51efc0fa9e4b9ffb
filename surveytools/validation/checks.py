"""Vectorised row checks: levels, flags, timestamps, calibration, weather, exclusions.

Each check works on whole columns with numpy masks (no Python loop over readings) and
reports through :meth:`FindingCollector.add_rows` with a stable code, located at
(sheet, spreadsheet row, column letter). Checks return masks; :mod:`.build` turns them
into :class:`~surveytools.survey.Exclusion` values.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from surveytools.constants import (
    LEVEL_ORDER_TOLERANCE_DB,
    MAX_GRID_INTERVALS,
    SECONDS_PER_HOUR,
    STRAY_READINGS_GAP_DAYS,
    STRAY_READINGS_MAX_FRACTION,
)
from surveytools.inputs.raw import RawColumn
from surveytools.settings import Calibration
from surveytools.validation.findings import Finding, FindingCollector, Severity

_MARKER = re.compile(r"^\s*(ovl|over|overload)\s*$", re.IGNORECASE)
_DECIMAL_COMMA = re.compile(r"^\s*[+-]?\d+,\d+\s*$")
_PLAIN_NUMBER = re.compile(r"^\s*[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?\s*$")
_TRUE = frozenset({"yes", "y", "true", "1", "x", "on"})
_FALSE = frozenset({"no", "n", "false", "0", "off", "-"})
_MS_PER_S = 1000
MS_PER_DAY = 86_400_000

#: Level columns checked for their order, highest first (LAFmax >= LAeq >= LAF90 >= LAFmin).
LEVEL_ORDER = ("LAFmax", "LAeq", "LAF90", "LAFmin")


@dataclass(frozen=True)
class Where:
    """A table's location: sheet name and the spreadsheet row of data position 0."""

    sheet: str
    first_row: int


def _positions(cells: Mapping[int, object] | set[int]) -> np.ndarray:
    return np.fromiter(sorted(cells), np.int64, count=len(cells))


def _clip(text: str, limit: int = 60) -> str:
    return text if len(text) <= limit else text[: limit - 1] + "…"


def cell_empty(col: RawColumn, n: int) -> np.ndarray:
    """Return True where a column's cell is empty (no value, text, error or formula)."""
    empty = np.array(pd.isna(col.values), dtype=bool)
    if col.kind == "text":
        blank = col.values.astype(object).str.strip().eq("")
        empty = empty | blank.fillna(False).to_numpy(dtype=bool)
    for cells in (col.text_cells, col.error_cells, col.formula_without_value):
        if cells:
            empty[_positions(cells)] = False
    return empty


# --------------------------------------------------------------------------------------
# Numbers (levels, weather values)
# --------------------------------------------------------------------------------------


@dataclass
class Numbers:
    """A number column read strictly: ``values`` (NaN where empty or rejected) and masks."""

    values: np.ndarray
    rejected: np.ndarray
    marker: np.ndarray


def read_numbers(
    col: RawColumn,
    n: int,
    where: Where,
    collector: FindingCollector,
    *,
    what: str,
    unit: str,
    code_prefix: str,
    markers: bool = False,
) -> Numbers:
    """Read a number column, reporting text, error, formula and non-finite cells.

    Parameters
    ----------
    col : RawColumn
    n : int
        Number of data positions.
    where : Where
    collector : FindingCollector
    what, unit : str
        Words for messages: ``"a level"``, ``"dB"``.
    code_prefix : str
        ``"level"`` gives ``level-not-a-number`` / ``level-not-finite``.
    markers : bool
        Treat overload markers (``OVL``, ``OVER``, ``overload``) as a flag, not an error.

    Returns
    -------
    Numbers
    """
    texts: dict[int, str] = dict(col.text_cells)
    if col.kind == "number":
        x = col.values.to_numpy(dtype=float, na_value=np.nan).copy()
    else:
        x = np.full(n, np.nan)
        if col.kind == "text":
            s = col.values.astype(object)
            present = s.str.strip().ne("").fillna(False).to_numpy(dtype=bool) & \
                pd.notna(s).to_numpy(dtype=bool)
            pos = np.flatnonzero(present)
            sub = s.iloc[pos].astype(str)
            plain = sub.str.fullmatch(_PLAIN_NUMBER).to_numpy(dtype=bool)
            x[pos[plain]] = sub[plain].astype(float).to_numpy()
            texts.update(zip(pos[~plain].tolist(), sub[~plain].tolist(), strict=True))
        elif col.kind == "bool":
            present = pd.notna(col.values).to_numpy(dtype=bool)
            pos = np.flatnonzero(present)
            texts.update((int(i), str(col.values.iloc[i])) for i in pos)
    rejected = np.zeros(n, bool)
    marker = np.zeros(n, bool)
    rows0 = where.first_row
    if texts:
        pos = np.fromiter(texts, np.int64, count=len(texts))
        order = np.argsort(pos)
        pos = pos[order]
        t = pd.Series(list(texts.values()), dtype=object).iloc[order].astype(str)
        is_marker = t.str.fullmatch(_MARKER).to_numpy(dtype=bool) if markers else \
            np.zeros(pos.size, bool)
        comma = t.str.fullmatch(_DECIMAL_COMMA).to_numpy(dtype=bool)
        x[pos] = np.nan
        rejected[pos[~is_marker]] = True
        marker[pos[is_marker]] = True
        if is_marker.any():
            tm = t[is_marker].iloc[:collector.room(f"{code_prefix}-overload-marker")].tolist()
            collector.add_rows(
                f"{code_prefix}-overload-marker", Severity.WARNING, where.sheet,
                pos[is_marker] + rows0, col.letter,
                [f"'{_clip(v)}' marks an overload: the row is flagged as overloaded and "
                 "the cell counts as empty" for v in tm])
        bad = ~is_marker
        filled = int(np.count_nonzero(~np.isnan(x))) + pos.size
        if bad.any() and _column_wide(int(np.count_nonzero(bad)), filled):
            _report_column_not_numbers(collector, where, col, pos[bad] + rows0, t[bad],
                                       comma[bad], filled, what, unit)
            bad = np.zeros_like(bad)
        if bad.any():
            room = collector.room(f"{code_prefix}-not-a-number")
            tb = t[bad].iloc[:room].tolist()
            cb = comma[bad][:room]
            msgs = [
                (f"'{_clip(v)}' is not {what} in {unit} — a decimal comma was found: write "
                 f"{v.strip().replace(',', '.')} (decimal point) or set the column's cells "
                 "as numbers") if c else
                (f"'{_clip(v)}' is not {what} in {unit} — enter a number or leave the cell "
                 "empty") for v, c in zip(tb, cb, strict=True)]
            collector.add_rows(f"{code_prefix}-not-a-number", Severity.ERROR, where.sheet,
                               pos[bad] + rows0, col.letter, msgs)
    if col.error_cells:
        pos = _positions(col.error_cells)
        x[pos] = np.nan
        rejected[pos] = True
        collector.add_rows(
            "cell-error-value", Severity.ERROR, where.sheet, pos + rows0, col.letter,
            [f"the cell holds the spreadsheet error {col.error_cells[int(i)]} instead of "
             f"{what} — fix the formula or enter the value" for i in pos])
    if col.formula_without_value:
        pos = _positions(col.formula_without_value)
        x[pos] = np.nan
        rejected[pos] = True
        collector.add_rows(
            "formula-without-value", Severity.WARNING, where.sheet, pos + rows0, col.letter,
            "the cell holds a formula but no stored result, so its value is unknown — open "
            "and save the file in a spreadsheet program, or enter the value")
    inf = np.isinf(x)
    if inf.any():
        pos = np.flatnonzero(inf)
        collector.add_rows(
            f"{code_prefix}-not-finite", Severity.ERROR, where.sheet, pos + rows0,
            col.letter, [f"{v} is not {what} — enter a finite number" for v in x[pos]])
        x[pos] = np.nan
        rejected[pos] = True
    return Numbers(x, rejected, marker)


#: A problem is reported once for a column when it affects at least this many cells and
#: this share of the column's filled cells (same rule as timestamps, see
#: ``timebase.COLUMN_WIDE_MIN_ROWS``). Own choice.
COLUMN_WIDE_MIN_CELLS = 10
COLUMN_WIDE_MIN_FRACTION = 0.5
_NUMBER_WITH_UNIT = re.compile(r"^\s*[+-]?\d+(?:[.,]\d+)?\s*[A-Za-z%()/]+\s*$")


def _column_wide(count: int, filled: int) -> bool:
    return count >= COLUMN_WIDE_MIN_CELLS and count >= COLUMN_WIDE_MIN_FRACTION * filled


def _report_column_not_numbers(collector: FindingCollector, where: Where, col: RawColumn,
                               rows: np.ndarray, texts: pd.Series, comma: np.ndarray,
                               filled: int, what: str, unit: str) -> None:
    """Report once that most of a number column is text, naming the likely cause and fix."""
    count = rows.size
    example = f"'{_clip(str(texts.iloc[0]))}' in row {rows[0]}"
    if comma.mean() >= COLUMN_WIDE_MIN_FRACTION:
        fix = ("the column uses decimal commas — write decimal points, or export with '.' "
               "as the decimal separator")
    elif texts.str.fullmatch(_NUMBER_WITH_UNIT).mean() >= COLUMN_WIDE_MIN_FRACTION:
        fix = (f"the unit is written in every cell — keep only the number (the unit {unit} "
               "belongs in the header)")
    else:
        fix = f"enter {what} in {unit} as a number, or leave the cell empty"
    header = f" ({col.header})" if col.header else ""
    collector.add(Finding(
        "column-not-numbers", Severity.ERROR,
        f"column {col.letter}{header}: {count:,} of {filled:,} cells are not {what} in {unit} "
        f"(e.g. {example}): {fix}; these cells count as empty", where.sheet,
        max(where.first_row - 1, 1), col.letter))


def check_level_range(
    values: np.ndarray, col: RawColumn, where: Where, collector: FindingCollector,
    level_min_db: float, level_max_db: float,
) -> np.ndarray:
    """Report levels outside the plausible range and blank them; return the mask."""
    with np.errstate(invalid="ignore"):
        out = (values < level_min_db) | (values > level_max_db)
    if out.any():
        pos = np.flatnonzero(out)
        collector.add_rows(
            "level-out-of-range", Severity.ERROR, where.sheet, pos + where.first_row,
            col.letter,
            [f"{v:g} dB is outside the plausible range {level_min_db:g}-{level_max_db:g} dB "
             "— check the value (or the range in the settings [exclusions])"
             for v in values[pos[:collector.max_per_code]]])
        values[pos] = np.nan
    return out


def check_level_order(
    levels: Mapping[str, np.ndarray], letters: Mapping[str, str], where: Where,
    collector: FindingCollector, rows: np.ndarray,
) -> None:
    """Warn where LAFmax >= LAeq >= LAF90 >= LAFmin does not hold (0.05 dB tolerance).

    ``rows`` are the spreadsheet rows of the positions in ``levels``; one finding per row,
    for the first pair out of order, located at the pair's higher-expected column.
    """
    present = [c for c in LEVEL_ORDER if c in levels]
    pairs = [(a, b) for i, a in enumerate(present) for b in present[i + 1:]]
    if not pairs or rows.size == 0:
        return
    tol = LEVEL_ORDER_TOLERANCE_DB
    with np.errstate(invalid="ignore"):
        bad = np.stack([levels[a] < levels[b] - tol for a, b in pairs])
    hit = bad.any(axis=0)
    if not hit.any():
        return
    first = np.argmax(bad, axis=0)
    for k, (a, b) in enumerate(pairs):
        sel = np.flatnonzero(hit & (first == k))
        if sel.size:
            collector.add_rows(
                "level-order", Severity.WARNING, where.sheet, rows[sel], letters[a],
                [f"{a} {levels[a][i]:g} dB is below {b} {levels[b][i]:g} dB; expected "
                 f"{' >= '.join(present)} — check the columns are not swapped"
                 for i in sel[:collector.max_per_code]])


# --------------------------------------------------------------------------------------
# Yes/no flags
# --------------------------------------------------------------------------------------


def read_flags(col: RawColumn, n: int, where: Where, collector: FindingCollector) -> pd.Series:
    """Read a yes/no column (yes/no, y/n, 1/0, true/false, ``x``) as nullable booleans.

    Unknown text gives a ``flag-not-yes-no`` warning and NA.
    """
    value = np.zeros(n, bool)
    known = np.zeros(n, bool)
    if col.kind == "bool":
        b = col.values.astype("boolean")
        known = np.array(b.notna(), dtype=bool)
        value = np.array(b.fillna(False), dtype=bool)
        texts = pd.Series(dict(col.text_cells), dtype=object)
    elif col.kind == "number":
        x = col.values.to_numpy(dtype=float, na_value=np.nan)
        ok = (x == 0) | (x == 1)
        known[ok] = True
        value[ok] = x[ok] == 1
        other = np.flatnonzero(~np.isnan(x) & ~ok)
        texts = pd.concat([pd.Series(dict(col.text_cells), dtype=object),
                           pd.Series([f"{v:g}" for v in x[other]], index=other, dtype=object)])
    else:
        s = col.values.astype(object) if col.kind == "text" else pd.Series([None] * n,
                                                                            dtype=object)
        texts = pd.concat([s[s.notna()], pd.Series(dict(col.text_cells), dtype=object)])
    if len(texts):
        texts = texts.sort_index()
        pos = texts.index.to_numpy(dtype=np.int64)
        low = texts.astype(str).str.strip().str.lower()
        yes = low.isin(_TRUE).to_numpy(dtype=bool)
        no = low.isin(_FALSE).to_numpy(dtype=bool)
        blank = (low == "").to_numpy(dtype=bool)
        value[pos[yes]] = True
        value[pos[no]] = False
        known[pos[yes | no]] = True
        unknown = ~(yes | no | blank)
        if unknown.any():
            collector.add_rows(
                "flag-not-yes-no", Severity.WARNING, where.sheet, pos[unknown] + where.first_row,
                col.letter,
                [f"'{_clip(v)}' is not yes or no — write yes/no (or 1/0, true/false, x for "
                 "yes); the cell is treated as not stated"
                 for v in texts[unknown].iloc[:collector.room("flag-not-yes-no")].tolist()])
    if col.error_cells:
        pos = _positions(col.error_cells)
        collector.add_rows("cell-error-value", Severity.ERROR, where.sheet,
                           pos + where.first_row, col.letter,
                           "the cell holds a spreadsheet error instead of yes/no — fix it")
    return pd.Series(pd.arrays.BooleanArray(value, ~known))


def read_text(col: RawColumn, n: int) -> np.ndarray:
    """Return the text of a note column as an object array (``None`` where empty)."""
    s = col.values.astype(object)
    present = pd.notna(s).to_numpy(dtype=bool)
    if col.kind != "text":
        as_text = np.array(s.astype(str).to_numpy(dtype=object), dtype=object)
        as_text[~present] = None
        s = pd.Series(as_text, dtype="object")
    if col.text_cells:
        s = s.copy()
        s.iloc[list(col.text_cells)] = list(col.text_cells.values())
    s = s.where(s.notna(), None)
    blank = s.str.strip().eq("").fillna(True).to_numpy(dtype=bool)
    arr = np.array(s.to_numpy(dtype=object), dtype=object)
    arr[blank] = None
    return arr


# --------------------------------------------------------------------------------------
# Timestamps of sorted readings
# --------------------------------------------------------------------------------------


def _local_text(utc_ms: np.ndarray, offset_s: np.ndarray) -> list[str]:
    """Local clock text with its offset: ``2026-10-25 02:50:00+02:00`` (ms only if set)."""
    local_ms = utc_ms + offset_s.astype(np.int64) * _MS_PER_S
    out = []
    for ms, off in zip(local_ms.tolist(), offset_s.tolist(), strict=True):
        t = str(np.datetime64(ms, "ms")).replace("T", " ")
        t = t[:-4] if t.endswith(".000") else t
        sign = "+" if off >= 0 else "-"
        m = abs(int(off)) // 60
        out.append(f"{t}{sign}{m // 60:02d}:{m % 60:02d}")
    return out


def _span_text(ms: int) -> str:
    s = ms / _MS_PER_S
    if s >= SECONDS_PER_HOUR:
        return f"{s / SECONDS_PER_HOUR:g} h"
    return f"{s / 60:g} min" if s >= 60 else f"{s:g} s"


def check_stray_times(
    rows: np.ndarray, start_ms: np.ndarray, offset_s: np.ndarray, placed: np.ndarray,
    letter: str | None, where: Where, collector: FindingCollector,
) -> np.ndarray:
    """Return the placed readings far outside the survey's span, reported (``timestamp-stray``).

    Readings are split into groups wherever more than ``STRAY_READINGS_GAP_DAYS`` pass
    without one; a group other than the largest that holds at most
    ``STRAY_READINGS_MAX_FRACTION`` of the readings is stray (a wrong year or month typed
    in a few rows). Its rows are left out, so no grid is sized by the span between a
    stray time and the survey. Groups of similar size (a survey resumed after a long
    break) are all kept.
    """
    stray = np.zeros(start_ms.size, bool)
    pos = np.flatnonzero(placed)
    if pos.size < 2:
        return stray
    order = pos[np.argsort(start_ms[pos], kind="stable")]
    t = start_ms[order]
    breaks = np.diff(t) > STRAY_READINGS_GAP_DAYS * MS_PER_DAY
    if not breaks.any():
        return stray
    group = np.r_[0, np.cumsum(breaks)]
    counts = np.bincount(group)
    main = int(np.argmax(counts))
    small = counts <= STRAY_READINGS_MAX_FRACTION * pos.size
    small[main] = False
    if not small.any():
        return stray
    stray[order[small[group]]] = True
    first, last = t[group == main][[0, -1]]
    span = _local_text(np.array([first, last]), offset_s[order[group == main]][[0, -1]])
    hit = np.flatnonzero(stray)
    shown = hit[:collector.room("timestamp-stray")]
    texts = _local_text(start_ms[shown], offset_s[shown])
    away = np.minimum(np.abs(start_ms[shown] - first), np.abs(start_ms[shown] - last))
    collector.add_rows(
        "timestamp-stray", Severity.ERROR, where.sheet, rows[hit], letter,
        [f"{text} is {a / MS_PER_DAY:,.0f} days away from the other readings ({span[0]} to "
         f"{span[1]}) — check the date (a wrong year or month?); the row is left out"
         for text, a in zip(texts, away, strict=True)])
    return stray


@dataclass
class TimeChecks:
    """Masks over sorted readings: later duplicates, later overlapping intervals."""

    duplicate: np.ndarray
    overlap: np.ndarray


def check_time_order(
    rows_sheet_order: np.ndarray, start_sheet_order: np.ndarray, letter: str | None,
    where: Where, collector: FindingCollector,
) -> None:
    """Warn ``timestamp-out-of-order`` where a reading starts before the row above it."""
    if start_sheet_order.size < 2:
        return
    back = np.flatnonzero(start_sheet_order[1:] < start_sheet_order[:-1]) + 1
    if back.size:
        collector.add_rows(
            "timestamp-out-of-order", Severity.WARNING, where.sheet, rows_sheet_order[back],
            letter,
            [f"this reading starts before the one in row {rows_sheet_order[i - 1]} above it; "
             "readings are used in time order — check the rows were not moved"
             for i in back[:collector.max_per_code]])


def check_sorted_times(
    rows: np.ndarray, start_ms: np.ndarray, duration_ms: np.ndarray, offset_s: np.ndarray,
    letter: str | None, where: Where, collector: FindingCollector, gap_factor: float,
    duplicate_hint: str | None = None,
) -> TimeChecks:
    """Duplicates, overlaps and gaps of readings sorted by start (ties in sheet order).

    Parameters
    ----------
    rows, start_ms, duration_ms, offset_s : numpy.ndarray
        Sorted readings: spreadsheet rows, UTC starts [ms], lengths [ms], UTC offsets [s].
    letter : str or None
        Timestamp column letter.
    where : Where
    collector : FindingCollector
    gap_factor : float
        A gap is reported when the step to the next start exceeds this multiple of the
        previous interval's length.
    duplicate_hint : str, optional
        The fix a duplicate message gives instead of "delete one of the two rows" (a
        local clock read without its time zone: a repeated autumn hour is not a copy).

    Returns
    -------
    TimeChecks
    """
    n = start_ms.size
    dup = np.zeros(n, bool)
    overlap = np.zeros(n, bool)
    if n < 2:
        return TimeChecks(dup, overlap)
    dup[1:] = start_ms[1:] == start_ms[:-1]
    d = np.flatnonzero(dup)
    if d.size:
        first_of = np.maximum.accumulate(np.where(dup, 0, np.arange(n)))
        collector.add_rows(
            "timestamp-duplicate", Severity.ERROR, where.sheet, rows[d], letter,
            [f"row {rows[i]} has the same start ({t}) as row {rows[first_of[i]]}; row "
             f"{rows[i]} is left out as a duplicate — "
             f"{duplicate_hint or 'delete one of the two rows'}"
             for i, t in zip(d, _local_text(start_ms[d[:collector.max_per_code]],
                                            offset_s[d[:collector.max_per_code]]),
                             strict=False)])
    if d.size:
        keep = np.flatnonzero(~dup)
        s = start_ms[keep]
        kept_duration = duration_ms[keep]
    else:  # the usual case: every reading kept, no copies
        keep = np.arange(n)
        s = start_ms
        kept_duration = duration_ms
    e = s + kept_duration
    runmax = np.maximum.accumulate(e)
    ov = np.zeros(keep.size, bool)
    ov[1:] = s[1:] < runmax[:-1]
    o = np.flatnonzero(ov)
    if o.size:
        owner = np.maximum.accumulate(np.where(e == runmax, np.arange(keep.size), 0))
        overlap[keep[o]] = True
        prev = keep[owner[o - 1]]
        collector.add_rows(
            "interval-overlap", Severity.WARNING, where.sheet, rows[keep[o]], letter,
            [f"this interval starts before the interval of row {rows[p]} ends "
             f"({_span_text(int(runmax[k - 1] - s[k]))} overlap); it is left out — check the "
             "Duration column and the timestamps"
             for k, p in zip(o[:collector.max_per_code], prev[:collector.max_per_code],
                             strict=True)])
    step = s[1:] - s[:-1]
    prev_len = kept_duration[:-1]
    gap = np.flatnonzero(step > gap_factor * prev_len) + 1
    if gap.size:
        g = gap[:collector.max_per_code]
        ends = s[g - 1] + prev_len[g - 1]
        t_from = _local_text(ends, offset_s[keep[g - 1]])
        t_to = _local_text(s[g], offset_s[keep[g]])
        collector.add_rows(
            "gap", Severity.INFO, where.sheet, rows[keep[gap]], letter,
            [f"no readings from {a} to {b} ({_span_text(int(s[k] - end))} without data)"
             for a, b, k, end in zip(t_from, t_to, g, ends, strict=True)])
    return TimeChecks(dup, overlap)


# --------------------------------------------------------------------------------------
# Intervals against spans (weather, technician exclusions)
# --------------------------------------------------------------------------------------


def overlaps_any(
    start_ms: np.ndarray, end_ms: np.ndarray, span_start_ms: np.ndarray,
    span_end_ms: np.ndarray,
) -> np.ndarray:
    """Return True where [start, end) overlaps any span [span_start, span_end).

    Vectorised with :func:`numpy.searchsorted`; spans may be in any order and overlap.

    Parameters
    ----------
    start_ms, end_ms : numpy.ndarray of int64
        Readings. [ms]
    span_start_ms, span_end_ms : numpy.ndarray of int64
        Spans. [ms]
    """
    if span_start_ms.size == 0 or start_ms.size == 0:
        return np.zeros(start_ms.size, bool)
    order = np.argsort(span_start_ms, kind="stable")
    ss = span_start_ms[order]
    reach = np.maximum.accumulate(span_end_ms[order])
    j = np.searchsorted(ss, end_ms, side="left") - 1
    return (j >= 0) & (reach[np.maximum(j, 0)] > start_ms)


def weather_masks(
    start_ms: np.ndarray, end_ms: np.ndarray, w_start_ms: np.ndarray, w_end_ms: np.ndarray,
    wind_m_s: np.ndarray, rain_mm: np.ndarray, wind_max_m_s: float, rain_max_mm: float,
    rain_settle_s: float,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Return (wind, rain, rain-settle) masks over readings.

    A reading is excluded for wind or rain when its interval overlaps a weather interval
    whose value exceeds the limit; for rain-settle when it overlaps the ``rain_settle_s``
    after a wet interval ends (and is not itself in rain). NaN weather values exclude
    nothing.
    """
    with np.errstate(invalid="ignore"):
        windy = wind_m_s > wind_max_m_s
        wet = rain_mm > rain_max_mm
    wind = overlaps_any(start_ms, end_ms, w_start_ms[windy], w_end_ms[windy])
    rain = overlaps_any(start_ms, end_ms, w_start_ms[wet], w_end_ms[wet])
    settle_ms = np.int64(round(rain_settle_s * _MS_PER_S))
    ends = w_end_ms[wet]
    settle = overlaps_any(start_ms, end_ms, ends, ends + settle_ms) & ~rain
    return wind, rain, settle


# --------------------------------------------------------------------------------------
# Calibration
# --------------------------------------------------------------------------------------

Location = tuple[str | None, int | None, str | None]


def check_calibration(
    metadata: Mapping[str, object], locations: Mapping[str, Location], rules: Calibration,
    collector: FindingCollector, has_sheet: bool = True,
) -> bool:
    """Check field calibration values; return True when drift exceeds the limit.

    ``calibration-drift``: |after - before| > ``rules.drift_limit_db`` (ISO 1996-2 limit,
    from memory); ``calibration-missing``; ``calibrator-level-unusual`` when the calibrator
    level is not within ``rules.nominal_tolerance_db`` of a nominal level.
    """
    before = metadata.get("calibration_before_db")
    after = metadata.get("calibration_after_db")
    excess = False
    if not isinstance(before, int | float) or not isinstance(after, int | float):
        missing = [name for name, v in (("Calibration before (dB)", before),
                                        ("Calibration after (dB)", after))
                   if not isinstance(v, int | float)]
        sheet = next((loc[0] for loc in locations.values() if loc[0]), None)
        if has_sheet:
            text = (f"no valid {' and '.join(missing)} on the Survey sheet, so calibration "
                    "drift cannot be checked — enter the calibrator readings taken before "
                    "and after")
        else:
            text = (f"no valid {' and '.join(missing)} given, so calibration drift cannot be "
                    "checked — this input has no Survey sheet: give the calibrator readings "
                    "taken before and after as calibration_before_db and "
                    "calibration_after_db in the [survey] table of the settings file")
        collector.add(Finding("calibration-missing", Severity.WARNING, text, sheet))
    else:
        drift = float(after) - float(before)
        # round to 0.001 dB so that binary representation (94.5 - 94.0) does not decide
        excess = round(abs(drift), 3) > rules.drift_limit_db
        if excess:
            sheet, row, col = locations.get("calibration_after_db", (None, None, None))
            collector.add(Finding(
                "calibration-drift", Severity.WARNING,
                f"calibration drift {drift:+.2f} dB (before {before:g} dB, after {after:g} dB)"
                f" exceeds the limit of {rules.drift_limit_db:g} dB — check the meter; "
                f"{'every reading is excluded' if rules.on_excess_drift == 'exclude' else ''}"
                f"{'figures are kept but doubtful' if rules.on_excess_drift != 'exclude' else ''}",
                sheet, row, col))
    level = metadata.get("calibrator_level_db")
    if isinstance(level, int | float) and rules.nominal_levels_db:
        nominal = np.asarray(rules.nominal_levels_db, dtype=float)
        if float(np.min(np.abs(nominal - float(level)))) > rules.nominal_tolerance_db:
            sheet, row, col = locations.get("calibrator_level_db", (None, None, None))
            shown = ", ".join(f"{v:g}" for v in rules.nominal_levels_db)
            collector.add(Finding(
                "calibrator-level-unusual", Severity.WARNING,
                f"calibrator level {level:g} dB is not near a usual nominal level ({shown} dB)"
                " — check the value", sheet, row, col))
    return excess


def group_labels(labels: Sequence[str], scopes: Sequence[str]) -> dict[tuple[str, str], list[int]]:
    """Group span indexes by (label, scope), in first-seen order."""
    groups: dict[tuple[str, str], list[int]] = {}
    for i, key in enumerate(zip(labels, scopes, strict=True)):
        groups.setdefault(key, []).append(i)
    return groups


def grid_size_refusal(start_ms: np.ndarray, duration_ms: np.ndarray,
                      steps_s: Mapping[str, float]) -> Finding | None:
    """Return why the survey cannot be assessed on its grids (too many intervals), or None.

    Parameters
    ----------
    start_ms, duration_ms : numpy.ndarray of int64
        Placed readings' starts and lengths [ms].
    steps_s : mapping of str to float
        Settings key (``reporting_interval``) -> the grid step it sets [s].

    A grid's size is the readings' span divided by its step; one beyond
    ``MAX_GRID_INTERVALS`` is refused before any grid is built, naming the key to change.
    """
    if start_ms.size == 0:
        return None
    span_s = float(np.max(start_ms + duration_ms) - np.min(start_ms)) / _MS_PER_S
    for key, step in steps_s.items():
        n = span_s / step
        if n > MAX_GRID_INTERVALS:
            need = float(np.ceil(span_s / MAX_GRID_INTERVALS))
            return Finding(
                "grid-too-large", Severity.ERROR,
                f"the readings span {span_s / 86_400:,.1f} days; at {key} = {step:g} s that is "
                f"{n:,.0f} intervals, more than the {MAX_GRID_INTERVALS:,} a results workbook "
                f"can hold — set {key} to at least {need:,.0f} s in the settings, or split the "
                "survey into shorter workbooks")
    return None
