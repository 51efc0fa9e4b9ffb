"""A long CSV or Parquet log assessed in parts, within bounded memory (design §10).

Above a size threshold (:data:`STREAM_PARQUET_ROWS`, :data:`STREAM_CSV_BYTES`) ``run``
and ``check`` do not hold the whole log: :mod:`surveytools.inputs.batches` reads it in
row batches of :data:`BATCH_ROWS`, each batch is validated with the same checks
(:func:`surveytools.validation.build_survey`) and its valid readings are summed into the
partial results the archive uses (:mod:`surveytools.assessment.parts`, merged with
``+``). The days, survey average, overall LAeq and the intervals follow from the merged
parts with the functions ``run`` uses.

How a batch is cut so that the merged result is the whole-log result:

- each batch is assessed up to a reporting-interval boundary that no reading straddles
  (the *cut*); the readings at or after it are carried into the next batch, so every
  reporting interval (its LAeq, LN, LAFmax, exclusion reasons) is computed from one
  batch, whole;
- a few rows before the carried ones (:data:`CONTEXT_ROWS`) are validated again with the
  next batch, so the time-order and gap checks see the row before; their findings and
  readings are not counted twice;
- a reading of a later batch that starts before the previous cut (a log out of time
  order across batches) cannot be merged exactly: :class:`NotStreamable` is raised and
  the caller reads the log whole, as before.

The cut is also a boundary of the background reference grid, so the LA90 of every
reference interval comes from one batch too. LN of the whole survey is taken from the
time per 0.1 dB level step (:mod:`~surveytools.assessment.parts`), or from the count of
each logged value where an LN column is logged
(:mod:`~surveytools.assessment.logged_parts`; not for ``method = "mean"``); band levels
(the ``spectral`` section) from band energy sums per period type and whole intervals
(:mod:`~surveytools.assessment.spectral_parts`); source assessments (``[[assessments]]``)
from their own parts (:mod:`~surveytools.assessment.source_parts`, which says what is
read whole).
"""

from __future__ import annotations

from collections.abc import Callable
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass, field
from datetime import date, timedelta
from pathlib import Path
from typing import Any

import numpy as np

from surveytools.inputs.kinds import CSV_SUFFIXES, PARQUET_SUFFIXES
from surveytools.provenance import SourceInfo
from surveytools.settings import Settings
from surveytools.validation.findings import Finding

#: Parquet logs with more rows than this are assessed in parts. Own choice: the whole-log
#: path holds about 450 bytes per 1 s reading at its peak (1188 MiB for 2,678,400 rows),
#: so above a million rows (about 0.45 GiB) bounded memory is worth the batch overhead.
STREAM_PARQUET_ROWS = 1_000_000
#: CSV logs larger than this are assessed in parts (about a million rows of a time stamp
#: and three levels, ~40 bytes a line) [bytes].
STREAM_CSV_BYTES = 40_000_000
#: Rows read and validated at a time (own choice: about 5.8 days at 1 s, some 250 MiB of
#: working memory; a year at 1 s is 79 batches).
BATCH_ROWS = 500_000
#: Rows before the carried readings validated again with the next batch, so the order
#: and gap checks see the row before (own choice: a few rows are enough).
CONTEXT_ROWS = 8
#: The cut is at least this long before the batch's latest start, so rows up to this much
#: out of time order across a batch boundary still merge exactly (own choice: an hour,
#: 3,600 rows at 1 s carried per batch) [ms].
CUT_LOOKBACK_MS = 3_600_000
#: Longest stretch of civil time written twice when clocks go back, validated again
#: before a cut on a local-time clock (from memory: an hour in most zones, two at
#: Antarctica/Troll) [ms].
REPEATED_TIME_MS = 2 * 3_600_000
#: Most rows a batch may carry forward before the log counts as not cut-able (a batch
#: with no reporting-interval boundary free of straddling readings) [rows].
MAX_CARRIED_ROWS = 4 * BATCH_ROWS


#: Longest Parquet log read whole when it cannot be assessed in parts (own choice: the
#: whole-log path holds about 450 bytes per reading at its peak, so 4,000,000 readings
#: stay near 1.7 GiB, inside a worker's default 4 GiB limit) [rows].
WHOLE_READ_MAX_ROWS = 4_000_000
#: The same limit for a CSV log, by size (about 40 bytes a line) [bytes].
WHOLE_READ_MAX_CSV_BYTES = 160_000_000


