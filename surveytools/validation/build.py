"""Turn a :class:`~surveytools.inputs.raw.RawWorkbook` into a :class:`~surveytools.survey.Survey`.

:func:`build_survey` never raises for data problems: every problem becomes a located
finding, every reading keeps its row (excluded with a reason, or listed as unplaced).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from surveytools.constants import (
    GAP_FACTOR,
    MAX_INTERVAL_DURATION_S,
    PLAUSIBLE_BAND_LEVEL_MIN_DB,
)
from surveytools.inputs.columns import (
    EXCLUSION_COLUMNS,
    READINGS_COLUMNS,
    SURVEY_KEYS,
    WEATHER_COLUMNS,
    canonical_name,
    is_band_column,
    match_columns,
)
from surveytools.inputs.raw import RawColumn, RawTable, RawWorkbook
from surveytools.inputs.shared_weather import WeatherFile, relocated
from surveytools.settings import Settings
from surveytools.survey import Exclusion, Scope, Survey
from surveytools.validation import checks as ck
from surveytools.validation import timebase as tb
from surveytools.validation import weather_merge as wm
from surveytools.validation.findings import Finding, FindingCollector, Severity
from surveytools.validation.schema import validate_survey

#: Level columns with no standard name in the vocabulary table are recognised by prefix.
_FLAG_COLUMNS = ("Overload", "Operating")
_TIME_COLUMNS = ("Start", "End", "Date", "Time", "Duration")
_SCOPES: dict[str, Scope] = {"all": "all", "background": "background"}


def is_level_column(name: str) -> bool:
    """Return True for canonical level column names (``LAeq``, ``LAF90``, ``LZeq_1000Hz``)."""
    return is_band_column(name) or (name in READINGS_COLUMNS and name.startswith("L"))


@dataclass
class _Columns:
    table: RawTable
    by_name: dict[str, RawColumn]
    where: ck.Where


def _match(table: RawTable, vocabulary: Mapping[str, Any], column_map: Mapping[str, str],
           collector: FindingCollector, report_unknown: bool) -> _Columns:
    where = ck.Where(table.sheet, table.first_data_row)
    matched, unknown, duplicates = match_columns(
        [c.header for c in table.columns], vocabulary, column_map)
    for name, idx in duplicates:
        letters = ", ".join(table.columns[i].letter for i in idx)
        collector.add(Finding(
            "column-duplicate", Severity.WARNING,
            f"several columns ({letters}) mean '{name}'; column {table.columns[idx[0]].letter}"
            " is used — rename or delete the others", table.sheet, table.header_row,
            table.columns[idx[1]].letter))
    if report_unknown:
        for i in unknown:
            c = table.columns[i]
            collector.add(Finding(
                "column-unknown", Severity.INFO,
                f"column '{c.header}' is not a known column and is ignored — rename it or "
                f"map it in the settings' [columns] table (\"{c.header}\" = \"LAeq\", "
                "naming the column it holds)", table.sheet, table.header_row, c.letter))
    return _Columns(table, {name: table.columns[i] for name, i in matched.items()}, where)


def _empty_readings(level_names: list[str]) -> pd.DataFrame:
    cols: dict[str, pd.Series] = {
        "row": pd.Series(dtype="int64"), "start_ms": pd.Series(dtype="int64"),
        "duration_ms": pd.Series(dtype="int64"), "offset_s": pd.Series(dtype="int32"),
    }
    for name in level_names:
        cols[name] = pd.Series(dtype="float64")
    cols["overload"] = pd.Series(dtype="bool")
    cols["operating"] = pd.Series(dtype="boolean")
    cols["note"] = pd.Series(dtype="object")
    return pd.DataFrame(cols)


def _assume_time_zone(metadata: dict[str, Any], settings: Settings,
                      collector: FindingCollector, sheet: str | None) -> bool:
    """Fill an assumed site zone when neither the Survey sheet nor the settings gave one.

    Returns whether the zone was assumed; the warning ``time-zone-assumed`` says what was
    assumed and what it affects (design.md §9: a time zone nobody gave is never silent).
    """
    if metadata.get("time_zone"):
        metadata["time_zone_assumed"] = False
        return False
    clock = str(metadata.get("clock", settings.survey.clock))
    zone = tb.assumed_site_zone(clock)
    metadata["time_zone"] = zone
    metadata["time_zone_assumed"] = True
    if zone == "UTC":
        what = "the site is assumed to keep UTC"
        if clock == "local":
            what += (", so the meter's local clock is read as UTC and its summer-time changes "
                     "are not recognised (an autumn hour repeats as duplicate times)")
    else:
        what = f"the site is assumed to keep the meter's {zone} all year (no summer time)"
    where = ("as 'Time zone' on the Survey sheet" if sheet is not None else
             "as time_zone in the [survey] table of the settings file (this input has no "
             "Survey sheet)")
    collector.add(Finding(
        "time-zone-assumed", Severity.WARNING,
        f"no time zone was given (Survey sheet 'Time zone' or survey.time_zone in the "
        f"settings); {what}. Periods (day/evening/night), assessment days and every local "
        "time shown follow that assumption — enter the site's time zone, an IANA name such "
        f"as Europe/London, {where}", sheet))
    return True


def _clock(metadata: Mapping[str, Any], settings: Settings,
           collector: FindingCollector) -> tb.Clock:
    clock = str(metadata.get("clock", settings.survey.clock))
    zone = str(metadata.get("time_zone") or "UTC")
    try:
        return tb.parse_clock(clock, zone)
    except ValueError as exc:
        collector.add(Finding(
            "clock-invalid", Severity.ERROR,
            f"the clock '{clock}' with time zone '{zone}' cannot be used ({exc}); UTC is "
            "assumed — correct Clock / Time zone on the Survey sheet or in the settings"))
        return tb.Clock("utc")


@dataclass
class _Times:
    """Timestamps of one table per data position (sheet order)."""

    naive: tb.NaiveTimes
    loc: tb.Localised
    letter: str | None
    is_end: bool


def _table_times(cols: _Columns, n: int, clock: tb.Clock, end_mode: bool,
                 collector: FindingCollector, start_name: str = "Start") -> _Times | None:
    by = cols.by_name
    key = "End" if end_mode else start_name
    is_end = end_mode
    if key not in by and not end_mode and "End" in by and "Date" not in by:
        key, is_end = "End", True
        collector.add(Finding(
            "timestamps-end-used", Severity.INFO,
            f"no '{start_name}' column; the '{by['End'].header}' column ({by['End'].letter})"
            " is read as interval ends", cols.table.sheet, cols.table.header_row,
            by["End"].letter))
    if key in by:
        naive = tb.column_datetimes(by[key], n)
        column = by[key]
    elif "Date" in by and "Time" in by:
        naive = tb.combine_date_time(tb.column_dates(by["Date"], n), tb.column_times(by["Time"], n))
        column = by["Time"]
    elif "Date" in by:
        naive = tb.column_datetimes(by["Date"], n)
        column = by["Date"]
    else:
        return None
    letter: str | None = column.letter
    loc = tb.localise(naive, clock)
    tb.report_time_problems(collector, cols.table.sheet, cols.table.first_data_row, letter,
                           naive, loc, clock, header=column.header)
    return _Times(naive, loc, letter, is_end)


def _missing_column(collector: FindingCollector, table: RawTable, header: str, why: str,
                    cols: _Columns | None = None) -> None:
    unknown = [] if cols is None else [
        c for c in table.columns
        if c.header not in (None, "") and all(c is not m for m in cols.by_name.values())]
    hint = ""
    if unknown:
        first = unknown[0]
        names = ", ".join(f"'{c.header}' ({c.letter})" for c in unknown[:3])
        hint = (f"; if one of the columns {names} holds it, map it in the settings' "
                f"[columns] table, e.g. \"{first.header}\" = \"{header}\"")
    collector.add(Finding(
        "column-missing", Severity.ERROR,
        f"the {table.sheet} sheet has no '{header}' column ({why}) — add a column headed "
        f"'{header}' in row {table.header_row}{hint}", table.sheet, table.header_row))


def build_survey(raw: RawWorkbook, settings: Settings,
                 shared_weather: WeatherFile | None = None) -> Survey:
    """Validate one workbook and return its :class:`Survey`.

    Parameters
    ----------
    raw : RawWorkbook
        What the reader found.
    settings : Settings
        Run settings (exclusion rules, calibration limits, survey defaults, column map).
    shared_weather : WeatherFile, optional
        A weather file for every input (``--weather``): applied where the workbook's own
        Weather sheet does not cover the time (:mod:`~.weather_merge`).

    Returns
    -------
    Survey
        Readings sorted by UTC start with exclusion masks, unplaced rows, weather and every
        finding (reader findings included). Never raises for data problems.
    """
    collector = FindingCollector()
    survey_keys: dict[int, str] = {}
    if raw.survey is not None:
        # every entry claiming a key is mapped; validate_survey reports repeated keys
        for i, e in enumerate(raw.survey.entries):
            name = canonical_name(e.key, SURVEY_KEYS)
            if name is not None:
                survey_keys[i] = name
    metadata, locations = validate_survey(raw.survey, survey_keys, settings.survey, collector)
    zone_assumed = _assume_time_zone(metadata, settings, collector,
                                     raw.survey.sheet if raw.survey is not None else None)
    clock = _clock(metadata, settings, collector)
    try:
        site_zone = tb.parse_site_zone(str(metadata["time_zone"]))
    except ValueError:  # reported by validate_survey / _clock; UTC keeps the run going
        site_zone = tb.parse_site_zone("UTC")
    drift_excess = ck.check_calibration(metadata, locations, settings.calibration, collector,
                                        has_sheet=raw.survey is not None)

    table = raw.readings
    sheet_name = table.sheet if table is not None else "Readings"

    def finish(readings: pd.DataFrame, level_columns: dict[str, str],
               exclusions: list[Exclusion], unplaced: pd.DataFrame | None,
               weather: pd.DataFrame | None) -> Survey:
        own = collector.findings()
        # A problem both the reader and validation saw (a formula cell without a stored
        # value) is reported once, with validation's message (it says what happens next).
        seen = {(f.code, f.sheet, f.row, f.column) for f in own}
        extra = [f for f in raw.findings if (f.code, f.sheet, f.row, f.column) not in seen]
        findings = sorted(own + extra, key=Finding.sort_key)
        counts = collector.counts
        rows = collector.located_rows()
        for f in extra:
            counts[f.code] = counts.get(f.code, 0) + 1
            if f.row is not None:
                key = (f.code, f.sheet)
                rows[key] = np.append(rows.get(key, np.zeros(0, np.int64)), f.row)
        kw: dict[str, Any] = {}
        if unplaced is not None:
            kw["unplaced"] = unplaced
        return Survey(raw.source, metadata, readings, level_columns, sheet_name, exclusions,
                      weather=weather, findings=findings, finding_counts=counts,
                      finding_rows=rows, **kw)

    if table is None:
        collector.add(Finding(
            "readings-missing", Severity.ERROR,
            "no sheet with readings was found — name the sheet 'Readings' and give it a "
            "header row with at least Start and LAeq"))
        return finish(_empty_readings(["LAeq"]), {}, [], None, None)

    cols = _match(table, READINGS_COLUMNS, settings.column_map, collector, True)
    by = cols.by_name
    n = table.n_rows
    if n == 0:  # a header and nothing below it: no figure can come from this input
        collector.add(Finding(
            "readings-missing", Severity.ERROR,
            f"the readings table has its header (row {table.header_row}) but no readings "
            "below it — export the log again with its data", table.sheet,
            table.header_row))
    level_names = [name for name in by if is_level_column(name)]
    if "LAeq" not in by:
        _missing_column(collector, table, "LAeq", "the per-interval level is required",
                        cols)
        return finish(_empty_readings(["LAeq", *level_names]), {}, [], None, None)
    level_names = ["LAeq", *[x for x in level_names if x != "LAeq"]]
    end_mode = settings.survey.timestamps == "end"
    times = _table_times(cols, n, clock, end_mode, collector)
    if times is None:
        _missing_column(collector, table, "End" if end_mode else "Start",
                        "each reading needs its time", cols)
        return finish(_empty_readings(level_names), {}, [], None, None)

    # ---- empty rows (all recognised cells empty) -------------------------------------
    empty_row = np.ones(n, bool)
    for c in by.values():
        empty_row &= ck.cell_empty(c, n)
    if empty_row.any():
        pos = np.flatnonzero(empty_row)
        collector.add_rows("row-empty", Severity.INFO, table.sheet, pos + cols.where.first_row,
                           None, "empty row between readings; it is skipped")

    # ---- levels -------------------------------------------------------------------------
    rules = settings.exclusions
    levels: dict[str, np.ndarray] = {}
    overload_marker = np.zeros(n, bool)
    laeq_rejected = np.zeros(n, bool)
    laeq_marker = np.zeros(n, bool)
    laeq_range = np.zeros(n, bool)
    for name in level_names:
        col = by[name]
        nums = ck.read_numbers(col, n, cols.where, collector, what="a level", unit="dB",
                              code_prefix="level", markers=True)
        # band levels may lie far under the broadband floor (PLAUSIBLE_BAND_LEVEL_MIN_DB)
        low = (min(rules.level_min_db, PLAUSIBLE_BAND_LEVEL_MIN_DB)
               if is_band_column(name) else rules.level_min_db)
        out = ck.check_level_range(nums.values, col, cols.where, collector,
                                  low, rules.level_max_db)
        levels[name] = nums.values
        overload_marker |= nums.marker
        if name == "LAeq":
            laeq_rejected = nums.rejected
            laeq_range = out
            laeq_marker = nums.marker

    # ---- flags and notes ----------------------------------------------------------------
    overload_col = np.zeros(n, bool)
    if "Overload" in by:
        flags = ck.read_flags(by["Overload"], n, cols.where, collector)
        overload_col = flags.fillna(False).to_numpy(dtype=bool)
    operating = ck.read_flags(by["Operating"], n, cols.where, collector) if "Operating" in by \
        else pd.Series(pd.arrays.BooleanArray(np.zeros(n, bool), np.ones(n, bool)))
    note = ck.read_text(by["Note"], n) if "Note" in by else np.full(n, None, dtype=object)
    overload = overload_col | overload_marker

    # ---- durations ------------------------------------------------------------------------
    placed = times.loc.placed & ~empty_row
    stamp = times.loc.utc_ms
    dur_ms, dur_ok, _given = tb.durations_from_seconds(by.get("Duration"), n)
    step = tb.modal_step_ms(stamp[placed])
    dur_invalid = np.zeros(n, bool)
    if "Duration" in by:
        bad = placed & ~dur_ok
        dcol = by["Duration"]
        if bad.any():
            pos = np.flatnonzero(bad)
            vals = dcol.values.astype(object).to_numpy()
            shown = [dcol.text_cells.get(int(i), dcol.error_cells.get(int(i), vals[i]))
                     for i in pos[:collector.max_per_code]]
            collector.add_rows(
                "duration-invalid", Severity.ERROR, table.sheet, pos + cols.where.first_row,
                dcol.letter,
                [f"{'empty' if _blank(v) else repr(v)} is not an interval length in seconds "
                 f"(a number > 0, at most {MAX_INTERVAL_DURATION_S:.0f} s = 7 days) — enter "
                 "the duration; the row is left out" for v in shown])
            dur_invalid = bad
    fallback = step if step is not None else tb.MS_PER_S
    if step is None and "Duration" not in by and placed.any():
        collector.add(Finding(
            "duration-invalid", Severity.ERROR,
            "the interval length cannot be found from a single reading — add a 'Duration (s)' "
            "column", table.sheet, table.header_row))
        dur_invalid = placed.copy()
    dur_ms = np.where(dur_ok, dur_ms, fallback).astype(np.int64)
    start_ms = stamp - dur_ms if times.is_end else stamp
    stray = ck.check_stray_times(np.arange(n, dtype=np.int64) + cols.where.first_row, start_ms,
                                 times.loc.offset_s, placed, times.letter, cols.where, collector)
    placed &= ~stray

    # ---- unplaced ---------------------------------------------------------------------------
    rows_all = np.arange(n, dtype=np.int64) + cols.where.first_row
    unplaced_mask = ~placed & ~empty_row
    missing_ts = unplaced_mask & times.naive.empty & ~times.loc.nonexistent
    if missing_ts.any():
        pos = np.flatnonzero(missing_ts)
        collector.add_rows("timestamp-missing", Severity.ERROR, table.sheet,
                           pos + cols.where.first_row, times.letter,
                           "the row has values but no timestamp, so it cannot be placed in "
                           "time — enter the interval's date and time")
    u = np.flatnonzero(unplaced_mask)
    # Reason texts only for the (few) unplaced rows, not for every reading.
    reasons = np.where(times.loc.nonexistent[u], "timestamp-nonexistent",
                       np.where(missing_ts[u], "timestamp-missing",
                                np.where(stray[u], "timestamp-stray", "timestamp-invalid")))
    raw_text = times.naive.raw[u].copy()
    gone = times.loc.nonexistent[u] | stray[u]
    raw_text[gone] = tb.format_naive_ms(times.naive.ms[u][gone])
    unplaced = pd.DataFrame({
        "row": pd.Series(rows_all[u], dtype="int64"),
        "reason": pd.Series(reasons, dtype="object"),
        "raw": pd.Series([None if r is None else str(r) for r in raw_text], dtype="object"),
    })

    # ---- sort and time checks ------------------------------------------------------------
    keep = np.flatnonzero(placed)
    ck.check_time_order(rows_all[keep], start_ms[keep], times.letter, cols.where, collector)
    kept_start = start_ms[keep]
    # a log in time order (the usual case) needs no sort: its stable order is itself
    in_order = kept_start.size < 2 or bool(np.all(kept_start[1:] >= kept_start[:-1]))
    order = keep if in_order else keep[np.argsort(kept_start, kind="stable")]
    s_sorted = start_ms[order]
    d_sorted = dur_ms[order]
    # local times shown are the site's civil time (design.md §9), whatever the meter's clock
    off_sorted = tb.site_offsets_s(s_sorted, site_zone)
    repeated_hour_hint = None
    if zone_assumed and str(metadata.get("clock", settings.survey.clock)) == "local":
        repeated_hour_hint = (
            "no time zone was given, so if the clocks went back that night this is the "
            "repeated hour, not a copy — enter the site's Time zone on the Survey sheet "
            "(e.g. Europe/London) rather than deleting a row")
    tc = ck.check_sorted_times(rows_all[order], s_sorted, d_sorted, off_sorted, times.letter,
                              cols.where, collector, GAP_FACTOR,
                              duplicate_hint=repeated_hour_hint)
    ck.check_level_order({k: v[order] for k, v in levels.items()},
                        {k: by[k].letter for k in levels}, cols.where, collector,
                        rows_all[order])

    data: dict[str, Any] = {
        "row": pd.Series(rows_all[order], dtype="int64"),
        "start_ms": pd.Series(s_sorted, dtype="int64"),
        "duration_ms": pd.Series(d_sorted, dtype="int64"),
        "offset_s": pd.Series(off_sorted, dtype="int32"),
    }
    for name in level_names:
        data[name] = pd.Series(levels[name][order], dtype="float64")
    data["overload"] = pd.Series(overload[order], dtype="bool")
    data["operating"] = operating.iloc[order].reset_index(drop=True).astype("boolean")
    data["note"] = pd.Series(note[order] if "Note" in by else np.full(order.size, None, object),
                             dtype="object")
    readings = pd.DataFrame(data, copy=False)  # fresh columns of our own: no copy needed

    # ---- exclusions --------------------------------------------------------------------
    exclusions: list[Exclusion] = []

    def add(reason: str, label: str, mask: np.ndarray, scope: Scope = "all") -> None:
        if mask.any():
            exclusions.append(Exclusion(reason, label, scope, mask))

    laeq_missing = np.isnan(levels["LAeq"]) & ~laeq_rejected & ~laeq_range & ~laeq_marker
    if laeq_missing[order].any():
        pos = order[laeq_missing[order]]
        collector.add_rows("level-missing", Severity.WARNING, table.sheet, rows_all[pos],
                           by["LAeq"].letter,
                           "the LAeq cell is empty, so the reading is left out — enter the "
                           "level or delete the row")
    invalid = laeq_rejected | laeq_missing | (laeq_marker & (not rules.exclude_overloads))
    add("level-invalid", "LAeq not usable", invalid[order])
    add("level-out-of-range", "LAeq outside the plausible range", laeq_range[order])
    if rules.exclude_overloads:
        add("overload", "meter overload", overload[order])
    add("duration-invalid", "interval length not usable", dur_invalid[order])
    add("duplicate", "duplicated timestamp", tc.duplicate)
    add("overlap", "overlapping interval", tc.overlap)
    # Background is the residual sound's LA90 (BS 4142:2014 3.4): while the assessed source
    # runs, its sound is not background, so operating readings are left out of it.
    add("source-operating", "assessed source running",
        data["operating"].fillna(False).to_numpy(dtype=bool), scope="background")
    if drift_excess and settings.calibration.on_excess_drift == "exclude":
        add("calibration-drift", "calibration drift above the limit",
            np.ones(len(order), bool))

    e_sorted = s_sorted + d_sorted
    weather = None
    if raw.weather is not None:
        weather = _weather(raw.weather, settings, clock, collector, s_sorted, e_sorted)
    if shared_weather is not None:
        weather = _with_shared_weather(weather, raw.weather, shared_weather, settings,
                                       collector, s_sorted, e_sorted, clock)
    if weather is not None and len(weather):
        wind, rain, settle = ck.weather_masks(
            s_sorted, e_sorted, weather["start_ms"].to_numpy(),
            (weather["start_ms"] + weather["duration_ms"]).to_numpy(),
            weather["wind_m_s"].to_numpy(), weather["rain_mm"].to_numpy(),
            rules.wind_max_m_s, rules.rain_max_mm, rules.rain_settle_s)
        add("wind", f"wind above {rules.wind_max_m_s:g} m/s", wind)
        add("rain", f"rain above {rules.rain_max_mm:g} mm", rain)
        add("rain-settle", f"within {rules.rain_settle_s:g} s after rain", settle)
    if raw.exclusions is not None:
        exclusions.extend(_technician(raw.exclusions, settings, clock, collector,
                                      s_sorted, e_sorted))

    level_columns = {name: by[name].letter for name in level_names}
    return finish(readings, level_columns, exclusions, unplaced, weather)


def _blank(v: object) -> bool:
    return v is None or (isinstance(v, float) and np.isnan(v)) or \
        (isinstance(v, str) and not v.strip())


def _weather(table: RawTable, settings: Settings, clock: tb.Clock, collector: FindingCollector,
             s_sorted: np.ndarray, e_sorted: np.ndarray) -> pd.DataFrame | None:
    cols = _match(table, WEATHER_COLUMNS, settings.column_map, collector, False)
    n = table.n_rows
    times = _table_times(cols, n, clock, False, collector)
    if times is None:
        _missing_column(collector, table, "Start", "each weather interval needs its start")
        return None
    if times.is_end:
        collector.add(Finding("column-missing", Severity.ERROR,
                              f"the {table.sheet} sheet needs a 'Start' column (interval "
                              "starts); its End column is not used", table.sheet,
                              table.header_row))
        return None
    wind = np.full(n, np.nan)
    rain = np.full(n, np.nan)
    for name, arr, what, unit in (("Wind speed", wind, "a wind speed", "m/s"),
                                  ("Rain", rain, "a rainfall", "mm")):
        if name in cols.by_name:
            col = cols.by_name[name]
            nums = ck.read_numbers(col, n, cols.where, collector, what=what, unit=unit,
                                  code_prefix="weather")
            with np.errstate(invalid="ignore"):
                neg = nums.values < 0
            if neg.any():
                pos = np.flatnonzero(neg)
                collector.add_rows("weather-out-of-range", Severity.ERROR, table.sheet,
                                   pos + cols.where.first_row, col.letter,
                                   f"{what} cannot be negative — check the value")
                nums.values[pos] = np.nan
            arr[:] = nums.values
    placed = np.flatnonzero(times.loc.placed)
    rows = placed + cols.where.first_row
    start = times.loc.utc_ms[placed]
    ck.check_time_order(rows, start, times.letter, cols.where, collector)
    order = np.argsort(start, kind="stable")
    start, rows, placed = start[order], rows[order], placed[order]
    dup = np.zeros(start.size, dtype=bool)  # also right for a sheet with no weather rows
    dup[1:] = start[1:] == start[:-1]
    if dup.any():
        collector.add_rows("timestamp-duplicate", Severity.ERROR, table.sheet, rows[dup],
                           times.letter,
                           "another weather row has the same start; this row is not used — "
                           "delete one of them")
    start, rows, placed = start[~dup], rows[~dup], placed[~dup]
    dur = np.empty(start.size, np.int64)
    if start.size:
        dur[:-1] = np.diff(start)
        step = tb.modal_step_ms(start)
        last_end = int(e_sorted.max()) if e_sorted.size else int(start[-1]) + 1
        dur[-1] = step if step is not None else max(last_end - int(start[-1]), 1)
    return pd.DataFrame({
        "row": pd.Series(rows, dtype="int64"),
        "start_ms": pd.Series(start, dtype="int64"),
        "duration_ms": pd.Series(dur, dtype="int64"),
        "wind_m_s": pd.Series(wind[placed], dtype="float64"),
        "rain_mm": pd.Series(rain[placed], dtype="float64"),
    })


def _with_shared_weather(own: pd.DataFrame | None, own_table: RawTable | None,
                         shared: WeatherFile, settings: Settings,
                         collector: FindingCollector, s_sorted: np.ndarray,
                         e_sorted: np.ndarray, clock: tb.Clock) -> pd.DataFrame | None:
    """Return the input's weather, the shared file's applied where its own sheet is silent.

    Findings about the shared file are reported on this input with the file's name; one
    ``weather-source`` finding says which source covers which time, and one
    ``weather-gap`` finding per stretch of the survey that no weather covers.
    """
    collector.extend(shared.findings)
    if shared.weather is None:
        return own
    side = FindingCollector()
    entries = shared.survey.entries if shared.survey is not None else []
    station: dict[str, Any] = {}
    for e in entries:  # only the clock matters in a weather file's Survey sheet
        name = canonical_name(e.key, SURVEY_KEYS)
        if name in ("clock", "time_zone") and e.value is not None and str(e.value).strip():
            station[name] = str(e.value).strip()
    if "time_zone" not in station and settings.survey.time_zone:
        # a CSV (or a Survey sheet without it) keeps the settings' clock in the settings'
        # time zone, as an input without one does: local station times are site times
        station["time_zone"] = settings.survey.time_zone
    station_clock = _clock(station, settings, side)
    frame = _weather(shared.weather, settings, station_clock, side, s_sorted, e_sorted)
    for f in side.findings():
        collector.add(relocated(shared.name, f))
    if frame is None or not len(frame):
        return own
    combined, used = wm.combine(own, frame)
    tz = clock.tzinfo()
    own_text = (f"its own {own_table.sheet} sheet from {_local(int(own['start_ms'].min()), tz)} "
                f"to {_local(int((own['start_ms'] + own['duration_ms']).max()), tz)} and "
                if own is not None and len(own) and own_table is not None else "")
    collector.add(Finding(
        "weather-source", Severity.INFO,
        f"weather for wind and rain exclusions: {own_text}the shared weather file "
        f"{shared.name} ({station_clock.label})"
        + ("" if used else ", of which no interval falls outside the own sheet's time")))
    if s_sorted.size:
        gaps = wm.coverage_gaps(combined["start_ms"].to_numpy(np.int64),
                                combined["covered_end_ms"].to_numpy(np.int64),
                                int(s_sorted.min()), int(e_sorted.max()))
        for a, b in gaps:  # once per gap
            collector.add(Finding(
                "weather-gap", Severity.WARNING,
                f"no weather from {_local(a, tz)} to {_local(b, tz)} "
                f"({(b - a) / 3_600_000:.1f} h): readings then are not checked for wind and "
                "rain — add the station's rows for that time or check the conditions by hand"))
    return combined.drop(columns=["source", "covered_end_ms"])


def _local(ms: int, tz: Any) -> str:
    """Local wall-clock text of an instant in the position's clock (findings)."""
    from datetime import datetime

    return datetime.fromtimestamp(ms / 1000, tz=tz).strftime("%Y-%m-%d %H:%M")


