"""The annotated results workbook of one input (``X.results.xlsx``).

One sheet per part of the results document: a one-page Summary a manager reads in a
minute, then Days, Intervals, Background, Assessments, Exclusions, Readings (only when
annotated readings are handed over), Findings and Provenance. Values are written as
values; the workbook holds no formulas. Every text that may have come from an input is
written as text (see :mod:`surveytools.outputs.xlsx_style`).

References
----------
.. [1] Directive 2002/49/EC, Annex I (Lden, Lday, Levening, Lnight).
.. [2] ISO 1996-1:2016 and ISO 1996-2:2017 (LAeq,T, LN, residual correction).
.. [3] IEC 61672-1:2013 (frequency and time weightings A, F).
.. [4] BS 4142:2014+A1:2019 (background sound level, rating level, whole-dB reporting).
.. [5] Directive 2003/10/EC, Art. 3 (occupational exposure action values).
"""

from __future__ import annotations

import importlib.metadata
import json
import re
from collections.abc import Iterable, Mapping
from datetime import datetime
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import xlsxwriter

from surveytools.outputs.episodes import (
    SHEET_EPISODES,
    write_episodes_sheet,
    write_summary_episodes,
)
from surveytools.outputs.spectra_sheet import SHEET_SPECTRA, summary_lines, write_spectra_sheet
from surveytools.outputs.xlsx_style import (
    FIXED_CREATED,
    SHEET_MAX_ROWS,
    WORKBOOK_OPTIONS,
    SheetWriter,
    Styles,
    cautions_lines,
    finite_number,
    occupational_warning,
    parse_local_timestamp,
    print_detail_sheet,
    severity_counts,
)

#: Sheet names (our own, plain).
SHEET_SUMMARY = "Summary"
SHEET_DAYS = "Days"
SHEET_INTERVALS = "Intervals"
SHEET_BACKGROUND = "Background"
SHEET_ASSESSMENTS = "Assessments"
SHEET_EXCLUSIONS = "Exclusions"
SHEET_READINGS = "Readings"
SHEET_FINDINGS = "Findings"
SHEET_PROVENANCE = "Provenance"

#: Libraries whose versions the Provenance sheet records when the document has none.
LIBRARIES = ("numpy", "pandas", "openpyxl", "fastexcel", "python-calamine", "xlsxwriter",
             "jsonschema")

#: Day indicators in document key order, with their display names.
DAY_INDICATORS: tuple[tuple[str, str], ...] = (
    ("Lday", "Lday"), ("Levening", "Levening"), ("Lnight", "Lnight"), ("Lden", "Lden"),
    ("Ldn", "Ldn"), ("CNEL", "CNEL"), ("LAeq_16h", "LAeq,16h"), ("LAeq_8h", "LAeq,8h"),
)

#: Coverage keys of a day, with display names.
DAY_COVERAGE: tuple[tuple[str, str], ...] = (
    ("day", "Day"), ("evening", "Evening"), ("night", "Night"), ("ldn_day", "Ldn day"),
    ("ldn_night", "Ldn night"), ("cnel_day", "CNEL day"), ("cnel_evening", "CNEL evening"),
    ("cnel_night", "CNEL night"), ("laeq_16h", "LAeq,16h"), ("laeq_8h", "LAeq,8h"),
)

#: Standards and conventions the results rest on (Provenance sheet).
STANDARDS: tuple[tuple[str, str], ...] = (
    ("Lden, Lday, Levening, Lnight", "Directive 2002/49/EC, Annex I"),
    ("LAeq,T, LN (percentage exceedance level), residual correction",
     "ISO 1996-1:2016; ISO 1996-2:2017"),
    ("Frequency weighting A, time weighting F", "IEC 61672-1:2013"),
    ("Background sound level LA90, rating level, excess over background",
     "BS 4142:2014+A1:2019 (where assessments are configured)"),
    ("LN convention", "LN is the level exceeded for N % of the time (LA90 exceeded 90 %)"),
    ("Ldn, CNEL", "Day-night and community noise equivalent levels with the configured "
     "evening/night penalties"),
    ("Occupational caution", "Directive 2003/10/EC, Art. 3 (80 dB(A) lower action value)"),
)

_LN_KEY_RE = re.compile(r"^LA([0-9]+(?:\.[0-9]+)?)$")


# --------------------------------------------------------------------------------------
# small helpers
# --------------------------------------------------------------------------------------

def _get(mapping: object, *keys: str) -> Any:
    node: Any = mapping
    for key in keys:
        if not isinstance(node, Mapping):
            return None
        node = node.get(key)
    return node


def _ln_keys(items: Iterable[Mapping[str, Any]]) -> list[str]:
    """LN keys (LA10, LA90, ...) present in any item, in ascending N."""
    keys: set[str] = set()
    for item in items:
        keys.update(k for k in item if _LN_KEY_RE.match(k))
    return sorted(keys, key=lambda k: float(_LN_KEY_RE.match(k).group(1)))  # type: ignore[union-attr]


def _is_mode(doc: Mapping[str, Any]) -> bool:
    return _get(doc, "background", "method") == "mode"


def _offset_note(doc: Mapping[str, Any]) -> str:
    zone = _get(doc, "survey", "time_zone") or "not stated"
    if _get(doc, "survey", "time_zone_assumed"):
        zone += ", ASSUMED: no time zone was given (warning time-zone-assumed)"
    return (f"Times are the site's civil time (time zone {zone}); the UTC offset of "
            "each row is in its own column.")


def _hhmm(settings: Mapping[str, Any], *keys: str, default: str) -> str:
    value = _get(settings, *keys)
    return value if isinstance(value, str) else default


def _hours(seconds: object) -> float | None:
    v = finite_number(seconds)
    return None if v is None else v / 3600.0


def _window_text(windows: object) -> str:
    if not isinstance(windows, list | tuple) or not windows:
        return ""
    parts = []
    for w in windows:
        if isinstance(w, list | tuple) and len(w) == 2:
            parts.append(f"{w[0]} to {w[1]}")
        else:
            parts.append(str(w))
    return "; ".join(parts)


def _all_levels(doc: Mapping[str, Any]) -> list[object]:
    """Every LAeq-family value in the document (for the 80 dB(A) occupational caution).

    Maxima (LAFmax) are left out on purpose: the action value is an 8-hour exposure
    level (LEX,8h), and a momentary maximum says nothing about exposure. An interval LAeq at
    or above 80 dB(A) is enough: someone there for 8 h at that level reaches it.
    """
    out: list[object] = []
    overall = doc.get("overall") or {}
    out += [overall.get("LAeq")]
    for iv in doc.get("intervals") or []:
        out += [iv.get("LAeq")]
    for day in doc.get("days") or []:
        out += [day.get(k) for k, _ in DAY_INDICATORS]
    avg = doc.get("survey_average") or {}
    out += [avg.get(k) for k, _ in DAY_INDICATORS]
    for a in doc.get("assessments") or []:
        out += [a.get("LAeq_total"), a.get("LAeq_residual"), a.get("specific_level")]
    return out