class NotStreamable(Exception):  # noqa: N818 (a condition, not a failure)
    """The log cannot be assessed in parts exactly; read it whole instead.

    ``refusal`` says why in our words, with the fix, where the reason lies in the data
    (rows far out of time order): a log too long to read whole is then refused with it.
    """

    def __init__(self, reason: str, refusal: str | None = None) -> None:
        super().__init__(reason)
        self.refusal = refusal


def fits_whole(path: Path) -> bool:
    """Return True when a log is short enough to be read whole (see the limits above)."""
    suffix = path.suffix.lower()
    try:
        if suffix in CSV_SUFFIXES:
            return path.stat().st_size <= WHOLE_READ_MAX_CSV_BYTES
        if suffix in PARQUET_SUFFIXES:
            from surveytools.inputs.batches import count_hint

            return count_hint(path) <= WHOLE_READ_MAX_ROWS
    except OSError:
        return True  # the whole read reports what is wrong with the file
    return True


#: Refusal of a long log whose logged LN values cannot be added up part by part (a
#: sentence completed by the reason and its own fix).
_SPLIT_OR = "%s, or split the log into shorter files (each read whole), and run again"
_EMPTY_LOGGED = _SPLIT_OR % ("its logged LN columns are filled in some parts of the log and "
                             "empty in others; fill them or leave them out throughout")


def _clock_goes_back(survey: Any) -> bool:
    """Return True when the meter keeps a zone's local time (an hour may be written twice).

    The clock as validation reads it (:func:`~surveytools.validation.timebase.parse_clock`):
    UTC and fixed offsets never repeat an hour; a clock it cannot read counts as local.
    """
    from surveytools.validation.timebase import parse_clock

    metadata = survey.metadata
    try:
        clock = parse_clock(str(metadata.get("clock") or "local"),
                            str(metadata.get("time_zone") or "UTC"))
    except ValueError:
        return True
    return clock.kind == "local"


def _order_refusal(row: int) -> str:
    return (f"its rows are not in time order: the reading in row {row} starts more than "
            f"{CUT_LOOKBACK_MS // 60_000} minutes before readings in earlier rows. A log "
            "this long is assessed part by part, which needs its rows in time order; sort "
            "the rows by their time stamps and run again")


@dataclass(frozen=True)
class LongLog:
    """Placeholder for a long log's read phase: nothing is read until it is assessed."""

    path: Path
    source: SourceInfo


def is_long_log(path: Path) -> bool:
    """Return True for a CSV or Parquet log big enough to be assessed in parts."""
    suffix = path.suffix.lower()
    try:
        if suffix in CSV_SUFFIXES:
            return path.stat().st_size > STREAM_CSV_BYTES
        if suffix in PARQUET_SUFFIXES:
            from surveytools.inputs.batches import count_hint

            return count_hint(path) > STREAM_PARQUET_ROWS
    except OSError:
        return False
    return False


@dataclass
class _Merged:
    """What the batches add up to."""

    parts: Any = None
    sources: Any = None  # PositionSourceParts of the assessments
    first_survey: Any = None
    findings: list[Finding] = field(default_factory=list)
    counts: dict[str, int] = field(default_factory=dict)
    file_level: set[tuple[Any, ...]] = field(default_factory=set)
    intervals: dict[int, dict[str, Any]] = field(default_factory=dict)
    reference: dict[int, tuple[int, int, float, float, bool]] = field(default_factory=dict)
    reference_basis: str | None = None
    intervals_basis: dict[str, Any] | None = None
    logged: Any = None  # assessment.logged_parts.LoggedParts
    logging_s: set[float] = field(default_factory=set)  # of batches with logged LN values
    spectral: Any = None  # assessment.spectral_parts.SpectralParts
    spans: list[dict[str, Any]] = field(default_factory=list)
    unplaced: list[Any] = field(default_factory=list)
    measured_ms: int = 0
    valid_ms: int = 0
    excluded_ms: dict[str, int] = field(default_factory=dict)
    durations: dict[float, int] = field(default_factory=dict)
    lafmax: float = float("nan")
    lafmin: float = float("nan")
    last_reading_row: int | None = None
    rows: int = 0


def _own_survey(survey: Any, keep: np.ndarray) -> Any:
    """Return the survey restricted to the readings ``keep`` (findings: the caller)."""
    from dataclasses import replace

    from surveytools.survey import Exclusion

    kept = np.flatnonzero(keep)
    if kept.size and kept[-1] - kept[0] + 1 == kept.size:
        # one run of rows (the usual case: rows in time order): a slice, no gather
        rows: slice | np.ndarray = slice(int(kept[0]), int(kept[-1]) + 1)
        readings = survey.readings.iloc[rows].reset_index(drop=True)
    else:
        rows = keep
        readings = survey.readings.loc[keep].reset_index(drop=True)
    exclusions = [Exclusion(e.reason, e.label, e.scope, e.mask[rows])
                  for e in survey.exclusions if e.mask[rows].any()]
    return replace(survey, readings=readings, exclusions=exclusions)


