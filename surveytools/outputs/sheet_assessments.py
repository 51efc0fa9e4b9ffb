"""The Assessments sheet: one column per source assessment, one row per figure.

Transposed, so a handful of assessments reads down one printed page.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

from surveytools.outputs import display as d
from surveytools.outputs.book import Book
from surveytools.outputs.xlsx_style import SheetWriter, print_setup

SHEET_ASSESSMENTS = "Assessments"


def _windows(windows: object) -> str:
    if not isinstance(windows, list | tuple) or not windows:
        return ""
    parts = []
    for w in windows:
        if isinstance(w, list | tuple) and len(w) == 2:
            parts.append(f"{d.when_text(w[0])} to {d.when_text(w[1])}")
        else:
            parts.append(str(w))
    return "; ".join(parts)


Writer = Callable[[SheetWriter, int, int, Mapping[str, Any]], None]


def _txt(key: str) -> Writer:
    return lambda sw, r, c, a: sw.text(r, c, a.get(key), "wrap", measure=False)


def _lvl(key: str, whole: bool = False) -> Writer:
    style = "whole_db" if whole else "level"
    return lambda sw, r, c, a: (sw.number(r, c, d.level(a.get(key), whole), style), None)[1]


def _corr(key: str) -> Writer:
    return lambda sw, r, c, a: (sw.number(r, c, d.level(d.get(a, "corrections_db", key)),
                                          "level"), None)[1]


def _hrs(key: str) -> Writer:
    return lambda sw, r, c, a: (sw.number(r, c, d.hours(a.get(key)), "hours1"), None)[1]


def add(book: Book) -> None:
    """Add the Assessments sheet."""
    doc = book.doc
    sw = book.sheet(SHEET_ASSESSMENTS)
    ws = sw.ws
    items = list(doc.get("assessments") or [])
    sw.text(0, 0, "Background-corrected source assessments (ISO 1996-2 residual correction; "
                  "BS 4142 rating and excess over background where used), one column each. "
                  "Levels reported to 0.1 dB; windows are local clock.", "note", measure=False)
    whole = d.background_whole_db(doc)
    rows: list[tuple[str, Writer]] = [
        ("Position", _txt("position")), ("Selection", _txt("selection")),
        ("Source-on windows", lambda sw, r, c, a: sw.text(r, c, _windows(a.get("source_on")),
                                                          "wrap", measure=False)),
        ("Residual windows", lambda sw, r, c, a: sw.text(r, c, _windows(a.get("residual")),
                                                         "wrap", measure=False)),
        ("Valid time, total [h]", _hrs("valid_s_total")),
        ("Valid time, residual [h]", _hrs("valid_s_residual")),
        ("LAeq total [dB]", _lvl("LAeq_total")), ("LAeq residual [dB]", _lvl("LAeq_residual")),
        ("Level difference [dB]", _lvl("level_difference")),
        ("Specific level [dB]", _lvl("specific_level")),
        ("Specific level basis", _txt("specific_basis")),
        ("Tonal correction [dB]", _corr("tonal")), ("Impulsive correction [dB]",
                                                    _corr("impulsive")),
        ("Intermittency correction [dB]", _corr("intermittency")),
        ("Other correction [dB]", _corr("other")),
        ("Rating level [dB]", _lvl("rating_level")),
        ("Background period", _txt("background_period")),
        ("Background LA90 [dB]", _lvl("background_LA90", whole)),
        ("Excess over background [dB]", _lvl("excess_over_background")),
        ("Impact indication", lambda sw, r, c, a: sw.text(
            r, c, d.impact_text(a.get("impact_indication")), "wrap", measure=False)),
        ("Note", _txt("note")),
    ]
    header_row = 1
    sw.header(header_row, 0, ["Assessment", *[str(a.get("name") or f"#{i + 1}")
                                              for i, a in enumerate(items)]])
    ws.freeze_panes(header_row + 1, 1)
    for i, (label, _w) in enumerate(rows):
        sw.text(header_row + 1 + i, 0, label, "bold")
    if not items:
        sw.text(header_row + 1, 1, "No source assessments are configured.", "note",
                measure=False)
    for j, a in enumerate(items):
        for i, (_label, write) in enumerate(rows):
            write(sw, header_row + 1 + i, 1 + j, a)
        sw.set_width(1 + j, 30.0)
    sw.set_width(0, 30.0)
    last_col = max(len(items), 1)
    last_row = header_row + len(rows)
    print_setup(ws, sw.printed_width(last_col), (header_row, header_row), 1,
                last_row=last_row, last_col=last_col)
