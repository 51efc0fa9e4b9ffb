"""The annotated results workbook of one input (``X.results.xlsx``).

One module per sheet (``sheet_*.py``), each with ``add(book)``; :data:`SHEETS` is their
order: a one-page Summary a manager reads in a minute (verdict first), the Charts (one per
printed page, limits drawn as lines), then Days, Intervals, the longer-interval figures a
criterion was judged on (e.g. Hourly), Background, Assessments, Exclusions, Episodes (when
criteria are set), Readings (only
when annotated readings are handed over), Findings and Provenance. A new sheet (spectra,
episodes ...) is a new module in this package and one entry in :data:`SHEETS`.

Values are written as values; the workbook holds no formulas. Every text that may have come
from an input is written as text (see :mod:`surveytools.outputs.xlsx_style`). Every level a
person reads is the reported 0.1 dB value (:mod:`surveytools.outputs.display`). Every sheet
prints on A4 landscape: the Summary on one page, the others fitted to the page width with
their header rows repeated.

References
----------
.. [1] Directive 2002/49/EC, Annex I (Lden, Lday, Levening, Lnight).
.. [2] ISO 1996-1:2016 and ISO 1996-2:2017 (LAeq,T, LN, residual correction).
.. [3] IEC 61672-1:2013 (frequency and time weightings A, F).
.. [4] BS 4142:2014+A1:2019 (background sound level, rating level, whole-dB reporting).
.. [5] Directive 2003/10/EC, Art. 3 (occupational exposure action values).
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import pandas as pd
import xlsxwriter

from surveytools.outputs import (
    sheet_assessments,
    sheet_background,
    sheet_days,
    sheet_exclusions,
    sheet_findings,
    sheet_intervals,
    sheet_longer,
    sheet_provenance,
    sheet_readings,
    sheet_summary,
    spectra_sheet,
)
from surveytools.outputs.book import SHEET_CHARTS, Book
from surveytools.outputs.display import how_derived
from surveytools.outputs.episodes import SHEET_EPISODES, write_episodes_sheet
from surveytools.outputs.sheet_provenance import flatten_settings, library_versions
from surveytools.outputs.xlsx_style import (
    FIXED_CREATED,
    PRINT_FOOTER,
    WORKBOOK_OPTIONS,
    SheetWriter,
    Styles,
    parse_local_timestamp,
    print_setup,
)


def add_episodes(book: Book) -> None:
    """Add the Episodes sheet (:mod:`surveytools.outputs.episodes`) when criteria are set."""
    if not book.doc.get("criteria"):
        return
    sw = book.sheet(SHEET_EPISODES)
    write_episodes_sheet(sw, book.doc)
    last_col = 8  # the sheet's nine columns
    sw.wrap_notes(last_col)
    print_setup(sw.ws, sw.printed_width(last_col), (1, 1))

#: The sheets of a results workbook, in order. The Charts sheet is created right after the
#: Summary; the sheets after it place their charts there.
SHEETS: tuple[Callable[[Book], None], ...] = (
    sheet_summary.add,
    sheet_days.add,
    sheet_intervals.add,
    sheet_longer.add,
    sheet_background.add,
    sheet_assessments.add,
    spectra_sheet.add,
    sheet_exclusions.add,
    add_episodes,
    sheet_readings.add,
    sheet_findings.add,
    sheet_provenance.add,
)


def _charts_sheet(book: Book) -> SheetWriter:
    sw = book.sheet(SHEET_CHARTS)
    ws = sw.ws
    ws.set_landscape()
    ws.set_paper(9)  # A4
    ws.set_margins(left=0.4, right=0.4, top=0.5, bottom=0.6)
    ws.set_footer(PRINT_FOOTER)
    ws.fit_to_pages(1, 0)
    ws.hide_gridlines(2)
    return sw


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
        Per-reading table (``row``, ``start`` local ISO text, ``duration_s``, every level
        column read, ``reason``) for the Readings sheet; the sheet is left out when None.

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
        book = Book(wb, Styles(wb), doc, annotations)
        for i, add in enumerate(SHEETS):
            add(book)
            if i == 0:
                book.charts = _charts_sheet(book)
        if book.chart_count == 0 and book.charts is not None:
            book.charts.text(0, 0, "No charts: the input gave no figures to draw.", "note",
                             measure=False)
    finally:
        wb.close()


__all__ = ["SHEETS", "flatten_settings", "how_derived", "library_versions",
           "parse_local_timestamp", "write_results_workbook"]