def _choose_cut(grid: np.ndarray, start: np.ndarray, end: np.ndarray) -> int | None:
    """Latest grid boundary after the first start that no reading straddles, or None."""
    if grid.size == 0 or start.size == 0:
        return None
    after = np.searchsorted(grid, start, side="right")  # first boundary above each start
    inside = after < grid.size
    straddle = np.zeros(grid.size, dtype=bool)
    hit = after[inside][grid[after[inside]] < end[inside]]
    straddle[hit] = True
    ok = ~straddle & (grid > start.min()) & (grid <= start.max() - CUT_LOOKBACK_MS)
    if not ok.any():
        return None
    candidates = np.flatnonzero(ok)[::-1]
    for k in candidates[:64]:  # a handful at most: long readings are rare
        b = grid[k]
        if not np.any((start < b) & (end > b)):
            return int(b)
    return None


def _add_findings(merged: _Merged, survey: Any, first_own_row: int, stop_row: int | None,
                  counts: dict[str, int]) -> None:
    """Keep a batch's findings on its own rows (and file-level ones once).

    The counts too: a finding of the readings sheet counts when its row is the batch's
    own, whether it was stored or only counted beyond the per-code cap (rows validated
    again as the next batch's context, or carried to it, count there).
    """
    dropped: dict[str, int] = {}
    for f in survey.findings:
        if f.code == "findings-truncated":
            continue
        if f.row is None or f.sheet != survey.readings_sheet:
            # file-level, or on another table (a shared weather file): every batch sees it
            key = (f.code, f.sheet, f.row, f.column, f.message)
            if key in merged.file_level:
                dropped[f.code] = dropped.get(f.code, 0) + 1
                continue
            merged.file_level.add(key)
            merged.findings.append(f)
            continue
        if f.row < first_own_row or (stop_row is not None and f.row >= stop_row):
            continue  # counted from the rows below
        merged.findings.append(f)
    end = np.iinfo(np.int64).max if stop_row is None else stop_row
    for (code, sheet), rows in survey.finding_rows.items():
        if sheet == survey.readings_sheet:  # not the batch's own rows: counted elsewhere
            outside = int(np.count_nonzero((rows < first_own_row) | (rows >= end)))
            dropped[code] = dropped.get(code, 0) + outside
    for code, n in counts.items():
        own = max(n - dropped.get(code, 0), 0)
        if own:
            merged.counts[code] = merged.counts.get(code, 0) + own


def _merge_spans(merged: _Merged, spans: list[dict[str, Any]], first_row: int | None) -> None:
    """Append a batch's exclusion spans, joining runs that continue across the cut."""
    previous_last = merged.last_reading_row
    for span in spans:
        if previous_last is not None and span["first_row"] == first_row:
            for old in reversed(merged.spans):
                if (old["last_row"] == previous_last and old["reason"] == span["reason"]
                        and old["scope"] == span["scope"]):
                    old["to"] = span["to"]
                    old["last_row"] = span["last_row"]
                    old["rows"] += span["rows"]
                    break
            else:
                merged.spans.append(span)
            continue
        merged.spans.append(span)