def how_derived(doc: Mapping[str, Any]) -> dict[str, str]:
    """Return a one-line "how derived" note per headline figure, from the settings in effect.

    Parameters
    ----------
    doc : dict
        The results document.

    Returns
    -------
    dict of str to str
        Keyed by document key (``Lden``, ``LAeq_16h``, ``bg_day`` ...).
    """
    s = doc.get("settings") or {}
    ds = _hhmm(s, "periods", "lden", "day_start", default="07:00")
    es = _hhmm(s, "periods", "lden", "evening_start", default="19:00")
    ns = _hhmm(s, "periods", "lden", "night_start", default="23:00")
    ep = finite_number(_get(s, "periods", "lden", "evening_penalty_db"))
    np_ = finite_number(_get(s, "periods", "lden", "night_penalty_db"))
    ldn_d = _hhmm(s, "periods", "ldn", "day_start", default="07:00")
    ldn_n = _hhmm(s, "periods", "ldn", "night_start", default="22:00")
    ldn_p = finite_number(_get(s, "periods", "ldn", "night_penalty_db"))
    c_d = _hhmm(s, "periods", "cnel", "day_start", default="07:00")
    c_e = _hhmm(s, "periods", "cnel", "evening_start", default="19:00")
    c_n = _hhmm(s, "periods", "cnel", "night_start", default="22:00")
    c_ep = finite_number(_get(s, "periods", "cnel", "evening_penalty_db"))
    c_np = finite_number(_get(s, "periods", "cnel", "night_penalty_db"))
    l16s = _hhmm(s, "periods", "laeq16_start", default="07:00")
    l16e = _hhmm(s, "periods", "laeq16_end", default="23:00")
    bg = doc.get("background") or {}
    method = bg.get("method") or "not stated"
    basis = bg.get("basis") or "not stated"
    bg_ds = _hhmm(s, "background", "day_start", default="07:00")
    bg_ns = _hhmm(s, "background", "night_start", default="23:00")
    ref_d = finite_number(_get(s, "background", "reference_interval_day_s"))
    ref_n = finite_number(_get(s, "background", "reference_interval_night_s"))

    def pen(v: float | None) -> str:
        return "configured" if v is None else f"{v:g}"

    def minutes(v: float | None) -> str:
        return "configured" if v is None else f"{v / 60.0:g} min"

    energy = "Energy average (LAeq, ISO 1996-1) over all valid"
    return {
        "Lden": (f"Lden: Directive 2002/49/EC Annex I formula over all valid day/evening/night "
                 f"time, {ds}-{es}-{ns} local, +{pen(ep)} dB evening, +{pen(np_)} dB night."),
        "Lday": f"Lday: {energy} day time {ds}-{es} local (Directive 2002/49/EC Annex I).",
        "Levening": f"Levening: {energy} evening time {es}-{ns} local.",
        "Lnight": f"Lnight: {energy} night time {ns}-{ds} local.",
        "Ldn": (f"Ldn: day {ldn_d}-{ldn_n}, night {ldn_n}-{ldn_d} local, +{pen(ldn_p)} dB "
                "at night, over all valid time."),
        "CNEL": (f"CNEL: {c_d}-{c_e}-{c_n} local, +{pen(c_ep)} dB evening, +{pen(c_np)} dB "
                 "night, over all valid time."),
        "LAeq_16h": f"LAeq,16h: {energy} time {l16s}-{l16e} local.",
        "LAeq_8h": f"LAeq,8h: {energy} time {l16e}-{l16s} local.",
        "bg_day": (f"Background day: {method} of the LA90 of {minutes(ref_d)} reference "
                   f"intervals {bg_ds}-{bg_ns} local; basis {basis} (BS 4142 convention)."),
        "bg_night": (f"Background night: {method} of the LA90 of {minutes(ref_n)} reference "
                     f"intervals {bg_ns}-{bg_ds} local; basis {basis} (BS 4142 convention)."),
    }


# --------------------------------------------------------------------------------------
# sheets
# --------------------------------------------------------------------------------------

_SUMMARY_COLS = (28.0, 17.0, 17.0, 17.0, 17.0, 72.0)
_SUMMARY_LAST_COL = len(_SUMMARY_COLS) - 1
_SUMMARY_MAX_LIST = 8


def _merged_text(sw: SheetWriter, row: int, first_col: int, last_col: int, text: str,
                 style: str, height: float | None = None) -> None:
    """Write text across merged cells: merge an empty range, then write_string into it."""
    fmt = sw.styles.get(style)
    sw.ws.merge_range(row, first_col, row, last_col, "", fmt)
    sw.text(row, first_col, text, style, measure=False)
    if height is not None:
        sw.ws.set_row(row, height)


