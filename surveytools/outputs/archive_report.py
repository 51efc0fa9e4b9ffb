"""The archive report: ``archive-report.json`` and the ``archive-report.xlsx`` workbook.

The workbook formats only what the report document holds: a summary with the cautions
and each position's yearly figures, then one sheet each for years, months, days, LN per
period type and criteria counts (a position column first), and a sheet of native charts
(monthly and yearly figures per position). Levels are shown at 0.1 dB with
:func:`~surveytools.indicators.reporting.reported_level`.
"""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import xlsxwriter

from surveytools.indicators.reporting import reported_level
from surveytools.outputs.atomic import atomic_write_text
from surveytools.outputs.results_json import dumps_results
from surveytools.outputs.xlsx_style import (
    FIXED_CREATED,
    WORKBOOK_OPTIONS,
    SheetWriter,
    Styles,
    cautions_lines,
    finite_number,
    print_setup,
)
from surveytools.schema_files import validator

#: Schema file of the report document.
ARCHIVE_REPORT_SCHEMA = "archive-report.schema.json"
#: Level keys of years and months, with their headers.
SPAN_LEVELS: tuple[tuple[str, str], ...] = (
    ("Lday", "Lday"), ("Levening", "Levening"), ("Lnight", "Lnight"), ("Lden", "Lden"),
    ("Ldn", "Ldn"),
)
DAY_LEVELS: tuple[tuple[str, str], ...] = (
    *SPAN_LEVELS, ("CNEL", "CNEL"), ("LAeq_16h", "LAeq,16h"), ("LAeq_8h", "LAeq,8h"),
)
PERIODS = ("day", "evening", "night")


def validate_archive_report(doc: Any) -> list[str]:
    """Return the schema problems of a report document (empty when valid)."""
    return [f"{'/'.join(str(p) for p in e.absolute_path)}: {e.message}"
            for e in validator(ARCHIVE_REPORT_SCHEMA).iter_errors(doc)]


def write_archive_report_json(path: str | os.PathLike[str], doc: Mapping[str, Any]) -> None:
    """Write the report document as strict, deterministic JSON (atomically)."""
    atomic_write_text(path, dumps_results(doc))


def _level(sw: SheetWriter, row: int, col: int, value: object) -> None:
    number = finite_number(value)
    sw.number(row, col, None if number is None else reported_level(number), "level")


def _table(sw: SheetWriter, top: int, headers: Sequence[str],
           rows: Sequence[Sequence[tuple[str, object]]]) -> int:
    """Write a header and rows of (kind, value) cells; return the next free row."""
    sw.header(top, 0, headers)
    sw.ws.freeze_panes(top + 1, 1)
    for i, cells in enumerate(rows):
        r = top + 1 + i
        for c, (kind, value) in enumerate(cells):
            if kind == "level":
                _level(sw, r, c, value)
            elif kind in ("percent", "int", "hours"):
                sw.number(r, c, value, kind)
            elif kind == "bool":
                sw.boolean(r, c, value)
            else:
                sw.text(r, c, value)
    if rows:
        sw.ws.autofilter(top, 0, top + len(rows), len(headers) - 1)
    sw.fit_columns()
    sw.header_height(top, 0, headers)  # tall enough for each header in its final width
    return top + len(rows) + 1


def _span_rows(doc: Mapping[str, Any], key: str, label: str
               ) -> tuple[list[str], list[list[tuple[str, object]]]]:
    headers = ["Position", label, "From", "To", *(f"{h} [dB]" for _, h in SPAN_LEVELS),
               *(f"Coverage {p} [%]" for p in PERIODS), "Sufficient", "Days with data"]
    rows = []
    for position in doc.get("positions") or []:
        for item in position.get(key) or []:
            coverage = item.get("coverage") or {}
            rows.append([("text", position["position"]), ("text", str(item[key[:-1]])),
                         ("text", item.get("from")), ("text", item.get("to")),
                         *(("level", item.get(k)) for k, _ in SPAN_LEVELS),
                         *(("percent", coverage.get(p)) for p in PERIODS),
                         ("bool", item.get("sufficient")), ("int", item.get("days_with_data"))])
    return headers, rows