def _assess_batch(merged: _Merged, survey: Any, settings: Settings) -> None:
    """Add one batch's assessed readings to the merged parts and sections."""
    from surveytools.assessment.background import reference_bounds, reference_la90
    from surveytools.assessment.context import build_context
    from surveytools.assessment.intervals import interval_bounds, intervals_section
    from surveytools.assessment.logged_parts import (
        EXACT_METHODS,
        MAX_DISTINCT_VALUES,
        logged_parts_of,
    )
    from surveytools.assessment.parts import position_parts, scheme_grids
    from surveytools.assessment.source_parts import position_source_parts
    from surveytools.assessment.spans import exclusion_spans_section
    from surveytools.assessment.spectral import spectral_parts_of

    if merged.first_survey is None:
        merged.first_survey = survey
    ctx = build_context(survey, settings)
    if ctx.n == 0:
        return
    logged = logged_parts_of(ctx)  # the whole survey's LN combines every logged value
    if logged.columns and settings.background.method not in EXACT_METHODS:
        raise NotStreamable("the mean of logged LN values", _SPLIT_OR % (
            "its logged LN values are combined by their mean ([background] method = "
            '"mean"), which cannot be added up part by part; choose method "median" or '
            '"mode"'))
    if merged.logged is not None and merged.logged.columns != logged.columns:
        raise NotStreamable("logged LN columns empty in some batches", _EMPTY_LOGGED)
    merged.logged = logged if merged.logged is None else merged.logged + logged
    if merged.logged.largest > MAX_DISTINCT_VALUES:
        raise NotStreamable("too many distinct logged LN values", _SPLIT_OR % (
            f"its logged LN columns hold over {MAX_DISTINCT_VALUES:,} distinct values; "
            "round them to 0.1 dB"))
    if logged.columns or ctx.logged("LAF90") is not None:
        merged.logging_s.add(ctx.logging_interval_s)
    # one split of the readings at every grid the parts and sections use (as assess does)
    bounds = interval_bounds(ctx)
    ctx = ctx.with_shared_split([bounds, reference_bounds(ctx)[0], *scheme_grids(ctx)])
    parts = position_parts(ctx)
    merged.parts = parts if merged.parts is None else merged.parts + parts
    ref = reference_la90(ctx)
    rows, basis = intervals_section(ctx)
    if ((merged.reference_basis or ref.basis) != ref.basis
            or (merged.intervals_basis or basis) != basis):  # a batch without logged values
        raise NotStreamable("logged LN columns empty in some batches", _EMPTY_LOGGED)
    merged.reference_basis, merged.intervals_basis = ref.basis, basis
    spectral = spectral_parts_of(ctx)
    if spectral is not None:
        merged.spectral = spectral if merged.spectral is None else merged.spectral + spectral
    sources = position_source_parts(ctx, ref)
    merged.sources = sources if merged.sources is None else merged.sources + sources
    for j in range(max(ref.bounds_ms.size - 1, 0)):
        merged.reference[int(ref.bounds_ms[j])] = (
            int(ref.bounds_ms[j + 1]), int(ref.period_index[j]), float(ref.la90_db[j]),
            float(ref.valid_s[j]), bool(ref.sufficient[j]))
    for j, row in enumerate(rows):
        merged.intervals[int(bounds[j])] = row
    reading_rows = survey.readings["row"].to_numpy(dtype=np.int64)
    _merge_spans(merged, exclusion_spans_section(ctx), int(reading_rows[0]))
    merged.last_reading_row = int(reading_rows[-1])
    duration = ctx.duration_ms
    merged.measured_ms += int(duration.sum())
    merged.valid_ms += int(duration[ctx.valid].sum())
    for ex in survey.exclusions:
        merged.excluded_ms[ex.reason] = (merged.excluded_ms.get(ex.reason, 0)
                                         + int(duration[ex.mask].sum()))
    values, counts = np.unique(duration, return_counts=True)
    for v, c in zip(values.tolist(), counts.tolist(), strict=True):
        merged.durations[v] = merged.durations.get(v, 0) + c
    for column, pick in (("LAFmax", np.fmax), ("LAFmin", np.fmin)):
        values_db = ctx.level(column)
        if values_db is None:
            continue
        chosen = values_db[ctx.valid & np.isfinite(values_db)]
        if chosen.size:
            best = float(chosen.max() if column == "LAFmax" else chosen.min())
            attr = column.lower()
            setattr(merged, attr, float(pick(getattr(merged, attr), best)))
    merged.rows += ctx.n