def _technician(table: RawTable, settings: Settings, clock: tb.Clock,
                collector: FindingCollector, s_sorted: np.ndarray,
                e_sorted: np.ndarray) -> list[Exclusion]:
    cols = _match(table, EXCLUSION_COLUMNS, settings.column_map, collector, False)
    by = cols.by_name
    n = table.n_rows
    if "From" not in by or "To" not in by:
        _missing_column(collector, table, "From" if "From" not in by else "To",
                        "each excluded period needs From and To")
        return []
    t_from = _table_times(cols, n, clock, False, collector, start_name="From")
    t_to_cols = _Columns(table, {"Start": by["To"]}, cols.where)
    t_to = _table_times(t_to_cols, n, clock, False, collector)
    assert t_from is not None and t_to is not None
    empty = ck.cell_empty(by["From"], n) & ck.cell_empty(by["To"], n)
    ok = t_from.loc.placed & t_to.loc.placed
    half = ~ok & ~empty & (t_from.naive.empty | t_to.naive.empty)
    first = cols.where.first_row
    if half.any():
        pos = np.flatnonzero(half)
        collector.add_rows("exclusion-span-invalid", Severity.ERROR, table.sheet, pos + first,
                           None, "the excluded period needs both From and To — fill both")
    f_ms, t_ms = t_from.loc.utc_ms, t_to.loc.utc_ms
    backwards = ok & (t_ms <= f_ms)
    if backwards.any():
        pos = np.flatnonzero(backwards)
        collector.add_rows("exclusion-span-invalid", Severity.ERROR, table.sheet, pos + first,
                           by["To"].letter,
                           "To is not after From — correct the end of the excluded period")
    ok &= ~backwards
    scope_text = ck.read_text(by["Applies to"], n) if "Applies to" in by else \
        np.full(n, None, dtype=object)
    scope_low = pd.Series(scope_text, dtype=object).str.strip().str.lower().fillna("all")
    known = scope_low.isin(list(_SCOPES)).to_numpy(dtype=bool)
    unknown = ok & ~known
    if unknown.any():
        pos = np.flatnonzero(unknown)
        collector.add_rows(
            "exclusion-scope-unknown", Severity.ERROR, table.sheet, pos + first,
            by["Applies to"].letter,
            [f"'{scope_text[i]}' is not a scope — write 'all' (left out of every figure) or "
             "'background' (left out of background figures only); the period is not used"
             for i in pos[:collector.max_per_code]])
    ok &= known
    reason = ck.read_text(by["Reason"], n) if "Reason" in by else np.full(n, None, object)
    labels = [str(r).strip() if r is not None else "marked by technician"
              for r in reason[ok]]
    scopes = scope_low.to_numpy(dtype=object)[ok].tolist()
    idx = np.flatnonzero(ok)
    out: list[Exclusion] = []
    for (label, scope), members in ck.group_labels(labels, scopes).items():
        m = idx[members]
        mask = ck.overlaps_any(s_sorted, e_sorted, f_ms[m], t_ms[m])
        if mask.any():
            out.append(Exclusion("technician", label, _SCOPES[scope], mask))
    return out