def _write_summary(sw: SheetWriter, doc: Mapping[str, Any]) -> None:
    ws = sw.ws
    tool = doc.get("tool") or {}
    window = doc.get("window") or {}
    sw.text(0, 0, "Sound monitoring archive: long-term figures", "title", measure=False)
    sw.text(1, 0, f"Written by {tool.get('name', 'surveytools')} {tool.get('version', '')} "
                  f"from {doc.get('archive', {}).get('location')}; assessment days "
                  f"{window.get('from') or 'first'} to {window.get('to') or 'last'}. Levels "
                  "are energy averages of all valid time of each period type; Lden and Ldn "
                  "follow Directive 2002/49/EC Annex I.", "note", measure=False)
    row = 3
    sw.text(row, 0, "CAUTIONS", "subtitle", measure=False)
    row += 1
    for line in [*cautions_lines(), *[c for c in doc.get("cautions") or []
                                      if c not in cautions_lines()]]:
        ws.merge_range(row, 0, row, 10, "", sw.styles.get("caution"))
        sw.text(row, 0, line, "caution", measure=False)
        ws.set_row(row, 30)
        row += 1
    for line in doc.get("problems") or []:
        ws.merge_range(row, 0, row, 10, "", sw.styles.get("fail"))
        sw.text(row, 0, f"Problem: {line}", "fail", measure=False)
        row += 1
    row += 1
    sw.text(row, 0, "Yearly figures per position", "subtitle", measure=False)
    headers, rows = _span_rows(doc, "years", "Year")
    _table(sw, row + 1, headers, rows)
    ws.freeze_panes(0, 0)


def _write_days(sw: SheetWriter, doc: Mapping[str, Any]) -> None:
    headers = ["Position", "Date", *(f"{h} [dB]" for _, h in DAY_LEVELS),
               *(f"Coverage {p} [%]" for p in PERIODS), "Lden sufficient",
               "Night events", "Nth highest night LAFmax [dB]"]
    rows = []
    for position in doc.get("positions") or []:
        for day in position.get("days") or []:
            coverage = day.get("coverage") or {}
            events = day.get("night_events") or {}
            rows.append([("text", position["position"]), ("text", day["date"]),
                         *(("level", day.get(k)) for k, _ in DAY_LEVELS),
                         *(("percent", coverage.get(p)) for p in PERIODS),
                         ("bool", (day.get("sufficient") or {}).get("Lden")),
                         ("int", events.get("count")),
                         ("level", events.get("nth_highest_LAFmax"))])
    _table(sw, 0, headers, rows)


def _write_levels(sw: SheetWriter, doc: Mapping[str, Any]) -> None:
    percent_keys: list[str] = []
    for position in doc.get("positions") or []:
        for period in PERIODS:
            for key in (position.get("levels") or {}).get(period) or {}:
                if key != "valid_s" and key not in percent_keys:
                    percent_keys.append(key)
    headers = ["Position", "Period", *(f"{k} [dB]" for k in percent_keys), "Valid time [h]"]
    rows = []
    for position in doc.get("positions") or []:
        for period in PERIODS:
            entry = (position.get("levels") or {}).get(period) or {}
            valid = finite_number(entry.get("valid_s"))
            rows.append([("text", position["position"]), ("text", period),
                         *(("level", entry.get(k)) for k in percent_keys),
                         ("hours", None if valid is None else valid / 3600.0)])
    end = _table(sw, 0, headers, rows)
    sw.text(end + 1, 0, "LN from the LAeq samples, counted per 0.1 dB level step over all "
                        "valid time of each period type (not the meter's own LAFN).", "note",
            measure=False)


def _write_criteria(sw: SheetWriter, doc: Mapping[str, Any]) -> None:
    headers = ["Position", "Criterion", "Indicator", "Period", "Limit [dB]", "Judged per",
               "Checked", "Above", "Above, sufficient coverage", "First above", "Last above"]
    rows = []
    for position in doc.get("positions") or []:
        for item in position.get("criteria") or []:
            rows.append([("text", position["position"]), ("text", item.get("name")),
                         ("text", item.get("indicator")), ("text", item.get("period")),
                         ("level", item.get("limit_db")), ("text", item.get("applies_to")),
                         ("int", item.get("checked")), ("int", item.get("above")),
                         ("int", item.get("above_with_sufficient_coverage")),
                         ("text", item.get("first_above")), ("text", item.get("last_above"))])
    end = _table(sw, 0, headers, rows)
    if not rows:  # say why the table is empty, and how to fill it
        if (doc.get("settings") or {}).get("criteria"):
            why = "no position had a figure the criteria of the settings could judge."
        else:
            why = ("the report's settings hold no [[criteria]] of days or reporting "
                   "intervals. Give the settings file with the limits to judge (--settings "
                   "FILE) to count the days and intervals above them.")
        sw.text(end + 1, 0, "No criteria were counted: " + why, "note", measure=False)


