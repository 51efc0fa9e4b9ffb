"""The Spectra sheet of a results workbook and the frequency lines of its Summary.

Formats only what the results document's ``spectral`` section and the assessments'
``spectrum_source_on`` / ``spectrum_residual`` hold: one table of band levels (a column per
period and assessment spectrum, a row per one-third-octave band) with a native line chart
of it (bands on a category axis, levels in dB), tonal bands marked in the table and on the
chart, the weighted totals below the bands, the tone list, the band-total check and the
basis of each assessment's tonal correction.

References
----------
.. [1] ISO 1996-2:2007 Annex D (one-third-octave tonal screening).
.. [2] IEC 61672-1:2013 (frequency weightings A and C).
.. [3] BS 4142:2014+A1:2019 (tonal correction of the rating level).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

from surveytools.outputs import display as d
from surveytools.outputs.book import Book
from surveytools.outputs.xlsx_style import (
    COLOUR_WARN_FILL,
    FMT_LEVEL,
    SheetWriter,
    finite_number,
    print_setup,
)

#: Sheet name (our own, plain).
SHEET_SPECTRA = "Spectra"

#: Period spectra in column order, with their display names.
PERIODS: tuple[tuple[str, str], ...] = (("day", "Day"), ("evening", "Evening"),
                                       ("night", "Night"))

#: Width of the "Tonal in" column [characters] (longer lists run on into the next cells).
_TONAL_IN_WIDTH = 44

#: The note above the table (our own wording).
SHEET_NOTE = (
    "One-third-octave band spectra (Z-weighted energy averages over valid time with a "
    "complete spectrum). Marked cells: the band holds a tone in that spectrum (exceeds both "
    "adjacent bands by 15 / 8 / 5 dB in 25-125 Hz / 160-400 Hz / 500 Hz-10 kHz; ISO "
    "1996-2:2007 Annex D). Totals: IEC 61672-1 A and C weights at the exact band "
    "frequencies. The chart's red diamonds mark tonal bands."
)
#: Height of a row holding a tonal-correction reason [pt] (three wrapped lines).
_REASON_ROW_HEIGHT_PT = 47.0

#: Width of the first column [characters] (band numbers, then the row labels below).
_FIRST_COLUMN_WIDTH = 24.0

#: First row of the band table (title note, then the header row).
_HEADER_ROW = 2


@dataclass(frozen=True)
class SpectrumColumn:
    """One spectrum of the table: its header and the document's summary of it."""

    header: str
    spectrum: Mapping[str, Any]


def spectrum_columns(doc: Mapping[str, Any]) -> list[SpectrumColumn]:
    """Every spectrum the document holds: periods, then each assessment's on / residual."""
    spectral = doc.get("spectral")
    columns: list[SpectrumColumn] = []
    if not isinstance(spectral, Mapping):
        return columns
    periods = spectral.get("periods") or {}
    for key, name in PERIODS:
        part = periods.get(key)
        if isinstance(part, Mapping):
            columns.append(SpectrumColumn(f"{name} LZeq [dB]", part))
    for a in doc.get("assessments") or []:
        for key, name in (("spectrum_source_on", "source on"), ("spectrum_residual", "residual")):
            part = a.get(key)
            if isinstance(part, Mapping):
                columns.append(SpectrumColumn(f"{a.get('name')}: {name} [dB]", part))
    return columns


def _hz(value: object) -> str:
    number = finite_number(value)
    if number is None:
        return str(value)
    return f"{number / 1000:g} kHz" if number >= 1000 else f"{number:g} Hz"


def summary_lines(doc: Mapping[str, Any]) -> list[tuple[str, bool]]:
    """Summary lines about frequency content: (text, is a flag); empty without band levels.

    One line per tone (band and period) and one per low-frequency flag, a line for a
    band-total mismatch, and a single all-clear line when nothing is flagged.
    """
    spectral = doc.get("spectral")
    if not isinstance(spectral, Mapping):
        return []
    lines: list[tuple[str, bool]] = []
    for tone in spectral.get("tones") or []:
        share = finite_number(tone.get("time_fraction"))
        largest = finite_number(tone.get("max_difference_db"))
        text = f"Tone: {_hz(tone.get('band_hz'))} band, {tone.get('period')}"
        details = []
        if share is not None:
            details.append(f"in {share:.0%} of the valid {tone.get('period')} time")
        if tone.get("in_period_average"):
            details.append("and in the period's average spectrum")
        if largest is not None:
            details.append(f"up to {largest:.1f} dB above both adjacent bands")
        lines.append((text + (" (" + ", ".join(details) + ")" if details else "")
                      + " - one-third-octave screening, ISO 1996-2 Annex D", True))
    periods = spectral.get("periods") or {}
    for key, name in PERIODS:
        part = periods.get(key)
        if isinstance(part, Mapping) and part.get("low_frequency"):
            difference = finite_number(part.get("LC_minus_LA"))
            shown = f"{difference:.1f}" if difference is not None else "?"
            lines.append((f"Low-frequency content: {name.lower()} LC - LA = {shown} dB "
                          f"(flagged at {spectral.get('low_frequency_threshold_db'):g} dB or "
                          "more, WHO 1999)", True))
    check = spectral.get("band_check") or {}
    if check.get("mismatch"):
        median = finite_number(check.get("median_difference_db"))
        lines.append((f"Band levels do not match the logged LAeq (median difference "
                      f"{median:+.1f} dB): check the band columns before relying on the "
                      "spectra", True))
    if not lines:
        lines.append(("No one-third-octave tone and no low-frequency flag in the period "
                      "spectra (details on the Spectra sheet).", False))
    return lines


