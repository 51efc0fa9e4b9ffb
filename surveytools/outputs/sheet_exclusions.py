"""The Exclusions sheet: excluded time per reason, every excluded span, every unplaced row."""

from __future__ import annotations

import json

from surveytools.outputs import display as d
from surveytools.outputs.book import Book
from surveytools.outputs.xlsx_style import print_setup

SHEET_EXCLUSIONS = "Exclusions"


def add(book: Book) -> None:
    """Add the Exclusions sheet."""
    doc = book.doc
    sw = book.sheet(SHEET_EXCLUSIONS)
    ws = sw.ws
    spans = list(doc.get("exclusion_spans") or [])
    unplaced = list(doc.get("unplaced") or [])
    sw.text(0, 0, "Excluded time per reason, every excluded span of readings (consecutive "
                  "readings with the same reason) and every row that could not be placed in "
                  "time. " + d.offset_note(doc), "note", measure=False)
    row = 2
    sw.header(row, 0, ["Excluded for", "Excluded time [h]"])
    row += 1
    excluded = d.get(doc, "coverage", "excluded_s") or {}
    for reason in sorted(excluded):
        sw.text(row, 0, reason)
        sw.number(row, 1, d.hours(excluded[reason]), "hours1")
        row += 1
    if not excluded:
        sw.text(row, 0, "nothing", "note", measure=False)
        row += 1
    row += 1
    header_row = row
    headers = ["From", "To", "UTC offset", "First row", "Last row", "Rows", "Reason", "Scope",
               "Label"]
    sw.header(header_row, 0, headers)
    ws.freeze_panes(header_row + 1, 0)
    for i, sp in enumerate(spans):
        r = header_row + 1 + i
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
        ws.autofilter(header_row, 0, header_row + len(spans), len(headers) - 1)
    else:
        sw.text(header_row + 1, 0, "No readings were excluded.", "note", measure=False)
    uc = len(headers) + 1
    sw.header(header_row, uc, ["Unplaced row", "Reason", "Value as found"])
    for i, item in enumerate(unplaced):
        r = header_row + 1 + i
        sw.number(r, uc, item.get("row"), "int")
        sw.text(r, uc + 1, item.get("reason"))
        raw = item.get("raw")
        if raw is not None and not isinstance(raw, str):
            raw = json.dumps(raw, sort_keys=True, ensure_ascii=False, default=str)
        sw.text(r, uc + 2, raw)
    if not unplaced:
        sw.text(header_row + 1, uc, "none", "note", measure=False)
    sw.fit_columns(minimum=8.0, maximum=32.0)
    sw.set_width(0, 18.0)
    last_col = uc + 2
    last_row = header_row + max(len(spans), len(unplaced), 1)
    sw.header_height(header_row, 0, headers)
    sw.wrap_notes(last_col)
    print_setup(ws, sw.printed_width(last_col), (header_row, header_row), 0,
                last_row=last_row, last_col=last_col)
