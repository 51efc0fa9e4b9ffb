"""The Background sheet: how the background LA90 was found, its distribution, each interval.

The distribution chart goes on the Charts sheet.
"""

from __future__ import annotations

from collections.abc import Mapping

from surveytools.outputs import display as d
from surveytools.outputs.book import Book
from surveytools.outputs.xlsx_style import finite_number, print_setup, wrapped_lines

SHEET_BACKGROUND = "Background"

#: Width of the merged note cells beside the day/night LA90 (columns C:F) [characters].
_NOTE_WIDTH = 48.0


def add(book: Book) -> None:
    """Add the Background sheet (and the distribution chart)."""
    doc = book.doc
    sw = book.sheet(SHEET_BACKGROUND)
    ws = sw.ws
    bg = doc.get("background")
    sw.text(0, 0, "Background sound level: LA90 of reference intervals, combined per period. "
            + d.offset_note(doc), "note", measure=False)
    if not isinstance(bg, Mapping):
        sw.text(2, 0, "No background figures: the input gave none (see Findings).", "note",
                measure=False)
        sw.fit_columns(minimum=12.0)
        print_setup(ws, sw.printed_width(5))
        return
    whole = bg.get("method") == "mode"
    notes = d.how_derived(doc)
    row = 2
    row = sw.key_values(row, 0, [("Basis", bg.get("basis") or "not stated"),
                                 ("Method", bg.get("method"))])
    for period in ("day", "night"):
        part = bg.get(period)
        sw.text(row, 0, f"{period.capitalize()} LA90 [dB]", "bold")
        value = d.level(d.get(part, "LA90"), whole)
        if value is not None:
            sw.number(row, 1, value, "whole_db_bold" if whole else "level_bold")
        else:
            sw.text(row, 1, "not available", "note")
        note = (f"{d.get(part, 'n_intervals') or 0} reference intervals. "
                + notes[f"bg_{period}"])
        ws.merge_range(row, 2, row, 5, "", sw.styles.get("note_across"))
        sw.text(row, 2, note, "note_across", measure=False)
        ws.set_row(row, 15.0 * wrapped_lines(note, _NOTE_WIDTH) + 2)
        row += 1
    if whole:
        sw.text(row, 0, "LA90 reported to whole dB (mode of whole-dB values, BS 4142).",
                "note", measure=False)
        row += 1
    row += 1

    dist: dict[int, list[int]] = {}
    for j, period in enumerate(("day", "night")):
        for pair in d.get(bg, period, "distribution") or []:
            if isinstance(pair, list | tuple) and len(pair) == 2:
                lvl = finite_number(pair[0])
                count = finite_number(pair[1])
                if lvl is None or count is None:
                    continue
                key = int(d.level(lvl, whole=True) or 0)
                dist.setdefault(key, [0, 0])[j] += int(count)
    sw.text(row, 0, "Distribution of reference-interval LA90 (whole dB)", "subtitle",
            measure=False)
    row += 1
    sw.header(row, 0, ["LA90 [dB]", "Day intervals", "Night intervals"])
    row += 1
    first = row
    for lvl in sorted(dist):
        sw.number(row, 0, lvl, "whole_db")
        sw.number(row, 1, dist[lvl][0], "int")
        sw.number(row, 2, dist[lvl][1], "int")
        row += 1
    dist_last = row - 1
    row += 1

    ws.set_h_pagebreaks([row])  # the reference table starts on a page of its own
    sw.text(row, 0, "Reference intervals", "subtitle", measure=False)
    row += 1
    header_row = row
    headers = ["Start", "End", "UTC offset", "Period", "LA90 [dB]", "Valid time [min]"]
    sw.header(header_row, 0, headers)
    refs = list(bg.get("reference_intervals") or [])
    for i, ref in enumerate(refs):
        r = header_row + 1 + i
        off = sw.stamp(r, 0, ref.get("start"), "datetime_short")
        sw.stamp(r, 1, ref.get("end"), "datetime_short")
        sw.text(r, 2, off)
        sw.text(r, 3, ref.get("period"))
        sw.number(r, 4, d.level(ref.get("LA90")), "level")
        valid = finite_number(ref.get("valid_s"))
        sw.number(r, 5, None if valid is None else valid / 60.0, "seconds")
    last = header_row + max(len(refs), 1)
    if refs:
        ws.autofilter(header_row, 0, last, len(headers) - 1)
    sw.fit_columns(minimum=10.0, maximum=18.0)
    sw.set_width(0, 17.0)
    for col in range(2, 6):  # the notes above wrap within these widths
        sw.set_width(col, max(sw.set_widths.get(col, 10.0), 12.0))
    sw.header_height(header_row, 0, headers)
    sw.wrap_notes(len(headers) - 1)
    print_setup(ws, sw.printed_width(len(headers) - 1), (header_row, header_row),
                last_row=last, last_col=len(headers) - 1)
    if dist:
        chart = book.workbook.add_chart({"type": "column"})
        for j, name in enumerate(("Day", "Night")):
            chart.add_series({
                "name": name,
                "categories": [ws.name, first, 0, dist_last, 0],
                "values": [ws.name, first, 1 + j, dist_last, 1 + j],
                "gap": 50,
            })
        chart.set_title({"name": "Background LA90 distribution"})
        chart.set_x_axis({"name": "LA90 [dB]"})
        chart.set_y_axis({"name": "Reference intervals", "num_format": "0"})
        chart.set_legend({"position": "bottom"})
        book.add_chart(chart, "How often each whole-dB LA90 occurred among the reference "
                              "intervals (Background sheet).")