def _write_summary(sw: SheetWriter, doc: Mapping[str, Any]) -> None:
    ws = sw.ws
    survey = doc.get("survey") or {}
    position = survey.get("position")
    site = survey.get("site")
    for col, width in enumerate(_SUMMARY_COLS):
        ws.set_column(col, col, width)
    title = "Sound survey results"
    if position:
        title += f": position {position}"
    if site:
        title += f" at {site}"
    sw.text(0, 0, title, "title", measure=False)
    tool = doc.get("tool") or {}
    sw.text(1, 0, f"Written by {tool.get('name', 'surveytools')} "
                  f"{tool.get('version', '')}. {_offset_note(doc)}", "note", measure=False)

    row = 3
    sw.text(row, 0, "Position", "bold", measure=False)
    sw.text(row, 1, position, "text", measure=False)
    row += 1
    sw.text(row, 0, "Site", "bold", measure=False)
    sw.text(row, 1, site, "text", measure=False)
    row += 1
    sw.text(row, 0, "Input file", "bold", measure=False)
    sw.text(row, 1, _get(doc, "input", "file"), "text", measure=False)
    row += 1
    cov = doc.get("coverage") or {}
    sw.text(row, 0, "Survey window (local)", "bold", measure=False)
    off1 = sw.stamp(row, 1, cov.get("first"), "datetime_short")
    sw.text(row, 2, "to", "text", measure=False)
    off2 = sw.stamp(row, 3, cov.get("last"), "datetime_short")
    offs = sorted({o for o in (off1, off2) if o})
    if offs:
        sw.text(row, 4, "UTC " + " / ".join(offs), "note", measure=False)
    row += 1
    sw.text(row, 0, "Data coverage", "bold", measure=False)
    valid_h = _hours(cov.get("valid_s"))
    measured_h = _hours(cov.get("measured_s"))
    if valid_h is not None and measured_h:
        text = (f"{valid_h:.1f} h valid of {measured_h:.1f} h measured "
                f"({valid_h / measured_h:.1%})")
    elif valid_h is not None:
        text = f"{valid_h:.1f} h valid"
    else:
        text = "no readings could be placed in time"
    unplaced = cov.get("unplaced_rows")
    if isinstance(unplaced, int) and unplaced:
        text += f"; {unplaced} row(s) could not be placed in time (see Exclusions)"
    sw.text(row, 1, text, "text", measure=False)
    row += 1
    status = str(doc.get("status") or "")
    sw.text(row, 0, "Status", "bold", measure=False)
    sw.text(row, 1, status, f"st_{status}" if f"st_{status}" in _STATUS_STYLES else "text",
            measure=False)
    row += 2

    # headline figures
    sw.text(row, 0, "Survey-average figures", "subtitle", measure=False)
    row += 1
    sw.header(row, 0, ["Indicator", "Level [dB]", "Valid time [h]", "Note"])
    _merged_text(sw, row, 4, _SUMMARY_LAST_COL, "How derived", "header")
    row += 1
    avg = doc.get("survey_average") or {}
    valid = avg.get("valid_s") or {}
    notes = how_derived(doc)
    valid_by_key = {"Lday": valid.get("day"), "Levening": valid.get("evening"),
                    "Lnight": valid.get("night")}
    if all(finite_number(valid.get(k)) is not None for k in ("day", "evening", "night")):
        valid_by_key["Lden"] = sum(float(valid[k]) for k in ("day", "evening", "night"))
    order = ("Lden", "Lday", "Levening", "Lnight", "Ldn", "CNEL", "LAeq_16h", "LAeq_8h")
    names = dict(DAY_INDICATORS)
    for key in order:
        style = "level_headline" if key == "Lden" else "level_bold"
        sw.text(row, 0, f"{names[key]} [dB]", "bold", measure=False)
        value = finite_number(avg.get(key))
        if value is None:
            sw.blank(row, 1, style)
            sw.text(row, 3, "not available: no valid time in this period", "note",
                    measure=False)
        else:
            sw.number(row, 1, round(value, 1), style)
        sw.number(row, 2, _hours(valid_by_key.get(key)), "hours")
        _merged_text(sw, row, 4, _SUMMARY_LAST_COL, notes[key], "note_wrap")
        row += 1
    bg = doc.get("background") or {}
    whole = _is_mode(doc)
    for period, key in (("day", "bg_day"), ("night", "bg_night")):
        sw.text(row, 0, f"Background LA90, {period} [dB]", "bold", measure=False)
        la90 = finite_number(_get(bg, period, "LA90"))
        style = "whole_db_bold" if whole else "level_bold"
        if la90 is None:
            sw.blank(row, 1, style)
            sw.text(row, 3, "not available", "note", measure=False)
        else:
            sw.number(row, 1, round(la90) if whole else round(la90, 1), style)
            n = _get(bg, period, "n_intervals")
            if isinstance(n, int):
                sw.text(row, 3, f"{bg.get('method')} of {n} intervals", "note", measure=False)
        _merged_text(sw, row, 4, _SUMMARY_LAST_COL, notes[key], "note_wrap")
        row += 1
    row += 1

    # cautions: right after the headline so they are on the first printed page
    sw.text(row, 0, "CAUTIONS", "subtitle", measure=False)
    row += 1
    warning = occupational_warning(_all_levels(doc))
    if warning is not None:
        _merged_text(sw, row, 0, _SUMMARY_LAST_COL, warning, "warning_line", height=30)
        row += 1
    for line in cautions_lines():
        _merged_text(sw, row, 0, _SUMMARY_LAST_COL, line, "caution", height=30)
        row += 1
    row += 1

    # assessments
    assessments = list(doc.get("assessments") or [])
    sw.text(row, 0, "Source assessments", "subtitle", measure=False)
    row += 1
    if not assessments:
        sw.text(row, 0, "none configured", "note", measure=False)
        row += 1
    else:
        sw.header(row, 0, ["Assessment", "Specific level [dB]", "Rating level [dB]",
                           "Excess over background [dB]", "Basis", "Impact indication"])
        ws.set_row(row, 30)
        row += 1
        for a in assessments[:_SUMMARY_MAX_LIST]:
            sw.text(row, 0, a.get("name"), "text", measure=False)
            sw.number(row, 1, _round1(a.get("specific_level")), "level")
            sw.number(row, 2, _round1(a.get("rating_level")), "level")
            sw.number(row, 3, _round1(a.get("excess_over_background")), "level")
            sw.text(row, 4, a.get("specific_basis"), "text", measure=False)
            sw.text(row, 5, a.get("impact_indication") or a.get("note"), "text",
                    measure=False)
            row += 1
        if len(assessments) > _SUMMARY_MAX_LIST:
            sw.text(row, 0, f"... and {len(assessments) - _SUMMARY_MAX_LIST} more: see the "
                            "Assessments sheet", "note", measure=False)
            row += 1
    row += 1

    # frequency content (only with band levels): one line per tone and per flag
    frequency_lines = summary_lines(doc)
    if frequency_lines:
        sw.text(row, 0, "Frequency content (one-third-octave bands)", "subtitle", measure=False)
        row += 1
        for line, flagged in frequency_lines:
            _merged_text(sw, row, 0, _SUMMARY_LAST_COL, line,
                         "caution_bold" if flagged else "note")
            row += 1
        row += 1

    # criteria
    criteria = list(doc.get("criteria") or [])
    sw.text(row, 0, "Criteria", "subtitle", measure=False)
    row += 1
    if not criteria:
        sw.text(row, 0, "none configured", "note", measure=False)
        row += 1
    else:
        n_fail = sum(1 for c in criteria if c.get("passed") is False)
        n_pass = sum(1 for c in criteria if c.get("passed") is True)
        n_none = len(criteria) - n_fail - n_pass
        sw.text(row, 0, f"{n_pass} passed, {n_fail} failed, {n_none} not checked",
                "fail" if n_fail else "pass", measure=False)
        row += 1
        sw.header(row, 0, ["Criterion", "Indicator", "Limit [dB]", "Checked / failed",
                           "Outcome", "First failures"])
        row += 1
        for c in criteria[:_SUMMARY_MAX_LIST]:
            failed = c.get("passed") is False
            sw.text(row, 0, c.get("name") or c.get("indicator"), "text", measure=False)
            indicator = str(c.get("indicator"))
            shown_name = dict(DAY_INDICATORS).get(indicator, indicator.replace("_", " "))
            interval_s = finite_number(c.get("interval_s"))
            if interval_s:
                shown_name += "," + (f"{interval_s / 3600:g}h" if interval_s % 3600 == 0
                                     else f"{interval_s / 60:g}min")
            period = c.get("period")
            sw.text(row, 1, shown_name if period in (None, "any") else f"{shown_name}, {period}",
                    "text", measure=False)
            sw.number(row, 2, c.get("limit_db"), "level")
            sw.text(row, 3, f"{c.get('checked')} / {c.get('failed')}", "text", measure=False)
            outcome = {True: "pass", False: "FAIL"}.get(c.get("passed"), "not checked")
            sw.text(row, 4, outcome, "fail" if failed else "pass" if c.get("passed") else "text",
                    measure=False)
            fails = c.get("failures") or []
            shown = f"per {c.get('applies_to')}: " if fails else ""
            shown += "; ".join(f"{_when_text(f.get('when'))}: {_db_text(f.get('value'))}"
                               for f in fails[:3])
            if len(fails) > 3:
                shown += f"; ... {len(fails) - 3} more"
            sw.text(row, 5, shown, "text", measure=False)
            row += 1
        if len(criteria) > _SUMMARY_MAX_LIST:
            sw.text(row, 0, f"... and {len(criteria) - _SUMMARY_MAX_LIST} more: see the "
                            "Provenance sheet settings", "note", measure=False)
            row += 1
    row += 1
    row = write_summary_episodes(sw, doc, row)

    row = _write_summary_days(sw, doc, row)

    # findings
    counts = severity_counts(doc.get("findings") or [], doc.get("finding_counts"))
    sw.text(row, 0, "Findings", "subtitle", measure=False)
    row += 1
    for sev in ("error", "warning", "info"):
        sw.text(row, 0, {"error": "Errors", "warning": "Warnings", "info": "Notes (info)"}[sev],
                f"sev_{sev}" if counts[sev] else "text", measure=False)
        sw.number(row, 1, counts[sev], "int")
        row += 1
    sw.text(row, 0, "Details of every finding, with sheet, row and column, are on the "
                    "Findings sheet.", "note", measure=False)
    last_row = row

    ws.set_landscape()
    ws.set_paper(9)  # A4
    ws.set_margins(left=0.5, right=0.5, top=0.6, bottom=0.6)
    ws.print_area(0, 0, last_row, _SUMMARY_LAST_COL)
    ws.fit_to_pages(1, 1)
    ws.set_footer("&LResults are indicative - see CAUTIONS&RPage &P of &N")