def stream_log(log: LongLog, settings: Settings, weather: Any = None,
               assess: bool = True, on_batch: Callable[[Any], None] | None = None
               ) -> _Merged:
    """Validate (and with ``assess``, assess) a long log batch by batch.

    ``on_batch`` is called, in log order, with each batch's Survey restricted to the
    readings it owns (those the batch assesses: no reading twice, none lost at a cut;
    its findings are the whole batch's). A later batch may still raise
    :class:`NotStreamable`, so what it is given is provisional until this returns.

    Raises
    ------
    NotStreamable
        If the log cannot be cut exactly (out of time order across batches, a batch
        without a free boundary) or cannot be read in batches.
    WorkbookError
        As the whole-file readers do before reading data.
    """
    import pyarrow as pa

    from surveytools.inputs.batches import BatchReadError, open_log
    from surveytools.inputs.raw import RawWorkbook
    from surveytools.validation import build_survey

    batches = open_log(log.path, settings)
    if batches is None:
        raise NotStreamable("no header")
    merged = _Merged()
    carried: Any = None  # rows put in front of the next batch
    carried_first = 0  # data position of the first carried row
    own_first = 0  # data position of the first row not yet assessed
    floor_ms: int | None = None  # earliest start a later reading may have
    position = 0
    # the assessment of a batch runs in a second thread while the next batch is read and
    # validated (pyarrow and numpy release the interpreter lock for most of it); one batch
    # at most is in flight, so memory stays about two batches' worth
    pool = ThreadPoolExecutor(max_workers=1, thread_name_prefix="long-log") if assess else None
    pending: Future[None] | None = None
    try:
        source = batches.tables(BATCH_ROWS)
        table = next(source, None)
        while table is not None:
            following = next(source, None)
            last = following is None
            if last:
                table = batches.without_trailing_blank_rows(table)
            if carried is not None and carried.num_rows:
                combined = pa.concat_tables([carried, table]).combine_chunks()
                first_pos = carried_first
            else:
                combined, first_pos = table, position
            position += table.num_rows
            raw = batches.raw_table(combined, first_pos)
            workbook = RawWorkbook(source=log.source, readings=raw, findings=[],
                                   date_system=1900)
            survey = build_survey(workbook, settings, shared_weather=weather)
            first_own_row = raw.first_data_row + (own_first - first_pos)
            readings = survey.readings
            rows = readings["row"].to_numpy(dtype=np.int64)
            start = readings["start_ms"].to_numpy(dtype=np.int64)
            end = start + readings["duration_ms"].to_numpy(dtype=np.int64)
            own = rows >= first_own_row
            if floor_ms is not None and own.any() and int(start[own].min()) < floor_ms:
                early = own & (start < floor_ms)
                raise NotStreamable("a reading starts before an earlier batch's cut",
                                    _order_refusal(int(rows[early].min())))
            stop_row: int | None = None
            assessed = own
            if not last and own.any():
                from surveytools.assessment.background import reference_bounds
                from surveytools.assessment.context import build_context
                from surveytools.assessment.intervals import interval_bounds

                probe = build_context(_own_survey(survey, own), settings)
                # boundaries of both grids: reporting and background reference intervals
                grid = np.intersect1d(interval_bounds(probe), reference_bounds(probe)[0])
                cut = _choose_cut(grid, start[own], end[own])
                if cut is None:
                    stop_row = first_own_row  # carry every own row
                else:
                    later = own & (start >= cut)
                    stop_row = int(rows[later].min()) if later.any() else None
                    if stop_row is not None:
                        late = own & (rows >= stop_row) & (start < cut)
                        if late.any():
                            raise NotStreamable("rows out of time order around a cut",
                                                _order_refusal(int(rows[late].min())))
                    if stop_row is not None:
                        floor_ms = cut
                if stop_row is not None:
                    assessed = own & (rows < stop_row)
            _add_findings(merged, survey, first_own_row, stop_row, survey.finding_counts)
            if on_batch is not None:
                on_batch(_own_survey(survey, assessed))
            unplaced = survey.unplaced
            u_rows = unplaced["row"].to_numpy(dtype=np.int64)
            u_keep = (u_rows >= first_own_row) & (u_rows < (stop_row or np.iinfo(np.int64).max))
            if u_keep.any():
                merged.unplaced.append(unplaced.loc[u_keep])
            if pool is not None:
                if pending is not None:
                    pending.result()  # raises what the assessment raised
                pending = pool.submit(_assess_batch, merged, _own_survey(survey, assessed),
                                      settings)
            elif merged.first_survey is None:
                merged.first_survey = survey
            # what the next batch starts from
            next_own = (raw.first_data_row + combined.num_rows  # the row after this batch
                        if stop_row is None else stop_row)
            own_first = next_own - raw.first_data_row + first_pos
            context_first = max(own_first - CONTEXT_ROWS, first_pos)
            if stop_row is not None and floor_ms is not None and _clock_goes_back(survey):
                # a meter on local time: the next batch sees again the readings of the
                # last hours before its cut, so that a repeated autumn hour it starts in
                # shows both passes and each reading is placed by the order of the rows
                recent = (rows < stop_row) & (start >= floor_ms - REPEATED_TIME_MS)
                if recent.any():
                    context_first = max(min(context_first, int(rows[recent].min())
                                            - raw.first_data_row + first_pos), first_pos)
            carried_first = context_first
            carried = combined.slice(context_first - first_pos)
            if carried.num_rows > MAX_CARRIED_ROWS:
                raise NotStreamable(
                    "no reporting-interval boundary to cut at",
                    f"over {MAX_CARRIED_ROWS:,} rows from row "
                    f"{raw.first_data_row + carried_first - first_pos} on have no "
                    "reporting-interval boundary that no reading overlaps (readings that "
                    "long, or rows far out of time order); check the Start and Duration or "
                    "End columns, sort the rows by time, and run again")
            table = following
        if pending is not None:
            pending.result()
    except BatchReadError as exc:
        raise NotStreamable(str(exc)) from exc
    finally:
        if pool is not None:
            pool.shutdown(wait=True, cancel_futures=True)
    if merged.first_survey is None:
        raise NotStreamable("no data rows")
    return merged


