"""The Days sheet: one row per assessment day, its period levels and valid shares.

Levels are the reported 0.1 dB values; a level above the limit of a criterion judged per
day is highlighted in that cell (the header names the limit); grey italic levels rest on
less than the coverage threshold. The chart of the daily period levels, with each limit as
a line and a level axis fitted to the data, goes on the Charts sheet.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from surveytools.outputs import display as d
from surveytools.outputs.book import Book
from surveytools.outputs.xlsx_style import finite_number, print_setup, wrapped_lines

SHEET_DAYS = "Days"

#: Period levels drawn as columns in the daily chart.
CHART_INDICATORS = ("Lday", "Levening", "Lnight", "Lden")


def day_limits(doc: Mapping[str, Any]) -> dict[str, list[tuple[float, str]]]:
    """Return the limits of criteria judged per day, by indicator: [(limit, name)]."""
    out: dict[str, list[tuple[float, str]]] = {}
    for c in doc.get("criteria") or []:
        limit = finite_number(c.get("limit_db"))
        if c.get("applies_to") == "day" and limit is not None:
            out.setdefault(str(c.get("indicator")), []).append(
                (limit, str(c.get("name") or c.get("indicator"))))
    return out


def add(book: Book) -> None:
    """Add the Days sheet (and its chart)."""
    doc = book.doc
    sw = book.sheet(SHEET_DAYS)
    ws = sw.ws
    days = list(doc.get("days") or [])
    threshold = finite_number(d.get(doc, "settings", "coverage_threshold"))
    thr_text = f"{100 * threshold:.0f} %" if threshold is not None else "the threshold"
    limits = day_limits(doc)
    sw.text(0, 0, "One row per assessment day (from the day-period start). Levels are reported "
                  f"to 0.1 dB; grey italic figures rest on less than {thr_text} valid time of "
                  "their period (indicative only); red figures are above the limit named in "
                  "their header.", "note", measure=False)
    headers = ["Date"]
    for key, name in d.DAY_INDICATORS:
        own = limits.get(key)
        headers.append(f"{name} [dB]" + (f" limit {min(v for v, _ in own):.1f}" if own else ""))
    event_threshold = next((d.get(day, "night_events", "threshold_db") for day in days
                            if d.get(day, "night_events", "threshold_db") is not None), None)
    ev_text = (f"above {d.level_text(event_threshold)}" if event_threshold is not None
               else "above threshold")
    n_th = next((d.get(day, "night_events", "n") for day in days
                 if d.get(day, "night_events", "n") is not None), None)
    headers += ["Valid day [%]", "Valid evening [%]", "Valid night [%]",
                f"Night LAFmax events {ev_text}",
                f"{n_th}th highest night LAFmax [dB]" if n_th else "Nth highest night LAFmax",
                "Note"]
    header_row = 1
    sw.header(header_row, 0, headers)
    ws.freeze_panes(header_row + 1, 1)
    last_col = len(headers) - 1
    if not days:
        sw.text(2, 0, "No assessment days: the input gave none (see Findings).", "note",
                measure=False)
        sw.fit_columns(minimum=9.0)
        print_setup(ws, sw.printed_width(last_col), (header_row, header_row), 1)
        return
    notes: dict[int, str] = {}
    for i, day in enumerate(days):
        r = header_row + 1 + i
        sw.day(r, 0, day.get("date"))
        sufficient = day.get("sufficient") or {}
        missing, weak = [], []
        for j, (key, name) in enumerate(d.DAY_INDICATORS):
            ok = sufficient.get(key) is True
            value = d.level(day.get(key))
            over = value is not None and any(value > lim for lim, _ in limits.get(key, []))
            style = ("level_fail" if ok else "level_fail_grey") if over else \
                ("level" if ok else "level_grey")
            if not sw.number(r, 1 + j, value, style):
                missing.append(name)
            elif not ok:
                weak.append(name)
        cov = day.get("coverage") or {}
        col = 1 + len(d.DAY_INDICATORS)
        for k, key in enumerate(("day", "evening", "night")):
            sw.number(r, col + k, d.share(cov.get(key)), "percent1")
        col += 3
        sw.number(r, col, d.get(day, "night_events", "count"), "int")
        sw.number(r, col + 1, d.level(d.get(day, "night_events", "nth_highest_LAFmax")),
                  "level")
        parts = []
        if weak:
            parts.append(f"indicative only (coverage below {thr_text}): {', '.join(weak)}")
        if missing:
            parts.append(f"not computed (no valid time): {', '.join(missing)}")
        hours = day.get("period_hours") or {}
        odd = [f"{k} {float(v):g} h" for k, v in hours.items()
               if k in ("day", "evening", "night") and finite_number(v) is not None
               and (k, float(v)) not in (("day", 12.0), ("evening", 4.0), ("night", 8.0))]
        if odd:
            parts.append("period lengths (clock change or custom periods): " + ", ".join(odd))
        note = "; ".join(parts)
        sw.text(r, col + 2, note, "wrap", measure=False)
        notes[r] = note
    last = header_row + len(days)
    ws.autofilter(header_row, 0, last, last_col)
    sw.fit_columns(minimum=8.0, maximum=14.0)
    sw.set_width(0, 11.0)
    sw.set_width(last_col - 2, 12.0)  # night events: a long header
    sw.set_width(last_col - 1, 12.0)
    sw.set_width(last_col, 40.0)
    for r, note in notes.items():
        lines = wrapped_lines(note, 40.0)
        if lines > 1:
            ws.set_row(r, 15.0 * lines + 2)

    # hidden limit columns for the chart's limit lines (outside the print area)
    chart_limits = [(key, lim, name) for key in CHART_INDICATORS
                    for lim, name in limits.get(key, [])]
    for j, (_key, lim, name) in enumerate(chart_limits):
        col = last_col + 2 + j
        ws.write_string(header_row, col, f"Limit: {name}")
        for i in range(len(days)):
            ws.write_number(header_row + 1 + i, col, lim)
        sw.set_width(col, 10.0, hidden=True)
    sw.header_height(header_row, 0, headers)
    sw.wrap_notes(last_col)
    print_setup(ws, sw.printed_width(last_col), (header_row, header_row), 1,
                last_row=last, last_col=last_col)
    _chart(book, ws.name, header_row, last, chart_limits, days)


def _chart(book: Book, sheet: str, header_row: int, last: int,
           chart_limits: list[tuple[str, float, str]], days: list[Mapping[str, Any]]) -> None:
    wb = book.workbook
    chart = wb.add_chart({"type": "column"})
    columns = [k for k, _ in d.DAY_INDICATORS]
    for key in CHART_INDICATORS:
        col = 1 + columns.index(key)
        chart.add_series({
            "name": d.DAY_NAMES[key],
            "categories": [sheet, header_row + 1, 0, last, 0],
            "values": [sheet, header_row + 1, col, last, col],
            "gap": 80,
        })
    last_col = 1 + len(d.DAY_INDICATORS) + 5
    if chart_limits:
        line = wb.add_chart({"type": "line"})
        for j, (key, lim, name) in enumerate(chart_limits):
            col = last_col + 2 + j
            line.add_series({
                "name": f"Limit {d.DAY_NAMES[key]} {lim:.1f} dB ({name})",
                "categories": [sheet, header_row + 1, 0, last, 0],
                "values": [sheet, header_row + 1, col, last, col],
                "line": {"width": 2.0, "dash_type": "dash"},
                # a marker too, so the limit shows even for a single day
                "marker": {"type": "dash", "size": 14},
            })
        chart.combine(line)
    values = [day.get(k) for day in days for k in CHART_INDICATORS]
    values += [lim for _, lim, _ in chart_limits]
    chart.set_title({"name": "Daily period levels (reported, dB)"})
    chart.set_y_axis(d.level_axis(values, major_gridlines={"visible": True,
                                                           "line": {"color": "#D9D9D9"}}))
    chart.set_x_axis({"name": "Assessment day", "num_format": "yyyy-mm-dd", "text_axis": True})
    chart.set_legend({"position": "bottom"})
    chart.show_hidden_data()
    book.add_chart(chart, "Daily period levels from the Days sheet; dashed lines are the limits "
                          "of criteria judged per day.")