_STATUS_STYLES = {"st_ok", "st_warnings", "st_errors", "st_unreadable"}

#: Day 0 of spreadsheet date serials (1900 date system, as written by xlsxwriter).
_SERIAL_EPOCH = datetime(1899, 12, 30)


def _excel_serial(stamp: datetime) -> float:
    """Spreadsheet date serial (days) of a naive local date-time, for chart axis limits."""
    return (stamp - _SERIAL_EPOCH).total_seconds() / 86_400

#: Assessment days listed on the Summary (the Days sheet has them all).
_SUMMARY_MAX_DAYS = 10


def _write_summary_days(sw: SheetWriter, doc: Mapping[str, Any], row: int) -> int:
    """Per-day period levels on the Summary: the four EU indicators, then the rest as text."""
    days = list(doc.get("days") or [])
    sw.text(row, 0, "Day by day", "subtitle", measure=False)
    row += 1
    if not days:
        sw.text(row, 0, "no assessment days", "note", measure=False)
        return row + 2
    sw.header(row, 0, ["Assessment day", "Lday [dB]", "Levening [dB]", "Lnight [dB]",
                       "Lden [dB]", "Ldn, LAeq,16h, LAeq,8h [dB]; valid time day / evening / "
                       "night"])
    row += 1
    threshold = finite_number(_get(doc, "settings", "coverage_threshold"))
    for day in days[:_SUMMARY_MAX_DAYS]:
        sufficient = day.get("sufficient") or {}
        sw.text(row, 0, day.get("date"), "text", measure=False)
        for col, key in enumerate(("Lday", "Levening", "Lnight", "Lden"), start=1):
            style = "level" if sufficient.get(key, True) else "level_grey"
            sw.number(row, col, _round1(day.get(key)), style)
        cov = day.get("coverage") or {}
        others = ", ".join(f"{name} {_db_text(day.get(key)).removesuffix(' dB')}"
                           for key, name in (("Ldn", "Ldn"), ("LAeq_16h", "LAeq,16h"),
                                             ("LAeq_8h", "LAeq,8h")))
        shares = " / ".join("n/a" if finite_number(cov.get(k)) is None
                            else f"{100 * float(cov[k]):.0f} %"
                            for k in ("day", "evening", "night"))
        text = f"{others}; {shares}"
        if not all(sufficient.get(k, True) for k in ("Lday", "Levening", "Lnight", "Lden")):
            limit = f" {100 * threshold:.0f} %" if threshold is not None else ""
            text += f" (grey: below the{limit} coverage threshold, indicative only)"
        sw.text(row, 5, text, "text", measure=False)
        row += 1
    if len(days) > _SUMMARY_MAX_DAYS:
        sw.text(row, 0, f"... and {len(days) - _SUMMARY_MAX_DAYS} more days: see the Days "
                        "sheet", "note", measure=False)
        row += 1
    return row + 1


def _round1(value: object) -> float | None:
    v = finite_number(value)
    return None if v is None else round(v, 1)


def _when_text(value: object) -> str:
    if isinstance(value, str) and len(value) == len("YYYY-MM-DD"):
        return value
    stamp, offset = parse_local_timestamp(value)
    if stamp is None:
        return str(value)
    return stamp.strftime("%Y-%m-%d %H:%M") + (f" ({offset})" if offset else "")


def _db_text(value: object) -> str:
    v = finite_number(value)
    return "n/a" if v is None else f"{v:.1f} dB"


def _no_data(sw: SheetWriter, row: int, what: str) -> None:
    sw.text(row, 0, f"No {what}: the input gave none (see Findings).", "note", measure=False)