def _findings(merged: _Merged) -> tuple[list[Finding], dict[str, int]]:
    """Return the findings capped per code as one validation run caps them, and counts."""
    from surveytools.validation.findings import FindingCollector

    collector = FindingCollector()
    ordered = sorted(merged.findings, key=Finding.sort_key)
    kept: list[Finding] = []
    seen: dict[str, int] = {}
    for f in ordered:
        seen[f.code] = seen.get(f.code, 0) + 1
        if seen[f.code] <= collector.max_per_code:
            kept.append(f)
    for code, n in merged.counts.items():
        collector._counts[code] = n  # full counts, for the truncation notes
    collector._items = kept
    return collector.findings(), dict(merged.counts)


def _interval_grid(merged: _Merged, settings: Settings, tz: Any) -> np.ndarray:
    """Reporting-interval grid over the whole log, as ``run`` lays it out."""
    from surveytools.assessment.timegrid import stepped_grid, wall_to_utc_ms

    parts = merged.parts
    first, last = parts.first_ms, parts.last_ms
    days = parts.days.days
    days = [days[0] - timedelta(days=1), *days, days[-1] + timedelta(days=1)]
    midnights = np.array([wall_to_utc_ms(d, 0, 0, tz) for d in days], dtype=np.int64)
    bounds, _ = stepped_grid(midnights[:-1], midnights[1:], settings.reporting_interval_s)
    lo = max(int(np.searchsorted(bounds, first, side="right")) - 1, 0)
    hi = int(np.searchsorted(bounds, last, side="left"))
    return np.asarray(bounds[lo: hi + 1], dtype=np.int64)


def _interval_rows(merged: _Merged, settings: Settings, tz: Any
                   ) -> tuple[list[dict[str, Any]], list[float]]:
    """Every reporting interval: a batch's own row, or an empty row inside a gap."""
    from surveytools.assessment.daily import lden_period_names
    from surveytools.assessment.intervals import ln_key
    from surveytools.assessment.parts import positions_in
    from surveytools.assessment.timegrid import format_local

    grid = _interval_grid(merged, settings, tz)
    starts = grid[:-1]
    missing = np.array([s for s in starts.tolist() if s not in merged.intervals],
                       dtype=np.int64)
    if missing.size:
        ends = grid[np.searchsorted(grid, missing) + 1]
        start_text = format_local(missing, tz)
        end_text = format_local(ends, tz)
        periods = lden_period_names(merged.parts.days.days, settings, tz, missing)
        for j, s in enumerate(missing.tolist()):
            row: dict[str, Any] = {"start": start_text[j], "end": end_text[j],
                                   "LAeq": None, "LAFmax": None}
            for p in settings.percentiles:
                row[ln_key(p)] = None
            row.update({"valid_s": 0.0, "valid_fraction": 0.0, "sufficient": False,
                        "period": periods[j], "excluded": []})
            merged.intervals[s] = row
    rows = [merged.intervals[s] for s in starts.tolist()]
    # unrounded LAeq per interval (criteria judge these once): the merged interval parts
    iv = merged.parts.intervals
    at, found = positions_in(iv.start_ms, starts)
    laeq = np.full(starts.size, np.nan)
    laeq[found] = iv.levels_db()[at[found]]
    return rows, laeq.tolist()