def write_spectra_sheet(sw: SheetWriter, wb: Any, doc: Mapping[str, Any],
                        place_chart: Callable[[Any], None] | None = None) -> None:
    """Write the Spectra sheet (the caller adds it only when ``doc['spectral']`` is set).

    ``place_chart`` puts the spectra chart somewhere else (e.g. a sheet that gathers the
    workbook's charts); by default it goes on the Spectra sheet beside the table.
    """
    ws = sw.ws
    spectral = doc.get("spectral")
    if not isinstance(spectral, Mapping):
        return
    marked = wb.add_format({"num_format": FMT_LEVEL, "bold": True, "bg_color": COLOUR_WARN_FILL})
    bands = [finite_number(f) for f in spectral.get("bands_hz") or []]
    columns = spectrum_columns(doc)
    last_col = 3 + len(columns)
    sw.text(0, 0, SHEET_NOTE, "note", measure=False)  # wrapped across the table below
    thresholds = list(spectral.get("tone_thresholds_db") or [])
    headers = (["Band [Hz]"] + [c.header for c in columns]
               + ["Tone threshold [dB]", "Tone marker (chart) [dB]", "Tonal in"])
    sw.header(_HEADER_ROW, 0, headers)
    ws.freeze_panes(_HEADER_ROW + 1, 1)
    first = _HEADER_ROW + 1
    tonal_in: dict[int, list[str]] = {}
    marker: dict[int, float] = {}
    for k, band in enumerate(bands):
        r = first + k
        sw.number(r, 0, band)
        for j, column in enumerate(columns):
            levels = column.spectrum.get("LZeq") or []
            level = d.level(levels[k]) if k < len(levels) else None  # reported 0.1 dB
            tonal = band in (column.spectrum.get("tonal_bands_hz") or [])
            if tonal and level is not None:
                ws.write_number(r, 1 + j, level, marked)
                tonal_in.setdefault(k, []).append(column.header.replace(" [dB]", ""))
                marker[k] = max(marker.get(k, level), level)
            else:
                sw.number(r, 1 + j, level, "level")
        sw.number(r, 1 + len(columns), thresholds[k] if k < len(thresholds) else None,
                  "level")
        sw.number(r, 2 + len(columns), marker.get(k), "level")
        sw.text(r, 3 + len(columns), "; ".join(tonal_in.get(k, [])),
                "sev_warning" if k in tonal_in else "text", measure=False)
    last = first + len(bands) - 1

    row = last + 2
    totals = (("LAeq_from_bands", "LAeq from bands [dB]"), ("LCeq_from_bands",
              "LCeq from bands [dB]"), ("LC_minus_LA", "LC - LA [dB]"))
    for key, label in totals:
        sw.text(row, 0, label, "bold")
        for j, column in enumerate(columns):
            sw.number(row, 1 + j, d.level(column.spectrum.get(key)), "level_bold")
        row += 1
    sw.text(row, 0, "Low-frequency flag", "bold")
    for j, column in enumerate(columns):
        flagged = column.spectrum.get("low_frequency")
        sw.boolean(row, 1 + j, flagged, "sev_warning" if flagged else "text")
    row += 1
    sw.text(row, 0, "Valid time [h]", "bold")
    for j, column in enumerate(columns):
        valid = finite_number(column.spectrum.get("valid_s"))
        sw.number(row, 1 + j, None if valid is None else valid / 3600.0, "hours")
    row += 2
    row = _write_tones(sw, spectral, row)
    row = _write_band_check(sw, spectral, row)
    row_end = _write_tonal_bases(sw, doc, row, last_col)
    sw.fit_columns(minimum=9.0)
    sw.set_width(0, _FIRST_COLUMN_WIDTH)
    sw.set_width(3 + len(columns), _TONAL_IN_WIDTH)
    sw.header_height(_HEADER_ROW, 0, headers)
    sw.wrap_notes(last_col)
    print_setup(ws, sw.printed_width(last_col), (_HEADER_ROW, _HEADER_ROW), 1,
                last_row=row_end, last_col=last_col)

    if bands and columns:
        chart = wb.add_chart({"type": "line"})
        for j in range(len(columns)):
            chart.add_series({
                "name": [ws.name, _HEADER_ROW, 1 + j],
                "categories": [ws.name, first, 0, last, 0],
                "values": [ws.name, first, 1 + j, last, 1 + j],
                "marker": {"type": "circle", "size": 4},
            })
        if marker:
            col = 2 + len(columns)
            chart.add_series({
                "name": "Tone",
                "categories": [ws.name, first, 0, last, 0],
                "values": [ws.name, first, col, last, col],
                "line": {"none": True},
                "marker": {"type": "diamond", "size": 10,
                           "fill": {"color": "#C00000"}, "border": {"color": "#C00000"}},
            })
        chart.set_title({"name": "One-third-octave band spectra"})
        chart.set_x_axis({"name": "One-third-octave band [Hz]", "num_font": {"rotation": -45}})
        chart.set_y_axis({"name": "Level (Z) [dB]", "num_format": "0"})
        chart.set_legend({"position": "bottom"})
        chart.show_blanks_as("gap")
        if place_chart is not None:
            place_chart(chart)
        else:
            chart.set_size({"width": 900, "height": 460})
            ws.insert_chart(_HEADER_ROW, len(headers) + 1, chart, {"x_offset": 8})


