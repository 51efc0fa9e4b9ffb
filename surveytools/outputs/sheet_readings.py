"""The Readings sheet: every reading with every level column read and its exclusion reason.

The levels are the values as read (not rounded), so each row can be checked against the
input and the sheet filtered by reason; nothing is dropped. A long table is on screen
whole, but only its first rows are in the print area (a week at 1 min would print some
300 pages of raw readings); the sheet's note says so and how to print every row.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from surveytools.outputs import display as d
from surveytools.outputs.book import Book
from surveytools.outputs.xlsx_style import SHEET_MAX_ROWS, SheetWriter, print_setup

SHEET_READINGS = "Readings"

#: Prefix of the canonical band column names (``LZeq_1000Hz``).
_BAND = "LZeq_"

#: Readings printed whole up to this many rows (about five pages; own choice).
PRINT_ALL_MAX_ROWS = 200
#: Rows in the print area of a longer table: a first page as a sample (own choice).
PRINT_SAMPLE_ROWS = 25

_FIXED = {"row": "Row", "duration_s": "Duration [s]", "overload": "Overload",
          "operating": "Operating", "note": "Note", "reason": "Exclusion reason"}


def add(book: Book) -> None:
    """Add the Readings sheet when the per-reading table was handed over."""
    table = book.annotations
    if table is None:
        return
    doc = book.doc
    sw = book.sheet(SHEET_READINGS)
    ws = sw.ws
    bands = (doc.get("spectral") or {}).get("bands_hz") or []
    bands_left_out = bool(bands) and not any(str(c).startswith(_BAND) for c in table.columns)
    folded = (" Band levels are in a folded column group: open it with the + above the "
              "columns (folded columns are not printed)." if bands and not bands_left_out
              else "")
    left_out = (f" The {len(bands)} band levels of each reading are not repeated here for a "
                "log this long (the input holds them; the Spectra sheet has the spectra; "
                "run with --readings to write them too)." if bands_left_out else "")
    header_row = 1
    limit = SHEET_MAX_ROWS - header_row - 2
    n = min(len(table), limit)
    printed = (f" Printing: only the first {PRINT_SAMPLE_ROWS} of the {n:,} rows are in this "
               "sheet's print area; clear the print area to print every row."
               if n > PRINT_ALL_MAX_ROWS else "")
    sw.text(0, 0, "Every row of the input's readings sheet with the levels as read and its "
                  "exclusion reason (empty = valid). " + d.offset_note(doc) + left_out + folded
                  + printed,
            "note",
            measure=False)
    headers: list[str] = []
    plan: list[tuple[str, str]] = []  # (column, kind)
    for name in (str(c) for c in table.columns):
        if name == "row":
            headers.append("Row")
            plan.append((name, "int"))
        elif name == "start":
            headers += ["Start", "UTC offset"]
            plan.append((name, "stamp"))
        elif name == "duration_s":
            headers.append("Duration [s]")
            plan.append((name, "seconds"))
        elif name in _FIXED:
            headers.append(_FIXED[name])
            plan.append((name, "text"))
        elif pd.api.types.is_numeric_dtype(table[name].dtype) and not \
                pd.api.types.is_bool_dtype(table[name].dtype):
            is_level = name.startswith("L")
            headers.append(f"{name} [dB]" if is_level else name)
            plan.append((name, "level" if is_level else "number"))
        else:
            headers.append(name)
            plan.append((name, "text"))
    sw.header(header_row, 0, headers)
    ws.freeze_panes(header_row + 1, 0)
    col = 0
    first = header_row + 1
    for name, kind in plan:
        values = table[name].to_numpy()[:n]
        if kind in ("int", "seconds", "level", "number"):
            numeric = pd.to_numeric(pd.Series(values), errors="coerce").to_numpy(dtype=float)
            style = {"int": "int", "seconds": "seconds", "level": "reading_level",
                     "number": None}[kind]
            fmt = sw.styles.get(style)
            for pos in np.flatnonzero(np.isfinite(numeric)).tolist():
                ws.write_number(first + pos, col, float(numeric[pos]), fmt)
            sw.widths[col] = max(sw.widths.get(col, 0), 6)
            col += 1
        elif kind == "stamp":
            for idx, value in enumerate(values):
                off = sw.stamp(first + idx, col, value if isinstance(value, str) else None)
                if off:
                    ws.write_string(first + idx, col + 1, off)
            sw.widths[col + 1] = max(sw.widths.get(col + 1, 0), 7)
            col += 2
        else:
            for idx, value in enumerate(values):
                if value is None or value is pd.NA or (isinstance(value, float)
                                                       and not np.isfinite(value)):
                    continue
                sw.text(first + idx, col, value)
            col += 1
    last_row = header_row + max(n, 1)
    if len(table) > limit:
        sw.text(SHEET_MAX_ROWS - 1, 0, f"{len(table) - limit} more rows do not fit on one "
                "sheet; the exclusion spans cover them.", "note", measure=False)
    ws.autofilter(header_row, 0, last_row, max(len(headers) - 1, 0))
    sw.fit_columns(minimum=6.0, maximum=40.0)
    _fold_band_columns(sw, headers)
    last_col = max(len(headers) - 1, 0)
    sw.header_height(header_row, 0, headers)
    sw.wrap_notes(last_col)
    print_setup(ws, sw.printed_width(last_col), (header_row, header_row), 3,
                last_row=header_row + PRINT_SAMPLE_ROWS if printed else last_row,
                last_col=last_col)


def _fold_band_columns(sw: SheetWriter, headers: list[str]) -> None:
    """Put the band-level columns in one closed outline group.

    Thirty-odd band columns would make every printed page of a long sheet eleven pages
    wide; closed, they print not at all and open with one click on screen.
    """
    band_cols = [i for i, h in enumerate(headers) if h.startswith(_BAND)]
    if not band_cols:
        return
    for col in band_cols:
        sw.set_width(col, sw.set_widths.get(col) or 8.0, hidden=True, level=1)
    after = band_cols[-1] + 1
    if after < len(headers):
        sw.set_width(after, sw.set_widths.get(after) or 8.0, collapsed=True)
