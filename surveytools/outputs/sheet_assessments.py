"""The Assessments sheet: one column per source assessment, one row per figure.

Transposed, so a handful of assessments reads down one printed page.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

from surveytools.outputs import display as d
from surveytools.outputs.book import Book
from surveytools.outputs.xlsx_style import print_setup, wrapped_lines

SHEET_ASSESSMENTS = "Assessments"


#: Windows listed per assessment (the results JSON lists them all).
MAX_WINDOWS = 6
#: Width of one assessment's column [characters].
COLUMN_WIDTH = 30.0


def _windows(windows: object) -> str:
    if not isinstance(windows, list | tuple) or not windows:
        return ""
    parts = []
    for w in list(windows)[:MAX_WINDOWS]:
        if isinstance(w, list | tuple) and len(w) == 2:
            parts.append(f"{d.when_text(w[0])} to {d.when_text(w[1])}")
        else:
            parts.append(str(w))
    more = len(windows) - MAX_WINDOWS
    return "; ".join(parts) + (f"; and {more} more (results JSON)" if more > 0 else "")


Getter = Callable[[Mapping[str, Any]], object]


def add(book: Book) -> None:
    """Add the Assessments sheet."""
    doc = book.doc
    sw = book.sheet(SHEET_ASSESSMENTS)
    ws = sw.ws
    items = list(doc.get("assessments") or [])
    note = ("Background-corrected source assessments (ISO 1996-2 residual correction; "
            "BS 4142 rating and excess over background where used), one column each. "
            "Levels reported to 0.1 dB; windows are local clock.")
    if not items:  # say so, and how to get them, instead of an empty table of labels
        sw.text(0, 0, note + " No source assessments are configured for this position: add "
                "[[assessments]] to the settings (source-on and residual windows, or the "
                "readings' Operating yes/no column) to get background-corrected source "
                "levels, rating levels and the excess over background.", "note",
                measure=False)
        for col in range(3):
            sw.set_width(col, COLUMN_WIDTH)
        sw.wrap_notes(2)
        print_setup(ws, sw.printed_width(2), last_row=0, last_col=2)
        return
    sw.text(0, 0, note, "note", measure=False)
    whole = d.background_whole_db(doc)

    def corr(key: str) -> Getter:
        return lambda a: d.level(d.get(a, "corrections_db", key))

    rows: list[tuple[str, str, Getter]] = [
        ("Position", "text", lambda a: a.get("position")),
        ("Selection", "text", lambda a: a.get("selection")),
        ("Source-on windows", "text", lambda a: _windows(a.get("source_on"))),
        ("Residual windows", "text", lambda a: _windows(a.get("residual"))),
        ("Valid time, total [h]", "hours1", lambda a: d.hours(a.get("valid_s_total"))),
        ("Valid time, residual [h]", "hours1", lambda a: d.hours(a.get("valid_s_residual"))),
        ("LAeq total [dB]", "level", lambda a: d.level(a.get("LAeq_total"))),
        ("LAeq residual [dB]", "level", lambda a: d.level(a.get("LAeq_residual"))),
        ("Level difference [dB]", "level", lambda a: d.level(a.get("level_difference"))),
        ("Specific level [dB]", "level", lambda a: d.level(a.get("specific_level"))),
        ("Specific level basis", "text", lambda a: a.get("specific_basis")),
        ("Tonal correction [dB]", "level", corr("tonal")),
        ("Impulsive correction [dB]", "level", corr("impulsive")),
        ("Intermittency correction [dB]", "level", corr("intermittency")),
        ("Other correction [dB]", "level", corr("other")),
        ("Rating level [dB]", "level", lambda a: d.level(a.get("rating_level"))),
        ("Background period", "text", lambda a: a.get("background_period")),
        ("Background LA90 [dB]", "whole_db" if whole else "level",
         lambda a: d.level(a.get("background_LA90"), whole)),
        # where the background came from: source-free period, residual time, not available
        ("Background basis", "text", lambda a: a.get("background_basis")),
        ("Excess over background [dB]", "level",
         lambda a: d.level(a.get("excess_over_background"))),
        ("Impact indication", "text", lambda a: d.impact_text(a.get("impact_indication"))),
        ("Note", "text", lambda a: a.get("note")),
    ]
    header_row = 1
    names = ["Assessment", *[str(a.get("name") or f"#{i + 1}") for i, a in enumerate(items)]]
    sw.header(header_row, 0, names)
    ws.freeze_panes(header_row + 1, 1)
    sw.set_width(0, COLUMN_WIDTH)
    for j in range(len(items)):
        sw.set_width(1 + j, COLUMN_WIDTH)
    for i, (label, kind, get) in enumerate(rows):
        r = header_row + 1 + i
        sw.text(r, 0, label, "bold")
        lines = 1
        for j, a in enumerate(items):
            value = get(a)
            if kind == "text":
                text = "" if value is None else str(value)
                sw.text(r, 1 + j, text, "wrap", measure=False)
                lines = max(lines, wrapped_lines(text, COLUMN_WIDTH))
            else:
                sw.number(r, 1 + j, value, kind)
        if lines > 1:
            ws.set_row(r, 15.0 * lines + 2)
    last_col = len(items)
    last_row = header_row + len(rows)
    sw.header_height(header_row, 0, names)
    sw.wrap_notes(last_col)
    print_setup(ws, sw.printed_width(last_col), (header_row, header_row), 1,
                last_row=last_row, last_col=last_col)