def _write_days(sw: SheetWriter, wb: Any, doc: Mapping[str, Any]) -> None:
    ws = sw.ws
    days = list(doc.get("days") or [])
    threshold = finite_number(_get(doc, "settings", "coverage_threshold"))
    thr_text = f"{threshold:.0%}" if threshold is not None else "the coverage threshold"
    sw.text(0, 0, f"One row per assessment day (starting at the day-period start). Grey italic "
                  f"figures rest on less than {thr_text} valid time of their period: "
                  "indicative only.", "note", measure=False)
    headers = ["Date"] + [f"{name} [dB]" for _, name in DAY_INDICATORS]
    headers += [f"{name} coverage [%]" for _, name in DAY_COVERAGE]
    headers += ["Day length [h]", "Evening length [h]", "Night length [h]"]
    headers += [f"{name} sufficient" for _, name in DAY_INDICATORS]
    headers += ["Night events above threshold", "Night event threshold [dB]",
                "Nth highest night LAFmax [dB]", "N", "Note"]
    sw.header(1, 0, headers)
    ws.freeze_panes(2, 1)
    if not days:
        _no_data(sw, 2, "assessment days")
        sw.fit_columns()
        return
    for i, d in enumerate(days):
        r = 2 + i
        col = 0
        sw.day(r, col, d.get("date"))
        col += 1
        sufficient = d.get("sufficient") or {}
        missing, weak = [], []
        for key, name in DAY_INDICATORS:
            ok = sufficient.get(key) is True
            written = sw.number(r, col, d.get(key), "level" if ok else "level_grey")
            if not written:
                missing.append(name)
            elif not ok:
                weak.append(name)
            col += 1
        coverage = d.get("coverage") or {}
        for key, _ in DAY_COVERAGE:
            sw.number(r, col, coverage.get(key), "percent")
            col += 1
        hours = d.get("period_hours") or {}
        for key in ("day", "evening", "night"):
            sw.number(r, col, hours.get(key), "hours")
            col += 1
        for key, _ in DAY_INDICATORS:
            sw.boolean(r, col, sufficient.get(key))
            col += 1
        ev = d.get("night_events") or {}
        sw.number(r, col, ev.get("count"), "int")
        sw.number(r, col + 1, ev.get("threshold_db"), "level")
        sw.number(r, col + 2, ev.get("nth_highest_LAFmax"), "level")
        sw.number(r, col + 3, ev.get("n"), "int")
        col += 4
        parts = []
        if weak:
            parts.append(f"indicative only (coverage below {thr_text}): {', '.join(weak)}")
        if missing:
            parts.append(f"not computed (no valid time): {', '.join(missing)}")
        sw.text(r, col, "; ".join(parts), "note")
    last = 1 + len(days)
    ws.autofilter(1, 0, last, len(headers) - 1)
    sw.fit_columns(minimum=9.0)

    chart = wb.add_chart({"type": "column"})
    for j, (_key, name) in enumerate(DAY_INDICATORS[:4]):
        col = 1 + j
        chart.add_series({
            "name": name,
            "categories": [ws.name, 2, 0, last, 0],
            "values": [ws.name, 2, col, last, col],
            "gap": 80,
        })
    chart.set_title({"name": "Daily period levels"})
    chart.set_y_axis({"name": "Level [dB]", "num_format": "0"})
    chart.set_x_axis({"name": "Assessment day", "num_format": "yyyy-mm-dd"})
    chart.set_legend({"position": "bottom"})
    chart.set_size({"width": 760, "height": 340})
    ws.insert_chart(last + 2, 1, chart)


def _write_intervals(sw: SheetWriter, wb: Any, doc: Mapping[str, Any]) -> None:
    ws = sw.ws
    intervals = list(doc.get("intervals") or [])
    basis = doc.get("intervals_basis") or {}
    ln = _ln_keys(intervals)
    basis_text = ", ".join(f"{k} {basis[k]}" for k in ln if isinstance(basis.get(k), str))
    method = basis.get("method")
    note = _offset_note(doc)
    if basis_text:
        note += f" LN basis: {basis_text}"
        note += f" (logged values combined by {method})." if method else "."
    sw.text(0, 0, note, "note", measure=False)
    level_cols = ["LAeq", "LAFmax", *ln]
    headers = ["Start", "End", "UTC offset", "Period"]
    headers += [f"{k} [dB]" for k in level_cols]
    headers += ["Valid time [s]", "Valid [%]", "Sufficient", "Excluded reasons"]
    sw.header(1, 0, headers)
    ws.freeze_panes(2, 1)
    if not intervals:
        _no_data(sw, 2, "reporting intervals")
        sw.fit_columns()
        return
    first_level_col = 4
    for i, iv in enumerate(intervals):
        r = 2 + i
        off = sw.stamp(r, 0, iv.get("start"))
        sw.stamp(r, 1, iv.get("end"))
        sw.text(r, 2, off)
        sw.text(r, 3, iv.get("period"))
        for j, key in enumerate(level_cols):
            sw.number(r, first_level_col + j, iv.get(key), "level")
        c = first_level_col + len(level_cols)
        sw.number(r, c, iv.get("valid_s"), "seconds")
        sw.number(r, c + 1, iv.get("valid_fraction"), "percent")
        sw.boolean(r, c + 2, iv.get("sufficient"))
        excluded = iv.get("excluded") or []
        sw.text(r, c + 3, ", ".join(str(x) for x in excluded))
    last = 1 + len(intervals)
    ws.autofilter(1, 0, last, len(headers) - 1)
    sw.fit_columns(minimum=8.0)

    # exceedances of interval criteria, highlighted by conditional formatting
    fail_fmt = sw.styles.get("fail")
    for crit in doc.get("criteria") or []:
        if crit.get("applies_to") != "interval" or crit.get("indicator") not in level_cols:
            continue
        limit = finite_number(crit.get("limit_db"))
        if limit is None:
            continue
        col = first_level_col + level_cols.index(crit["indicator"])
        period = crit.get("period")
        if period in ("day", "evening", "night"):
            letter = xlsxwriter.utility.xl_col_to_name(col)
            ws.conditional_format(2, col, last, col, {
                "type": "formula",
                "criteria": f'=AND($D3="{period}",{letter}3>{limit!r})',
                "format": fail_fmt,
            })
        else:
            ws.conditional_format(2, col, last, col, {
                "type": "cell", "criteria": ">", "value": limit, "format": fail_fmt,
            })

    # A scatter chart with lines: its x axis is continuous time. (A line chart's date axis
    # counts whole days only, which stacks every interval of a day onto its midnight.)
    chart = wb.add_chart({"type": "scatter", "subtype": "straight"})
    for key in ("LAeq", "LAFmax", "LA90"):
        if key not in level_cols:
            continue
        col = first_level_col + level_cols.index(key)
        chart.add_series({
            "name": key,
            "categories": [ws.name, 2, 0, last, 0],
            "values": [ws.name, 2, col, last, col],
            "line": {"width": 1.0},
            "marker": {"type": "none"},
        })
    chart.set_title({"name": "Time history"})
    x_axis: dict[str, Any] = {"name": "Local time", "num_format": "dd mmm hh:mm",
                              "num_font": {"rotation": -45},
                              "major_gridlines": {"visible": True,
                                                  "line": {"color": "#D9D9D9"}}}
    first_t, _ = parse_local_timestamp(intervals[0].get("start")) if intervals else (None, "")
    last_t, _ = parse_local_timestamp(intervals[-1].get("end")) if intervals else (None, "")
    if first_t is not None and last_t is not None and last_t > first_t:
        days = (last_t - first_t).total_seconds() / 86_400
        start = first_t.replace(minute=0, second=0, microsecond=0)
        x_axis["min"] = _excel_serial(start.replace(hour=0) if days > 2 else start)
        x_axis["max"] = _excel_serial(last_t)
        x_axis["major_unit"] = 1 / 6 if days <= 2 else 1.0 if days <= 14 else 7.0
    chart.set_x_axis(x_axis)
    chart.set_y_axis({"name": "Level [dB]", "num_format": "0"})
    chart.set_legend({"position": "bottom"})
    chart.set_size({"width": 960, "height": 420})
    chart.show_blanks_as("gap")
    ws.insert_chart(2, len(headers) + 1, chart)


