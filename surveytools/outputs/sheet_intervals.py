"""The Intervals sheet: one row per reporting interval, and the time-history chart.

Levels are the reported 0.1 dB values. Only criteria judged on the reporting intervals
themselves highlight a cell here; a criterion over longer intervals (LAeq,1h ...) is shown
on its own sheet of longer-interval figures (:mod:`surveytools.outputs.sheet_longer`), so a
15-minute value is never marked against an hourly limit.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from datetime import datetime
from typing import Any

from surveytools.outputs import display as d
from surveytools.outputs.book import Book
from surveytools.outputs.xlsx_style import finite_number, parse_local_timestamp, print_setup

SHEET_INTERVALS = "Intervals"

_LN_KEY_RE = re.compile(r"^LA([0-9]+(?:\.[0-9]+)?)$")

#: Day 0 of spreadsheet date serials (1900 date system, as written by xlsxwriter).
_SERIAL_EPOCH = datetime(1899, 12, 30)


def excel_serial(stamp: datetime) -> float:
    """Spreadsheet date serial (days) of a naive local date-time, for chart axis limits."""
    return (stamp - _SERIAL_EPOCH).total_seconds() / 86_400


def ln_keys(items: Iterable[Mapping[str, Any]]) -> list[str]:
    """LN keys (LA10, LA90, ...) present in any item, in ascending N."""
    keys: set[str] = set()
    for item in items:
        keys.update(k for k in item if _LN_KEY_RE.match(k))
    return sorted(keys, key=lambda k: float(_LN_KEY_RE.match(k).group(1)))  # type: ignore[union-attr]


def reporting_criteria(doc: Mapping[str, Any]) -> list[Mapping[str, Any]]:
    """Criteria judged on the reporting intervals themselves (not on longer intervals)."""
    reporting = finite_number(d.get(doc, "settings", "reporting_interval_s"))
    out = []
    for c in doc.get("criteria") or []:
        if c.get("applies_to") != "interval" or c.get("interval_figures"):
            continue
        interval = finite_number(c.get("interval_s"))
        if interval is None or (reporting is not None and interval == reporting):
            out.append(c)
    return out


def time_axis(first: object, last: object) -> dict[str, Any]:
    """Return x-axis options of a time-history chart spanning ``first`` to ``last``."""
    axis: dict[str, Any] = {"name": "Local time", "num_format": "dd mmm hh:mm",
                            "num_font": {"rotation": -45},
                            "major_gridlines": {"visible": True,
                                                "line": {"color": "#D9D9D9"}}}
    first_t, _ = parse_local_timestamp(first)
    last_t, _ = parse_local_timestamp(last)
    if first_t is not None and last_t is not None and last_t > first_t:
        days = (last_t - first_t).total_seconds() / 86_400
        start = first_t.replace(minute=0, second=0, microsecond=0)
        axis["min"] = excel_serial(start.replace(hour=0) if days > 2 else start)
        axis["max"] = excel_serial(last_t)
        axis["major_unit"] = 1 / 6 if days <= 2 else 1.0 if days <= 14 else 7.0
    return axis


def add(book: Book) -> None:
    """Add the Intervals sheet (and the time-history chart)."""
    doc = book.doc
    sw = book.sheet(SHEET_INTERVALS)
    ws = sw.ws
    intervals = list(doc.get("intervals") or [])
    basis = doc.get("intervals_basis") or {}
    ln = ln_keys(intervals)
    basis_text = ", ".join(f"{k} {basis[k]}" for k in ln if isinstance(basis.get(k), str))
    note = d.offset_note(doc) + " Levels reported to 0.1 dB."
    if basis_text:
        method = basis.get("method")
        note += f" LN basis: {basis_text}"
        note += f" (logged values combined by {method})." if method else "."
    criteria = reporting_criteria(doc)
    level_cols = ["LAeq", "LAFmax", *ln]
    limits: dict[str, list[tuple[float, str]]] = {}
    for c in criteria:
        limit = finite_number(c.get("limit_db"))
        if limit is not None and c.get("indicator") in level_cols:
            limits.setdefault(str(c["indicator"]), []).append((limit, str(c.get("period"))))
    if limits:
        note += " Red: above the limit of a criterion judged on these intervals."
    sw.text(0, 0, note, "note", measure=False)
    headers = ["Start", "End", "UTC offset", "Period"]
    headers += [f"{k} [dB]" for k in level_cols]
    headers += ["Valid [%]", "Sufficient", "Excluded reasons"]
    header_row = 1
    sw.header(header_row, 0, headers)
    ws.freeze_panes(header_row + 1, 1)
    last_col = len(headers) - 1
    if not intervals:
        sw.text(2, 0, "No reporting intervals: the input gave none (see Findings).", "note",
                measure=False)
        sw.fit_columns()
        print_setup(ws, sw.printed_width(last_col), (header_row, header_row), 1)
        return
    first_level_col = 4
    reporting = finite_number(d.get(doc, "settings", "reporting_interval_s"))
    # minutes suffice for the usual intervals; a sub-minute interval keeps its seconds
    stamp_style = "datetime" if reporting is not None and reporting < 60 else "datetime_short"
    for i, iv in enumerate(intervals):
        r = header_row + 1 + i
        off = sw.stamp(r, 0, iv.get("start"), stamp_style)
        sw.stamp(r, 1, iv.get("end"), stamp_style)
        sw.text(r, 2, off)
        period = iv.get("period")
        sw.text(r, 3, period)
        for j, key in enumerate(level_cols):
            value = d.level(iv.get(key))
            over = value is not None and any(
                value > lim and p in ("any", period) for lim, p in limits.get(key, []))
            sw.number(r, first_level_col + j, value, "level_fail" if over else "level")
        vc = first_level_col + len(level_cols)
        sw.number(r, vc, d.share(iv.get("valid_fraction")), "percent1")
        sw.boolean(r, vc + 1, iv.get("sufficient"))
        sw.text(r, vc + 2, ", ".join(str(x) for x in iv.get("excluded") or []))
    last = header_row + len(intervals)
    ws.autofilter(header_row, 0, last, last_col)
    sw.fit_columns(minimum=7.0, maximum=30.0)

    # hidden limit columns for the chart (a value where the criterion applies, else empty)
    chart_limits = [(key, lim, p) for key in ("LAeq", "LAFmax", "LA90")
                    for lim, p in limits.get(key, [])]
    for j, (key, lim, p) in enumerate(chart_limits):
        col = last_col + 2 + j
        ws.write_string(header_row, col, f"Limit {key} ({p})")
        for i, iv in enumerate(intervals):
            if p in ("any", iv.get("period")):
                ws.write_number(header_row + 1 + i, col, lim)
        sw.set_width(col, 10.0, hidden=True)
    sw.header_height(header_row, 0, headers)
    sw.wrap_notes(last_col)
    print_setup(ws, sw.printed_width(last_col), (header_row, header_row), 1,
                last_row=last, last_col=last_col)

    # A scatter chart with lines: its x axis is continuous time. (A line chart's date axis
    # counts whole days only, which stacks every interval of a day onto its midnight.)
    chart = book.workbook.add_chart({"type": "scatter", "subtype": "straight"})
    shown: list[object] = []
    for key in ("LAeq", "LAFmax", "LA90"):
        if key not in level_cols:
            continue
        col = first_level_col + level_cols.index(key)
        chart.add_series({
            "name": key,
            "categories": [ws.name, header_row + 1, 0, last, 0],
            "values": [ws.name, header_row + 1, col, last, col],
            "line": {"width": 1.0},
            "marker": {"type": "none"},
        })
        shown += [iv.get(key) for iv in intervals]
    for j, (key, lim, p) in enumerate(chart_limits):
        col = last_col + 2 + j
        chart.add_series({
            "name": f"Limit {key} {lim:.1f} dB" + ("" if p == "any" else f" ({p})"),
            "categories": [ws.name, header_row + 1, 0, last, 0],
            "values": [ws.name, header_row + 1, col, last, col],
            "line": {"width": 2.0, "dash_type": "dash", "color": "#C00000"},
            "marker": {"type": "none"},
        })
        shown.append(lim)
    chart.set_title({"name": "Time history (reporting intervals, reported levels)"})
    chart.set_x_axis(time_axis(intervals[0].get("start"), intervals[-1].get("end")))
    chart.set_y_axis(d.level_axis(shown))
    chart.set_legend({"position": "bottom"})
    chart.show_blanks_as("gap")
    chart.show_hidden_data()
    book.add_chart(chart, "Time history of the reporting intervals (Intervals sheet)"
                   + ("; dashed lines are the limits judged on these intervals."
                      if chart_limits else "."))