def _background(merged: _Merged, settings: Settings, tz: Any) -> dict[str, Any]:
    """Background section from the reference intervals of every batch (gaps filled)."""
    from surveytools.assessment.background import (
        BACKGROUND_PERIODS,
        ReferenceLA90,
        background_from_reference,
    )
    from surveytools.assessment.timegrid import day_offset_boundaries, stepped_grid

    b = settings.background
    parts = merged.parts
    days = parts.days.days
    days = [days[0] - timedelta(days=1), *days, days[-1] + timedelta(days=1)]
    spans = day_offset_boundaries(days, [b.day_start, b.night_start], tz)
    steps = np.tile([b.reference_interval_day_s, b.reference_interval_night_s], len(days))
    bounds, span = stepped_grid(spans[:-1], spans[1:], steps)
    period_index = span % len(BACKGROUND_PERIODS)
    lo = max(int(np.searchsorted(bounds, parts.first_ms, side="right")) - 1, 0)
    hi = int(np.searchsorted(bounds, parts.last_ms, side="left"))
    bounds, period_index = bounds[lo: hi + 1], period_index[lo:hi]
    n = max(bounds.size - 1, 0)
    la90 = np.full(n, np.nan)
    valid_s = np.zeros(n)
    sufficient = np.zeros(n, dtype=bool)
    for j, s in enumerate(bounds[:-1].tolist()):
        entry = merged.reference.get(s)
        if entry is not None:
            la90[j], valid_s[j], sufficient[j] = entry[2], entry[3], entry[4]
    length_s = np.diff(bounds) / 1000.0
    sufficient |= (length_s > 0) & (valid_s >= settings.coverage_threshold * length_s)
    ref = ReferenceLA90(bounds, period_index, la90, valid_s, length_s, sufficient,
                        merged.reference_basis or "")
    return background_from_reference(ref, b.method, tz)


def _day_sections(merged: _Merged, settings: Settings, tz: Any
                  ) -> tuple[list[dict[str, Any]], dict[str, Any]]:
    """Days and survey average from the merged day parts, with ``run``'s functions."""
    from surveytools.assessment.daily import (
        day_entries,
        scheme_times_of,
        survey_average_from_schemes,
    )

    parts = merged.parts
    schemes = parts.days.scheme_results(scheme_times_of(settings), tz)
    events = ((parts.days.night_count, parts.days.night_highest[:, -1])
              if parts.has_lafmax else None)
    days = day_entries(parts.days.days, settings, schemes, events)
    return days, survey_average_from_schemes(schemes, settings)


def _overall(merged: _Merged, settings: Settings) -> dict[str, Any]:
    """Whole-survey LAeq (energy sums), LAFmax/LAFmin and LN (time per 0.1 dB step)."""
    from surveytools.assessment._common import db, seconds
    from surveytools.assessment.intervals import ln_key, logged_column
    from surveytools.assessment.parts import FIRST_LEVEL_STEP, LEVEL_STEPS_PER_DB
    from surveytools.indicators.levels import level_from_energy_sums
    from surveytools.indicators.percentiles import exceedance_levels_from_step_times

    parts = merged.parts
    energy = parts.days.energy[0].sum()
    valid = parts.days.valid_ms[0].sum()
    laeq = level_from_energy_sums(np.array([energy]), np.array([valid]),
                                  parts.days.reference_db)[0]
    table = parts.levels.time_ms.sum(axis=0, keepdims=True)
    percents = list(settings.percentiles)
    ln = exceedance_levels_from_step_times(table, FIRST_LEVEL_STEP, LEVEL_STEPS_PER_DB,
                                           percents)[0]
    out: dict[str, Any] = {"LAeq": db(laeq) if valid > 0 else None,
                           "LAFmax": db(merged.lafmax), "LAFmin": db(merged.lafmin)}
    basis: dict[str, Any] = {}
    logged = merged.logged
    for j, p in enumerate(percents):
        out[ln_key(p)] = db(ln[j]) if valid > 0 else None
        basis[ln_key(p)] = "samples"
        if logged is not None and logged_column(p) in logged.columns:  # as overall_section
            out[ln_key(p)] = db(logged.combined(logged_column(p), settings.background.method))
            basis[ln_key(p)] = "logged"
    logged_any = "logged" in basis.values()
    basis["method"] = settings.background.method if logged_any else None
    out["basis"] = basis
    out["valid_s"] = seconds(merged.valid_ms / 1000.0)
    return out


def _coverage(merged: _Merged, tz: Any) -> dict[str, Any]:
    from surveytools.assessment._common import seconds
    from surveytools.assessment.timegrid import format_local

    parts = merged.parts
    first_text, last_text = format_local(np.array([parts.first_ms, parts.last_ms]), tz)
    modal = max(merged.durations.items(), key=lambda kv: (kv[1], -kv[0]))[0]
    return {
        "first": first_text,
        "last": last_text,
        "measured_s": seconds(merged.measured_ms / 1000.0),
        "valid_s": seconds(merged.valid_ms / 1000.0),
        "excluded_s": {r: seconds(v / 1000.0) for r, v in sorted(merged.excluded_ms.items())},
        "unplaced_rows": int(sum(len(u) for u in merged.unplaced)),
        "logging_interval_s": seconds(modal / 1000.0),
    }