def _write_tones(sw: SheetWriter, spectral: Mapping[str, Any], row: int) -> int:
    sw.text(row, 0, "Tones found (every reporting-interval spectrum and each period's average "
                    "spectrum screened)", "subtitle", measure=False)
    row += 1
    tones = list(spectral.get("tones") or [])
    if not tones:
        sw.text(row, 0, "No band passed the tone test.", "note", measure=False)
        return row + 2
    sw.header(row, 0, ["Band [Hz]", "Period", "Share of valid time", "In period average",
                       "Largest difference [dB]", "Threshold [dB]"])
    row += 1
    for tone in tones:
        sw.number(row, 0, tone.get("band_hz"))
        sw.text(row, 1, tone.get("period"))
        sw.number(row, 2, tone.get("time_fraction"), "percent")
        sw.boolean(row, 3, tone.get("in_period_average"))
        sw.number(row, 4, d.level(tone.get("max_difference_db")), "level")
        sw.number(row, 5, d.level(tone.get("threshold_db")), "level")
        row += 1
    return row + 1


def _write_band_check(sw: SheetWriter, spectral: Mapping[str, Any], row: int) -> int:
    check = spectral.get("band_check") or {}
    sw.text(row, 0, "Band levels against the logged LAeq (A-weighted band total minus LAeq, "
                    "per reporting interval)", "subtitle", measure=False)
    row += 1
    sw.text(row, 0, "Intervals compared", "bold")
    sw.number(row, 1, check.get("intervals"), "int")
    row += 1
    for label, key in (("Median difference [dB]", "median_difference_db"),
                       ("Median absolute difference [dB]", "median_absolute_difference_db"),
                       ("Largest absolute difference [dB]", "max_absolute_difference_db"),
                       ("Tolerance [dB]", "tolerance_db")):
        sw.text(row, 0, label, "bold")
        sw.number(row, 1, d.level(check.get(key)), "level")
        row += 1
    sw.text(row, 0, "Outcome", "bold")
    if check.get("mismatch"):
        sw.text(row, 1, "MISMATCH: check the band columns (Z-weighted? same channel and rows "
                        "as LAeq?)", "fail", measure=False)
    else:
        sw.text(row, 1, "consistent", "pass", measure=False)
    return row + 2


def _write_tonal_bases(sw: SheetWriter, doc: Mapping[str, Any], row: int, last_col: int
                       ) -> int:
    items = [a for a in doc.get("assessments") or [] if isinstance(a.get("tonal_basis"),
                                                                     Mapping)]
    if not items:
        return row
    sw.text(row, 0, "Tonal correction of each assessment", "subtitle", measure=False)
    row += 1
    sw.header(row, 0, ["Assessment", "Tonal correction [dB]", "Basis", "Why"])
    row += 1
    for a in items:
        basis = a["tonal_basis"]
        sw.text(row, 0, a.get("name"))
        sw.number(row, 1, d.level((a.get("corrections_db") or {}).get("tonal")), "level")
        sw.text(row, 2, basis.get("source"))
        reason = str(basis.get("reason") or "")
        sw.ws.merge_range(row, 3, row, max(last_col, 3), "", sw.styles.get("wrap"))
        sw.text(row, 3, reason, "wrap", measure=False)
        sw.ws.set_row(row, _REASON_ROW_HEIGHT_PT)
        row += 1
    return row + 1


def add(book: Book) -> None:
    """Add the Spectra sheet (only with band spectra); its chart goes on the Charts sheet."""
    if not isinstance(book.doc.get("spectral"), Mapping):
        return
    sw = book.sheet(SHEET_SPECTRA)
    write_spectra_sheet(sw, book.workbook, book.doc, place_chart=lambda chart: book.add_chart(
        chart, "One-third-octave band spectra (Spectra sheet): period and assessment "
               "spectra, tonal bands marked"))