def _write_background(sw: SheetWriter, wb: Any, doc: Mapping[str, Any]) -> None:
    ws = sw.ws
    bg = doc.get("background")
    sw.text(0, 0, "Background sound level: LA90 of reference intervals, combined per period. "
            + _offset_note(doc), "note", measure=False)
    headers = ["Start", "End", "UTC offset", "Period", "LA90 [dB]", "Valid time [s]"]
    sw.header(1, 0, headers)
    ws.freeze_panes(2, 0)
    if not isinstance(bg, Mapping):
        _no_data(sw, 2, "background figures")
        sw.fit_columns()
        return
    whole = bg.get("method") == "mode"
    refs = list(bg.get("reference_intervals") or [])
    for i, ref in enumerate(refs):
        r = 2 + i
        off = sw.stamp(r, 0, ref.get("start"))
        sw.stamp(r, 1, ref.get("end"))
        sw.text(r, 2, off)
        sw.text(r, 3, ref.get("period"))
        sw.number(r, 4, ref.get("LA90"), "level")
        sw.number(r, 5, ref.get("valid_s"), "seconds")
    if refs:
        ws.autofilter(1, 0, 1 + len(refs), len(headers) - 1)

    kc = len(headers) + 1  # key/value block and distribution to the right
    notes = how_derived(doc)
    row = 1
    sw.text(row, kc, "Method and basis", "subtitle", measure=False)
    row += 1
    pairs: list[tuple[str, object]] = [
        ("Basis", bg.get("basis") or "not stated"),
        ("Method", bg.get("method")),
    ]
    row = sw.key_values(row, kc, pairs)
    level_style = "whole_db_bold" if whole else "level_bold"
    for period in ("day", "night"):
        part = bg.get(period)
        sw.text(row, kc, f"{period.capitalize()} LA90 [dB]", "bold")
        if isinstance(part, Mapping) and finite_number(part.get("LA90")) is not None:
            sw.number(row, kc + 1, part.get("LA90"), level_style)
        else:
            sw.text(row, kc + 1, "not available", "note")
        row += 1
        sw.text(row, kc, f"{period.capitalize()} reference intervals", "bold")
        sw.number(row, kc + 1, _get(part, "n_intervals"), "int")
        row += 1
    for key in ("bg_day", "bg_night"):
        sw.text(row, kc, notes[key], "note", measure=False)
        row += 1
    if whole:
        sw.text(row, kc, "LA90 reported to whole dB (mode of whole-dB values, BS 4142).",
                "note", measure=False)
        row += 1
    row += 1

    dist: dict[int, list[int]] = {}
    for j, period in enumerate(("day", "night")):
        for pair in _get(bg, period, "distribution") or []:
            if isinstance(pair, list | tuple) and len(pair) == 2:
                level = finite_number(pair[0])
                count = finite_number(pair[1])
                if level is None or count is None:
                    continue
                dist.setdefault(round(level), [0, 0])[j] += int(count)
    sw.text(row, kc, "Distribution of reference-interval LA90 (whole dB)", "subtitle",
            measure=False)
    row += 1
    sw.header(row, kc, ["LA90 [dB]", "Day intervals", "Night intervals"])
    row += 1
    first = row
    for level in sorted(dist):
        sw.number(row, kc, level, "whole_db")
        sw.number(row, kc + 1, dist[level][0], "int")
        sw.number(row, kc + 2, dist[level][1], "int")
        row += 1
    sw.fit_columns(minimum=8.0)
    ws.set_column(kc, kc, 30)
    if dist:
        chart = wb.add_chart({"type": "column"})
        for j, name in enumerate(("Day", "Night")):
            chart.add_series({
                "name": name,
                "categories": [ws.name, first, kc, row - 1, kc],
                "values": [ws.name, first, kc + 1 + j, row - 1, kc + 1 + j],
                "gap": 50,
            })
        chart.set_title({"name": "Background LA90 distribution"})
        chart.set_x_axis({"name": "LA90 [dB]"})
        chart.set_y_axis({"name": "Reference intervals", "num_format": "0"})
        chart.set_legend({"position": "bottom"})
        chart.set_size({"width": 620, "height": 300})
        ws.insert_chart(row + 1, kc, chart)


def _write_assessments(sw: SheetWriter, doc: Mapping[str, Any]) -> None:
    ws = sw.ws
    items = list(doc.get("assessments") or [])
    sw.text(0, 0, "Background-corrected source assessments (ISO 1996-2 residual correction; "
                  "BS 4142 rating and excess over background where used). Windows are local "
                  "clock.", "note", measure=False)
    headers = ["Assessment", "Position", "Selection", "Source-on windows", "Residual windows",
               "Valid time, total [h]", "Valid time, residual [h]", "LAeq total [dB]",
               "LAeq residual [dB]", "Level difference [dB]", "Specific level [dB]",
               "Specific level basis", "Tonal correction [dB]", "Impulsive correction [dB]",
               "Intermittency correction [dB]", "Other correction [dB]", "Rating level [dB]",
               "Background period", "Background LA90 [dB]", "Background basis",
               "Excess over background [dB]", "Impact indication", "Note"]
    sw.header(1, 0, headers)
    ws.freeze_panes(2, 1)
    if not items:
        sw.text(2, 0, "No source assessments are configured.", "note", measure=False)
        sw.fit_columns()
        return
    whole = _is_mode(doc)
    for i, a in enumerate(items):
        r = 2 + i
        sw.text(r, 0, a.get("name"))
        sw.text(r, 1, a.get("position"))
        sw.text(r, 2, a.get("selection"))
        sw.text(r, 3, _window_text(a.get("source_on")), "wrap")
        sw.text(r, 4, _window_text(a.get("residual")), "wrap")
        sw.number(r, 5, _hours(a.get("valid_s_total")), "hours")
        sw.number(r, 6, _hours(a.get("valid_s_residual")), "hours")
        for j, key in enumerate(("LAeq_total", "LAeq_residual", "level_difference",
                                 "specific_level")):
            sw.number(r, 7 + j, a.get(key), "level")
        sw.text(r, 11, a.get("specific_basis"))
        corr = a.get("corrections_db") or {}
        for j, key in enumerate(("tonal", "impulsive", "intermittency", "other")):
            sw.number(r, 12 + j, corr.get(key), "level")
        sw.number(r, 16, a.get("rating_level"), "level")
        sw.text(r, 17, a.get("background_period"))
        sw.number(r, 18, a.get("background_LA90"), "whole_db" if whole else "level")
        # where the background came from: source-free period, residual time, not available
        sw.text(r, 19, a.get("background_basis"))
        sw.number(r, 20, a.get("excess_over_background"), "level")
        sw.text(r, 21, a.get("impact_indication"))
        sw.text(r, 22, a.get("note"))
    ws.autofilter(1, 0, 1 + len(items), len(headers) - 1)
    sw.fit_columns(minimum=9.0)


