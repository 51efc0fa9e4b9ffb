"""The results workbook being written: the document, the shared formats and the Charts sheet.

Each sheet module of the results workbook (``sheet_*.py``) exposes ``add(book)``, which adds
its sheet(s) to :class:`Book` (or nothing, when the document holds nothing for it); the
order of sheets is the list in :mod:`surveytools.outputs.write`. Charts go on the Charts
sheet, one per printed page (:meth:`Book.add_chart`), so no chart is ever split across
pages and a reader finds them together right after the Summary.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import pandas as pd

from surveytools.outputs.xlsx_style import SheetWriter, Styles

SHEET_CHARTS = "Charts"

#: Rows of the Charts sheet per chart (one printed page each): a caption row, the chart
#: (:data:`CHART_HEIGHT_PX` at 20 px per default row) and a little room.
CHART_SLOT_ROWS = 32
#: Chart size on the Charts sheet [px]: about one A4 landscape page at 100 %.
CHART_WIDTH_PX = 1000
CHART_HEIGHT_PX = 560
#: Last column of the printed area: the chart's width in default 64-px columns and one more
#: for its axis labels, so nothing of a chart falls outside the printed area.
CHART_LAST_COL = -(-CHART_WIDTH_PX // 64) + 1


@dataclass
class Book:
    """The results workbook under construction.

    Parameters
    ----------
    workbook : xlsxwriter.Workbook
        The workbook.
    styles : Styles
        Shared formats.
    doc : dict
        The results document.
    annotations : pandas.DataFrame or None
        Per-reading table for the Readings sheet.
    """

    workbook: Any
    styles: Styles
    doc: Mapping[str, Any]
    annotations: pd.DataFrame | None = None
    charts: SheetWriter | None = None
    chart_count: int = 0
    sheets: list[SheetWriter] = field(default_factory=list)

    def sheet(self, name: str) -> SheetWriter:
        """Add a worksheet and return its writer."""
        sw = SheetWriter(self.workbook.add_worksheet(name), self.styles)
        self.sheets.append(sw)
        return sw

    def add_chart(self, chart: Any, caption: str) -> None:
        """Place ``chart`` on its own page of the Charts sheet, under ``caption``."""
        if self.charts is None:
            return
        ws = self.charts.ws
        top = self.chart_count * CHART_SLOT_ROWS
        self.charts.text(top, 0, caption, "note", measure=False)
        chart.set_size({"width": CHART_WIDTH_PX, "height": CHART_HEIGHT_PX})
        ws.insert_chart(top + 1, 0, chart, {"object_position": 3})
        self.chart_count += 1
        breaks = [i * CHART_SLOT_ROWS for i in range(1, self.chart_count)]
        ws.set_h_pagebreaks(breaks)
        ws.print_area(0, 0, self.chart_count * CHART_SLOT_ROWS - 1, CHART_LAST_COL)