#: Sheet rows of one position's pair of charts (300 px charts and a gap; own choice).
CHART_BLOCK_ROWS = 16
#: Pairs of charts per printed A4 landscape page (the sheet is scaled to the page width).
#: Own choice, looked at in LibreOffice: three blocks fit with under a tenth of a page to
#: spare and a fourth was cut in two; two leave room for another program's rendering.
CHART_BLOCKS_PER_PAGE = 2


def _write_charts(wb: Any, sw: SheetWriter, doc: Mapping[str, Any], months_name: str,
                  years_name: str) -> None:
    """One chart of monthly and one of yearly Lden / Lnight per position (native charts)."""
    sw.text(0, 0, "Monthly and yearly Lden and Lnight per position", "title", measure=False)
    month_row = year_row = 1  # first data row of each position on its sheet
    top = 2
    lden_col, lnight_col = 4 + 3, 4 + 2  # Position, label, From, To, Lday, Levening, ...
    breaks: list[int] = []
    for k, position in enumerate(doc.get("positions") or []):
        if k and k % CHART_BLOCKS_PER_PAGE == 0:
            breaks.append(top)  # a printed page ends between positions, never in a chart
        n_months = len(position.get("months") or [])
        n_years = len(position.get("years") or [])
        for name, sheet, first, count, kind in (
                ("months", months_name, month_row, n_months, "line"),
                ("years", years_name, year_row, n_years, "column")):
            if count == 0:
                continue
            chart = wb.add_chart({"type": kind})
            last = first + count - 1
            for col, label in ((lden_col, "Lden"), (lnight_col, "Lnight")):
                chart.add_series({
                    "name": label,
                    "categories": [sheet, first, 1, last, 1],
                    "values": [sheet, first, col, last, col],
                    "marker": {"type": "circle"} if kind == "line" else None,
                })
            chart.set_title({"name": f"{position['position']}: {name}"})
            chart.set_y_axis({"name": "Level [dB]"})
            chart.set_legend({"position": "bottom"})
            chart.set_size({"width": 620, "height": 300})
            sw.ws.insert_chart(top, 0 if kind == "line" else 10, chart)
        top += CHART_BLOCK_ROWS
        month_row += n_months
        year_row += n_years
    if breaks:
        sw.ws.set_h_pagebreaks(breaks)


def write_archive_workbook(path: Path, doc: Mapping[str, Any]) -> None:
    """Write ``archive-report.xlsx`` from the report document.

    Parameters
    ----------
    path : pathlib.Path
        Where to write (the caller renames it into place).
    doc : dict
        The ``archive-report.json`` document.
    """
    wb = xlsxwriter.Workbook(str(path), WORKBOOK_OPTIONS)
    try:
        wb.set_properties({"title": "Sound monitoring archive report", "author": "surveytools",
                           "created": FIXED_CREATED})
        styles = Styles(wb)
        summary = SheetWriter(wb.add_worksheet("Summary"), styles)
        charts = SheetWriter(wb.add_worksheet("Charts"), styles)
        years = SheetWriter(wb.add_worksheet("Years"), styles)
        months = SheetWriter(wb.add_worksheet("Months"), styles)
        days = SheetWriter(wb.add_worksheet("Days"), styles)
        levels = SheetWriter(wb.add_worksheet("Levels"), styles)
        criteria = SheetWriter(wb.add_worksheet("Criteria"), styles)
        _write_summary(summary, doc)
        _table(years, 0, *_span_rows(doc, "years", "Year"))
        _table(months, 0, *_span_rows(doc, "months", "Month"))
        _write_days(days, doc)
        _write_levels(levels, doc)
        _write_criteria(criteria, doc)
        _write_charts(wb, charts, doc, "Months", "Years")
        for sheet in (years, months, days, levels, criteria):
            width = sum((sheet.set_widths or sheet.widths).values())
            print_setup(sheet.ws, width, header_rows=(0, 0), key_columns=2)
        for sheet in (summary, charts):
            sheet.ws.set_landscape()
            sheet.ws.set_paper(9)  # A4
            sheet.ws.fit_to_pages(1, 0)
        summary.ws.activate()
    finally:
        wb.close()