def _write_exclusions(sw: SheetWriter, doc: Mapping[str, Any]) -> None:
    ws = sw.ws
    spans = list(doc.get("exclusion_spans") or [])
    unplaced = list(doc.get("unplaced") or [])
    sw.text(0, 0, "Every excluded span of readings (consecutive readings with the same reason) "
                  "and every row that could not be placed in time. " + _offset_note(doc),
            "note", measure=False)
    headers = ["From", "To", "UTC offset", "First row", "Last row", "Rows", "Reason", "Scope",
               "Label"]
    sw.header(1, 0, headers)
    ws.freeze_panes(2, 0)
    for i, sp in enumerate(spans):
        r = 2 + i
        off = sw.stamp(r, 0, sp.get("from"))
        sw.stamp(r, 1, sp.get("to"))
        sw.text(r, 2, off)
        sw.number(r, 3, sp.get("first_row"), "int")
        sw.number(r, 4, sp.get("last_row"), "int")
        sw.number(r, 5, sp.get("rows"), "int")
        sw.text(r, 6, sp.get("reason"))
        sw.text(r, 7, sp.get("scope"))
        sw.text(r, 8, sp.get("label"))
    if spans:
        ws.autofilter(1, 0, 1 + len(spans), len(headers) - 1)
    else:
        sw.text(2, 0, "No readings were excluded.", "note", measure=False)

    uc = len(headers) + 1
    sw.header(1, uc, ["Unplaced row", "Reason", "Value as found"])
    for i, item in enumerate(unplaced):
        r = 2 + i
        sw.number(r, uc, item.get("row"), "int")
        sw.text(r, uc + 1, item.get("reason"))
        raw = item.get("raw")
        if raw is not None and not isinstance(raw, str):
            raw = json.dumps(raw, sort_keys=True, ensure_ascii=False, default=str)
        sw.text(r, uc + 2, raw)
    if not unplaced:
        sw.text(2, uc, "none", "note", measure=False)

    xc = uc + 4
    sw.header(1, xc, ["Excluded for", "Excluded time [h]"])
    excluded = _get(doc, "coverage", "excluded_s") or {}
    for i, reason in enumerate(sorted(excluded)):
        sw.text(2 + i, xc, reason)
        sw.number(2 + i, xc + 1, _hours(excluded[reason]), "hours")
    sw.fit_columns(minimum=8.0)


def _write_readings(sw: SheetWriter, doc: Mapping[str, Any], table: pd.DataFrame) -> None:
    ws = sw.ws
    sw.text(0, 0, "Annotated readings: every row of the input's readings sheet with its "
                  "exclusion reason (empty = valid). " + _offset_note(doc), "note",
            measure=False)
    columns = [str(c) for c in table.columns]
    limit = SHEET_MAX_ROWS - 2
    n = min(len(table), limit)
    headers: list[str] = []
    plan: list[tuple[str, str]] = []  # (column, kind)
    for name in columns:
        if name == "row":
            headers.append("Row")
            plan.append((name, "int"))
        elif name == "start":
            headers += ["Start", "UTC offset"]
            plan.append((name, "stamp"))
        elif name == "duration_s":
            headers.append("Duration [s]")
            plan.append((name, "seconds"))
        elif name == "reason":
            headers.append("Exclusion reason")
            plan.append((name, "text"))
        elif pd.api.types.is_numeric_dtype(table[name].dtype) and not \
                pd.api.types.is_bool_dtype(table[name].dtype):
            headers.append(f"{name} [dB]" if name.startswith("L") else name)
            plan.append((name, "level" if name.startswith("L") else "number"))
        else:
            headers.append(name)
            plan.append((name, "text"))
    for i, h in enumerate(headers):
        sw.text(1, i, h, "header")
    ws.freeze_panes(2, 0)
    col = 0
    for name, kind in plan:
        values = table[name].to_numpy()[:n]
        if kind in ("int", "seconds", "level", "number"):
            numeric = pd.to_numeric(pd.Series(values), errors="coerce").to_numpy(dtype=float)
            style = {"int": "int", "seconds": "seconds", "level": "level", "number": None}[kind]
            fmt = sw.styles.get(style)
            for pos in np.flatnonzero(np.isfinite(numeric)).tolist():
                ws.write_number(2 + pos, col, float(numeric[pos]), fmt)
            sw.widths[col] = max(sw.widths.get(col, 0), 8)
            col += 1
        elif kind == "stamp":
            for idx, value in enumerate(values):
                off = sw.stamp(2 + idx, col, value if isinstance(value, str) else None)
                if off:
                    ws.write_string(2 + idx, col + 1, off)
            sw.widths[col + 1] = max(sw.widths.get(col + 1, 0), 10)
            col += 2
        else:
            for idx, value in enumerate(values):
                if value is None or (isinstance(value, float) and not np.isfinite(value)):
                    continue
                if value is pd.NA:
                    continue
                sw.text(2 + idx, col, value)
            col += 1
    if len(table) > limit:
        sw.text(SHEET_MAX_ROWS - 1, 0, f"{len(table) - limit} more rows do not fit on one "
                "sheet; the exclusion spans cover them.", "note", measure=False)
    ws.autofilter(1, 0, 1 + max(n, 1), max(len(headers) - 1, 0))
    sw.fit_columns(minimum=8.0)


