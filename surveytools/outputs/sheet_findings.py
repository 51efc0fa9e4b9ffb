"""The Findings sheet: every finding with severity, code, sheet, row, column and message."""

from __future__ import annotations

from surveytools.outputs.book import Book
from surveytools.outputs.xlsx_style import print_setup

SHEET_FINDINGS = "Findings"


def add(book: Book) -> None:
    """Add the Findings sheet."""
    doc = book.doc
    sw = book.sheet(SHEET_FINDINGS)
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
        sw.text(r, 5, f.get("message"), "wrap", measure=False)
    ws.autofilter(0, 0, max(len(findings), 1), len(headers) - 1)
    if not findings:
        sw.text(1, 0, "No findings.", "note", measure=False)
    cc = len(headers) + 1
    sw.header(0, cc, ["Code", "Count (all, including beyond the listing cap)"])
    counts = doc.get("finding_counts") or {}
    for i, code in enumerate(sorted(counts)):
        sw.text(1 + i, cc, code)
        sw.number(1 + i, cc + 1, counts[code], "int")
    sw.fit_columns(minimum=7.0, maximum=28.0)
    sw.set_width(5, 80.0)
    sw.set_width(cc + 1, 14.0)
    last_col = cc + 1
    sw.header_height(0, 0, headers)
    print_setup(ws, sw.printed_width(last_col), (0, 0),
                last_row=max(len(findings), len(counts), 1), last_col=last_col)
