"""Sheets of longer-interval figures (e.g. LAeq,1h): the figures a criterion was judged on.

A criterion over 1-h intervals is judged on hourly LAeq built from the reporting intervals;
its ``interval_figures`` list every hourly figure. This sheet shows them one row per hour,
with one limit and one outcome column per criterion; a figure above a limit it was judged
against is highlighted here (and never a 15-minute row on the Intervals sheet). Its chart,
with each limit drawn as a line over the hours it applies to, goes on the Charts sheet.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from surveytools.outputs import display as d
from surveytools.outputs.book import Book
from surveytools.outputs.sheet_intervals import time_axis
from surveytools.outputs.xlsx_style import finite_number, print_setup


def _sheet_name(interval_s: float) -> str:
    if interval_s % 3600 == 0:
        hours = interval_s / 3600
        return "Hourly" if hours == 1 else f"{hours:g}-hour intervals"
    return f"{interval_s / 60:g}-minute intervals"


def longer_criteria(doc: Mapping[str, Any]) -> dict[float, list[Mapping[str, Any]]]:
    """Criteria with longer-interval figures, grouped by interval length [s]."""
    out: dict[float, list[Mapping[str, Any]]] = {}
    for c in doc.get("criteria") or []:
        interval = finite_number(c.get("interval_s"))
        if c.get("interval_figures") and interval:
            out.setdefault(interval, []).append(c)
    return out


def add(book: Book) -> None:
    """Add one sheet per longer interval length that a criterion was judged on."""
    for interval_s, criteria in longer_criteria(book.doc).items():
        _add_one(book, interval_s, criteria)


def _add_one(book: Book, interval_s: float, criteria: list[Mapping[str, Any]]) -> None:
    doc = book.doc
    sw = book.sheet(_sheet_name(interval_s))
    ws = sw.ws
    label = d.interval_label(interval_s)
    indicators = list(dict.fromkeys(str(c.get("indicator")) for c in criteria))
    # one row per interval start; figures per indicator (equal for criteria on one indicator)
    rows: dict[str, dict[str, Any]] = {}
    for c in criteria:
        for f in c.get("interval_figures") or []:
            row = rows.setdefault(str(f.get("start")), {"start": f.get("start"),
                                                        "period": f.get("period")})
            row[str(c.get("indicator"))] = f
    starts = list(rows)  # the figures come in time order
    sw.text(0, 0, f"{label} figures built from the reporting intervals (energy average of the "
                  "valid time for LAeq, highest for LAFmax), reported to 0.1 dB, as the "
                  "criteria judged them. Red: above the limit of a criterion that applies to "
                  "that interval. " + d.offset_note(doc), "note", measure=False)
    headers = ["Start", "UTC offset", "Period"]
    headers += [f"{name},{label} [dB]" for name in indicators]
    headers += ["Sufficient"]
    crit_cols: list[tuple[Mapping[str, Any], int]] = []
    for c in criteria:
        crit_cols.append((c, len(headers)))
        name = str(c.get("name") or c.get("indicator"))
        headers += [f"Limit [dB]: {name}", f"Outcome: {name}"]
    header_row = 1
    sw.header(header_row, 0, headers)
    ws.freeze_panes(header_row + 1, 1)
    last_col = len(headers) - 1
    for i, start in enumerate(starts):
        r = header_row + 1 + i
        item = rows[start]
        off = sw.stamp(r, 0, start, "datetime_short")
        sw.text(r, 1, off)
        sw.text(r, 2, item.get("period"))
        sufficient = True
        for j, indicator in enumerate(indicators):
            f = item.get(indicator) or {}
            value = d.failure_level(f) if f else None
            over = False
            for c, _ in crit_cols:
                limit = finite_number(c.get("limit_db"))
                if c.get("indicator") == indicator and limit is not None and value is not None:
                    judged = f.get("judged", True)
                    over = over or (bool(judged) and value > limit)
            sw.number(r, 3 + j, value, "level_fail" if over else "level")
            sufficient = sufficient and bool(f.get("sufficient", True))
        sw.boolean(r, 3 + len(indicators), sufficient)
        for c, col in crit_cols:
            f = item.get(str(c.get("indicator"))) or {}
            limit = finite_number(c.get("limit_db"))
            if not f.get("judged", True) or limit is None:
                continue
            value = d.failure_level(f)
            sw.number(r, col, limit, "level")
            if value is not None:
                sw.text(r, col + 1, "not met" if value > limit else "met",
                        "fail" if value > limit else "text")
    last = header_row + max(len(starts), 1)
    ws.autofilter(header_row, 0, last, last_col)
    sw.fit_columns(minimum=8.0, maximum=16.0)
    for _c, col in crit_cols:  # named limit and outcome columns: room for the name
        sw.set_width(col, 14.0)
        sw.set_width(col + 1, 16.0)
    sw.header_height(header_row, 0, headers)
    sw.wrap_notes(last_col)
    print_setup(ws, sw.printed_width(last_col), (header_row, header_row), 1,
                last_row=last, last_col=last_col)
    if not starts:
        return
    chart = book.workbook.add_chart({"type": "scatter", "subtype": "straight"})
    shown: list[object] = []
    for j, indicator in enumerate(indicators):
        chart.add_series({
            "name": f"{indicator},{label}",
            "categories": [ws.name, header_row + 1, 0, last, 0],
            "values": [ws.name, header_row + 1, 3 + j, last, 3 + j],
            "line": {"width": 1.25},
            "marker": {"type": "circle", "size": 3},
        })
        shown += [d.failure_level(rows[s][indicator]) for s in starts if indicator in rows[s]]
    for c, col in crit_cols:
        limit = finite_number(c.get("limit_db"))
        if limit is None:
            continue
        chart.add_series({
            "name": f"Limit {limit:.1f} dB: {c.get('name') or c.get('indicator')}",
            "categories": [ws.name, header_row + 1, 0, last, 0],
            "values": [ws.name, header_row + 1, col, last, col],
            "line": {"width": 2.0, "dash_type": "dash", "color": "#C00000"},
            "marker": {"type": "none"},
        })
        shown.append(limit)
    names = ", ".join(f"{i},{label}" for i in indicators)
    chart.set_title({"name": f"{names} as judged by the criteria (reported, dB)"})
    chart.set_x_axis(time_axis(starts[0], starts[-1]))
    chart.set_y_axis(d.level_axis(shown))
    chart.set_legend({"position": "bottom"})
    chart.show_blanks_as("gap")
    book.add_chart(chart, f"{label} figures from the {ws.name} sheet; dashed lines are the "
                          "limits, drawn over the intervals each criterion applies to.")