def _write_findings(sw: SheetWriter, doc: Mapping[str, Any]) -> None:
    ws = sw.ws
    findings = list(doc.get("findings") or [])
    headers = ["Severity", "Code", "Sheet", "Row", "Column", "Message"]
    sw.header(0, 0, headers)
    ws.freeze_panes(1, 0)
    for i, f in enumerate(findings):
        r = 1 + i
        sev = str(f.get("severity") or "")
        sw.text(r, 0, sev, f"sev_{sev}" if sev in ("error", "warning", "info") else "text")
        sw.text(r, 1, f.get("code"))
        sw.text(r, 2, f.get("sheet"))
        sw.number(r, 3, f.get("row"), "int")
        sw.text(r, 4, f.get("column"))
        sw.text(r, 5, f.get("message"), measure=False)
    ws.autofilter(0, 0, max(len(findings), 1), len(headers) - 1)
    if not findings:
        sw.text(1, 0, "No findings.", "note", measure=False)
    cc = len(headers) + 1
    sw.header(0, cc, ["Code", "Count (all, including beyond the listing cap)"])
    counts = doc.get("finding_counts") or {}
    for i, code in enumerate(sorted(counts)):
        sw.text(1 + i, cc, code)
        sw.number(1 + i, cc + 1, counts[code], "int")
    sw.fit_columns(minimum=7.0)
    ws.set_column(5, 5, 100)


def library_versions() -> dict[str, str]:
    """Return installed versions of the libraries the tool relies on (stable per environment)."""
    out = {}
    for name in LIBRARIES:
        try:
            out[name] = importlib.metadata.version(name)
        except importlib.metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def flatten_settings(settings: object, prefix: str = "") -> list[tuple[str, object]]:
    """Flatten nested settings into ``("periods.lden.day_start", "07:00")`` pairs.

    Lists of scalars become one JSON text; lists of mappings are numbered
    (``criteria[0].limit_db``). Keys keep their document order.
    """
    out: list[tuple[str, object]] = []
    if isinstance(settings, Mapping):
        for key, value in settings.items():
            name = f"{prefix}.{key}" if prefix else str(key)
            out += flatten_settings(value, name)
    elif isinstance(settings, list | tuple):
        if settings and all(isinstance(x, Mapping) for x in settings):
            for i, item in enumerate(settings):
                out += flatten_settings(item, f"{prefix}[{i}]")
        else:
            out.append((prefix, json.dumps(list(settings), ensure_ascii=False, default=str)))
    else:
        out.append((prefix, settings))
    return out


def _write_provenance(sw: SheetWriter, doc: Mapping[str, Any]) -> None:
    ws = sw.ws
    inp = doc.get("input") or {}
    tool = doc.get("tool") or {}
    sw.text(0, 0, "Provenance", "title", measure=False)
    row = 2
    pairs: list[tuple[str, object]] = [
        ("Input file", inp.get("file")),
        ("Input path", inp.get("path")),
        ("Input size [bytes]", inp.get("size_bytes")),
        ("Input SHA-256", inp.get("sha256")),
        ("Tool", tool.get("name")),
        ("Tool version", tool.get("version")),
        ("Results schema version", doc.get("schema_version")),
        ("Status", doc.get("status")),
    ]
    row = sw.key_values(row, 0, pairs)
    row += 1
    sw.text(row, 0, "Library versions", "subtitle", measure=False)
    row += 1
    libs = _get(doc, "provenance", "libraries")
    if not isinstance(libs, Mapping):
        libs = library_versions()
    row = sw.key_values(row, 0, [(str(k), str(v)) for k, v in libs.items()])
    row += 1
    sw.text(row, 0, "Standards and methods", "subtitle", measure=False)
    row += 1
    for what, source in STANDARDS:
        sw.text(row, 0, what, "bold")
        sw.text(row, 1, source)
        row += 1
    row += 1
    sw.text(row, 0, "Cautions", "subtitle", measure=False)
    row += 1
    for line in cautions_lines():
        sw.text(row, 0, line, "caution", measure=False)
        ws.merge_range(row, 1, row, 2, "", sw.styles.get("caution"))
        row += 1
    row += 1
    sw.text(row, 0, "Settings in effect", "subtitle", measure=False)
    row += 1
    sw.header(row, 0, ["Setting", "Value"])
    row += 1
    for key, value in flatten_settings(doc.get("settings") or {}):
        sw.text(row, 0, key)
        if isinstance(value, bool):
            sw.text(row, 1, "true" if value else "false")
        elif isinstance(value, int | float):
            if not sw.number(row, 1, value):
                sw.text(row, 1, "not a finite number", "note")
        elif value is None:
            sw.text(row, 1, "(none)", "note")
        else:
            sw.text(row, 1, value)
        row += 1
    sw.fit_columns(minimum=10.0, maximum=70.0)
    ws.set_column(0, 0, 48)


# --------------------------------------------------------------------------------------
# public
# --------------------------------------------------------------------------------------

def write_results_workbook(path: Path, doc: dict[str, Any],
                           annotations: pd.DataFrame | None = None) -> None:
    """Write the results workbook of one input.

    Parameters
    ----------
    path : pathlib.Path
        Where to write (the caller passes a temporary name and renames it into place).
    doc : dict
        The results document (see the results schema).
    annotations : pandas.DataFrame, optional
        Per-reading table (``row``, ``start`` local ISO text, ``duration_s``, level columns,
        ``reason``) for the Readings sheet; the sheet is left out when None.

    Notes
    -----
    The workbook holds values only (no formulas); the file's creation time is fixed, so
    writing the same document twice gives the same cell contents.
    """
    wb = xlsxwriter.Workbook(str(path), WORKBOOK_OPTIONS)
    try:
        wb.set_properties({
            "title": "Sound survey results",
            "subject": "Environmental sound survey",
            "author": "surveytools",
            "comments": "Indicative results: see the cautions on the Summary sheet.",
            "created": FIXED_CREATED,
        })
        styles = Styles(wb)

        def sheet(name: str) -> SheetWriter:
            return SheetWriter(wb.add_worksheet(name), styles)

        summary = sheet(SHEET_SUMMARY)
        _write_summary(summary, doc)
        _write_days(sheet(SHEET_DAYS), wb, doc)
        _write_intervals(sheet(SHEET_INTERVALS), wb, doc)
        _write_background(sheet(SHEET_BACKGROUND), wb, doc)
        _write_assessments(sheet(SHEET_ASSESSMENTS), doc)
        if doc.get("spectral"):
            write_spectra_sheet(sheet(SHEET_SPECTRA), wb, doc)
        _write_exclusions(sheet(SHEET_EXCLUSIONS), doc)
        if doc.get("criteria"):
            write_episodes_sheet(sheet(SHEET_EPISODES), doc)
        if annotations is not None:
            _write_readings(sheet(SHEET_READINGS), doc, annotations)
        _write_findings(sheet(SHEET_FINDINGS), doc)
        _write_provenance(sheet(SHEET_PROVENANCE), doc)
        for ws in wb.worksheets():
            if ws is not summary.ws:
                print_detail_sheet(ws)
        summary.ws.activate()
    finally:
        wb.close()


__all__ = ["flatten_settings", "how_derived", "library_versions", "parse_local_timestamp",
           "write_results_workbook"]