def _assessments(merged: _Merged, settings: Settings, position: Any, tz: Any
                 ) -> list[dict[str, Any]]:
    """Return the ``assessments`` section from the merged source parts."""
    from surveytools.assessment.source_parts import PartsNotMergeable
    from surveytools.assessment.sources import assessments_from_parts

    try:
        return assessments_from_parts(merged.sources, settings, position, tz,
                                      merged.parts.first_ms, merged.parts.last_ms)
    except PartsNotMergeable as exc:
        raise NotStreamable(str(exc), _SPLIT_OR % (
            "an assessment's residual-time LA90 is needed across parts of the log from "
            "logged LAF90 values or from levels not on a 0.1 dB grid; round the levels to "
            "0.1 dB")) from exc


def long_log_sections(log: LongLog, settings: Settings, weather: Any = None
                      ) -> tuple[dict[str, Any], list[Finding], dict[str, int]]:
    """Results sections of a long log assessed in parts, its findings and their counts.

    Raises
    ------
    NotStreamable
        See :func:`stream_log`.
    """
    import pandas as pd

    from surveytools.assessment.criteria import criteria_section
    from surveytools.assessment.schedule import parse_holidays
    from surveytools.assessment.spans import survey_section, unplaced_section
    from surveytools.assessment.timegrid import site_tz

    merged = stream_log(log, settings, weather)
    findings, counts = _findings(merged)
    survey = merged.first_survey
    unplaced = (pd.concat(merged.unplaced, ignore_index=True) if merged.unplaced
                else survey.unplaced.iloc[0:0])
    from dataclasses import replace

    survey_rows = replace(survey, unplaced=unplaced)
    sections: dict[str, Any] = {"survey": survey_section(survey)}
    if merged.parts is None:
        sections.update({"coverage": None, "overall": None, "intervals": [],
                         "intervals_basis": {}, "days": [], "survey_average": None,
                         "background": None, "assessments": [], "criteria": [],
                         "exclusion_spans": [], "unplaced": unplaced_section(survey_rows),
                         "spectral": None})
        return sections, findings, counts
    from surveytools.assessment.logged_parts import same_combining
    from surveytools.assessment.spectral import spectral_from_parts

    modal_s = max(merged.durations.items(), key=lambda kv: (kv[1], -kv[0]))[0] / 1000.0
    if any(not same_combining(s, modal_s, settings) for s in merged.logging_s):
        raise NotStreamable("a batch's logging interval combines logged values otherwise",
                            _SPLIT_OR % ("its logging interval changes within the log, "
                                         "which changes how its logged LN values combine"))
    tz = site_tz(survey.metadata)
    spectral = None
    if merged.spectral is not None:
        spectral, spectral_findings = spectral_from_parts(merged.spectral, settings, tz,
                                                          survey.readings_sheet)
        for f in spectral_findings:  # as assess adds them
            findings.append(f)
            counts[f.code] = counts.get(f.code, 0) + 1
    intervals, interval_laeq = _interval_rows(merged, settings, tz)
    days, average = _day_sections(merged, settings, tz)
    basis = merged.intervals_basis
    assessments = _assessments(merged, settings, survey.metadata.get("position"), tz)
    criteria = criteria_section(
        settings.criteria, survey.metadata.get("position"), days, intervals, assessments,
        settings.percentiles, settings.reporting_interval_s, settings.coverage_threshold,
        tz=tz, periods=settings.periods, holidays=parse_holidays(settings.calendar.holidays),
        interval_laeq=interval_laeq if any(c.interval_s is not None
                                           for c in settings.criteria) else None)
    sections.update({
        "coverage": _coverage(merged, tz),
        "overall": _overall(merged, settings),
        "intervals": intervals,
        "intervals_basis": basis,
        "days": days,
        "survey_average": average,
        "background": _background(merged, settings, tz),
        "assessments": assessments,
        "criteria": criteria,
        "exclusion_spans": merged.spans,
        "unplaced": unplaced_section(survey_rows),
        "spectral": spectral,
    })
    return sections, findings, counts


def long_log_findings(log: LongLog, settings: Settings,
                      on_batch: Callable[[Any], None] | None = None, weather: Any = None,
                      ) -> tuple[list[Finding], dict[str, int]]:
    """Validate a long log batch by batch (``check``, ``archive add``); findings, counts.

    ``on_batch``, ``weather``: see :func:`stream_log`.
    """
    return _findings(stream_log(log, settings, weather, assess=False, on_batch=on_batch))


__all__ = ["LongLog", "NotStreamable", "date", "fits_whole", "is_long_log",
           "long_log_findings", "long_log_sections"]
