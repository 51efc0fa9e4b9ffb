"""Shared formats and safe cell writers for the result and overview workbooks (XlsxWriter).

Every text that may have come from an input (site, notes, labels, finding messages, file
names) goes through :meth:`SheetWriter.text`: XML-illegal characters are replaced, the text
is cut to the cell limit, it is written with ``write_string`` (never ``write``) and, when it
starts with a character a spreadsheet treats as a formula trigger, the cell gets a
quote-prefix format so it stays text even after someone edits it. Numbers that cannot be
computed (``None``, NaN, infinity) are written as empty cells, never as NaN.

References
----------
.. [1] OWASP, "CSV Injection" (formula triggers ``= + - @``, tab, CR, LF).
.. [2] W3C, Extensible Markup Language (XML) 1.0, §2.2 Characters (the legal ``Char`` set).
.. [3] Microsoft, "Excel specifications and limits" (32,767 characters per cell,
       1,048,576 rows per sheet).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from datetime import date, datetime
from typing import Any

from surveytools import constants
from surveytools.safetext import clean_text, is_formula_trigger

#: Most characters a cell holds. Microsoft, "Excel specifications and limits".
CELL_MAX_CHARS: int = constants.CELL_MAX_CHARS

#: Options every surveytools workbook is opened with: no string is ever guessed to be a
#: formula or a link, and NaN/inf can never become an error cell (we write blanks instead).
WORKBOOK_OPTIONS: dict[str, Any] = {
    "strings_to_formulas": False,
    "strings_to_urls": False,
    "nan_inf_to_errors": False,
    "strings_to_numbers": False,
}

#: Fixed creation time written into every workbook's properties, so a rerun gives the same
#: file (nothing time-dependent goes into the output).
FIXED_CREATED = datetime(2000, 1, 1, 0, 0, 0)

#: Rows in one worksheet. Microsoft, "Excel specifications and limits".
SHEET_MAX_ROWS = 1_048_576

#: Number formats.
FMT_LEVEL = "0.0"
FMT_WHOLE_DB = "0"
FMT_PERCENT = "0.0%"
FMT_DATETIME = "yyyy-mm-dd hh:mm:ss"
FMT_DATE = "yyyy-mm-dd"
FMT_HOURS = "0.00"
FMT_INT = "0"

# Colours of our own (plain, print-friendly).
COLOUR_HEADER_FILL = "#DCE6F0"
COLOUR_TITLE = "#1F3A5F"
COLOUR_FAIL_FILL = "#F8D0C8"
COLOUR_FAIL_TEXT = "#8B1A10"
COLOUR_PASS_FILL = "#D6EDD5"
COLOUR_WARN_FILL = "#FCEBC2"
COLOUR_INFO_FILL = "#E4E8EE"
COLOUR_GREY_TEXT = "#7F7F7F"
COLOUR_CAUTION_FILL = "#FFF4D6"
COLOUR_UNREADABLE_FILL = "#D9D2E9"
COLOUR_BORDER = "#A6A6A6"

#: Fill per severity / status word.
SEVERITY_FILLS: dict[str, str] = {
    "error": COLOUR_FAIL_FILL,
    "warning": COLOUR_WARN_FILL,
    "info": COLOUR_INFO_FILL,
    "errors": COLOUR_FAIL_FILL,
    "warnings": COLOUR_WARN_FILL,
    "ok": COLOUR_PASS_FILL,
    "unreadable": COLOUR_UNREADABLE_FILL,
}

#: Base format properties by style name.
_STYLE_PROPS: dict[str, dict[str, Any]] = {
    "text": {"valign": "top"},
    "wrap": {"valign": "top", "text_wrap": True},
    "bold": {"bold": True, "valign": "top"},
    "title": {"bold": True, "font_size": 14, "font_color": COLOUR_TITLE},
    "subtitle": {"bold": True, "font_size": 11, "font_color": COLOUR_TITLE},
    "header": {"bold": True, "bg_color": COLOUR_HEADER_FILL, "text_wrap": True,
               "valign": "top", "border": 1},
    "note": {"italic": True, "font_color": COLOUR_GREY_TEXT, "valign": "top"},
    "level": {"num_format": FMT_LEVEL, "valign": "top"},
    "level_bold": {"num_format": FMT_LEVEL, "bold": True, "valign": "top"},
    "level_headline": {"num_format": FMT_LEVEL, "bold": True, "font_size": 13, "valign": "top"},
    "level_grey": {"num_format": FMT_LEVEL, "italic": True, "font_color": COLOUR_GREY_TEXT,
                   "valign": "top"},
    "whole_db": {"num_format": FMT_WHOLE_DB, "valign": "top"},
    "whole_db_bold": {"num_format": FMT_WHOLE_DB, "bold": True, "valign": "top"},
    "percent": {"num_format": FMT_PERCENT, "valign": "top"},
    "hours": {"num_format": FMT_HOURS, "valign": "top"},
    "int": {"num_format": FMT_INT, "valign": "top"},
    # a number beside its label in a label | value list, aligned like the text values
    "value_left": {"align": "left", "valign": "top"},
    "seconds": {"num_format": "0.0", "valign": "top"},
    "datetime": {"num_format": FMT_DATETIME, "valign": "top"},
    "datetime_short": {"num_format": "yyyy-mm-dd hh:mm", "valign": "top"},
    "note_across": {"italic": True, "font_color": COLOUR_GREY_TEXT, "text_wrap": True,
                    "valign": "top"},
    "note_wrap": {"italic": True, "font_color": COLOUR_GREY_TEXT, "text_wrap": True,
                  "valign": "top", "font_size": 9},
    "date": {"num_format": FMT_DATE, "valign": "top"},
    "fail": {"bg_color": COLOUR_FAIL_FILL, "font_color": COLOUR_FAIL_TEXT, "bold": True,
             "valign": "top"},
    "pass": {"bg_color": COLOUR_PASS_FILL},
    "caution": {"bg_color": COLOUR_CAUTION_FILL, "text_wrap": True, "valign": "top"},
    "caution_bold": {"bg_color": COLOUR_CAUTION_FILL, "bold": True, "valign": "top"},
    "warning_line": {"bg_color": COLOUR_FAIL_FILL, "font_color": COLOUR_FAIL_TEXT,
                     "bold": True, "text_wrap": True, "valign": "top"},
    "link": {"font_color": "#1F4E9A", "underline": 1, "text_wrap": True, "valign": "top"},
    "sev_error": {"bg_color": COLOUR_FAIL_FILL, "valign": "top"},
    "sev_warning": {"bg_color": COLOUR_WARN_FILL, "valign": "top"},
    "sev_info": {"bg_color": COLOUR_INFO_FILL, "valign": "top"},
    "st_ok": {"bg_color": COLOUR_PASS_FILL},
    "st_warnings": {"bg_color": COLOUR_WARN_FILL},
    "st_errors": {"bg_color": COLOUR_FAIL_FILL},
    "st_unreadable": {"bg_color": COLOUR_UNREADABLE_FILL},
    # table cells with borders (columns never run together when printed)
    "td": {"valign": "top", "border": 1, "border_color": COLOUR_BORDER},
    "td_wrap": {"valign": "top", "text_wrap": True, "border": 1,
                "border_color": COLOUR_BORDER},
    "td_bold": {"valign": "top", "bold": True, "border": 1, "border_color": COLOUR_BORDER},
    "td_center": {"valign": "top", "align": "center", "border": 1,
                  "border_color": COLOUR_BORDER},
    "td_level": {"num_format": FMT_LEVEL, "valign": "top", "align": "center", "border": 1,
                 "border_color": COLOUR_BORDER},
    "td_level_bold": {"num_format": FMT_LEVEL, "valign": "top", "align": "center",
                      "bold": True, "border": 1, "border_color": COLOUR_BORDER},
    "td_whole_db_bold": {"num_format": FMT_WHOLE_DB, "valign": "top", "align": "center",
                         "bold": True, "border": 1, "border_color": COLOUR_BORDER},
    "td_hours": {"num_format": "0.0", "valign": "top", "align": "center", "border": 1,
                 "border_color": COLOUR_BORDER},
    "td_note": {"italic": True, "font_color": COLOUR_GREY_TEXT, "text_wrap": True,
                "valign": "top", "border": 1, "border_color": COLOUR_BORDER},
    "td_fail": {"valign": "top", "align": "center", "bold": True, "border": 1,
                "border_color": COLOUR_BORDER, "bg_color": COLOUR_FAIL_FILL,
                "font_color": COLOUR_FAIL_TEXT},
    "td_pass": {"valign": "top", "align": "center", "border": 1, "border_color": COLOUR_BORDER,
                "bg_color": COLOUR_PASS_FILL},
    # a figure above the limit it is judged against
    "level_fail": {"num_format": FMT_LEVEL, "bold": True, "bg_color": COLOUR_FAIL_FILL,
                   "font_color": COLOUR_FAIL_TEXT, "valign": "top"},
    "level_fail_grey": {"num_format": FMT_LEVEL, "italic": True, "bg_color": COLOUR_FAIL_FILL,
                        "font_color": COLOUR_FAIL_TEXT, "valign": "top"},
    "percent1": {"num_format": "0.0", "valign": "top"},
    "hours1": {"num_format": "0.0", "valign": "top"},
    "reading_level": {"num_format": "0.0#", "valign": "top"},
    # the verdict lines at the top of the Summary
    "verdict_label": {"bold": True, "font_size": 12, "valign": "vcenter"},
    "verdict_fail": {"bold": True, "font_size": 12, "bg_color": COLOUR_FAIL_FILL,
                     "font_color": COLOUR_FAIL_TEXT, "valign": "vcenter", "text_wrap": True},
    "verdict_pass": {"bold": True, "font_size": 12, "bg_color": COLOUR_PASS_FILL,
                     "valign": "vcenter", "text_wrap": True},
    "verdict_neutral": {"bold": True, "font_size": 12, "bg_color": COLOUR_INFO_FILL,
                        "valign": "vcenter", "text_wrap": True},
    "verdict_warn": {"bold": True, "font_size": 12, "bg_color": COLOUR_WARN_FILL,
                     "valign": "vcenter", "text_wrap": True},
    "warn_line": {"bg_color": COLOUR_WARN_FILL, "text_wrap": True, "valign": "top"},
    # wrapped, top-aligned outcome cells (overview rows)
    "wrap_fail": {"bg_color": COLOUR_FAIL_FILL, "font_color": COLOUR_FAIL_TEXT, "bold": True,
                  "text_wrap": True, "valign": "top"},
    "wrap_pass": {"bg_color": COLOUR_PASS_FILL, "text_wrap": True, "valign": "top"},
    # a short count text ("2 / 1") centred, apart from the right-aligned numbers beside it
    "count_text": {"align": "center", "valign": "top"},
    "count_text_fail": {"bg_color": COLOUR_FAIL_FILL, "font_color": COLOUR_FAIL_TEXT,
                        "bold": True, "align": "center", "valign": "top"},
    "wrap_ok": {"bg_color": COLOUR_PASS_FILL, "text_wrap": True, "valign": "top"},
    "wrap_warnings": {"bg_color": COLOUR_WARN_FILL, "text_wrap": True, "valign": "top"},
    "wrap_errors": {"bg_color": COLOUR_FAIL_FILL, "text_wrap": True, "valign": "top"},
    "wrap_unreadable": {"bg_color": COLOUR_UNREADABLE_FILL, "text_wrap": True,
                        "valign": "top"},
}


def safe_cell_text(value: object) -> str:
    """Return text that can be stored in one cell exactly as a person should see it.

    Characters XML cannot carry are replaced with U+FFFD and the text is cut to
    :data:`CELL_MAX_CHARS` (:func:`surveytools.safetext.clean_text`; the JSON keeps the
    full text).

    Parameters
    ----------
    value : object
        Any value; ``None`` becomes the empty string, others are converted with ``str``.

    Returns
    -------
    str
        Cleaned, length-limited text.
    """
    if value is None:
        return ""
    text = value if isinstance(value, str) else str(value)
    cleaned, _changes = clean_text(text, CELL_MAX_CHARS)
    return cleaned


def is_trigger_led(text: str) -> bool:
    """Return True when ``text`` starts with a formula trigger (:mod:`surveytools.safetext`)."""
    return text != "" and is_formula_trigger(text)


def finite_number(value: object) -> float | None:
    """Return ``value`` as a finite float, or None (None, NaN, inf, bools and text give None)."""
    if value is None or isinstance(value, bool):
        return None
    if isinstance(value, int | float):
        v = float(value)
        return v if math.isfinite(v) else None
    try:
        v = float(value)  # type: ignore[arg-type]  # numpy scalars
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def parse_local_timestamp(text: object) -> tuple[datetime | None, str]:
    """Split an ISO 8601 timestamp into a naive local date-time and its UTC offset text.

    Parameters
    ----------
    text : object
        ``"2026-06-10T12:00:00+02:00"`` (offset or ``Z`` optional) or a ``"YYYY-MM-DD HH:MM"``
        local-clock text.

    Returns
    -------
    tuple of (datetime or None, str)
        The wall-clock date-time without zone (None when the text is not a timestamp) and
        the offset as ``"+02:00"`` (empty when the text carries none).
    """
    if not isinstance(text, str) or not text:
        return None, ""
    try:
        stamp = datetime.fromisoformat(text)
    except ValueError:
        return None, ""
    offset = ""
    if stamp.utcoffset() is not None:
        delta = stamp.utcoffset()
        assert delta is not None
        minutes = int(delta.total_seconds() // 60)
        sign = "+" if minutes >= 0 else "-"
        minutes = abs(minutes)
        offset = f"{sign}{minutes // 60:02d}:{minutes % 60:02d}"
    return stamp.replace(tzinfo=None), offset


def parse_date(text: object) -> date | None:
    """Return a ``date`` from ``"YYYY-MM-DD"`` text, or None."""
    if not isinstance(text, str):
        return None
    try:
        return date.fromisoformat(text)
    except ValueError:
        return None


class Styles:
    """Lazily created, cached XlsxWriter formats, each also available with a quote prefix.

    Parameters
    ----------
    workbook : xlsxwriter.Workbook
        The workbook the formats belong to.
    """

    def __init__(self, workbook: Any) -> None:
        self._workbook = workbook
        self._cache: dict[tuple[str | None, bool], Any] = {}

    def get(self, name: str | None, quote: bool = False) -> Any:
        """Return the format ``name`` (None: default), optionally with ``quote_prefix``."""
        key = (name, quote)
        if key not in self._cache:
            props = dict(_STYLE_PROPS[name]) if name is not None else {}
            if quote:
                props["quote_prefix"] = True
            self._cache[key] = self._workbook.add_format(props) if props else None
        return self._cache[key]


#: Height of one line of header text [pt] (the default row height of a spreadsheet).
HEADER_LINE_HEIGHT_PT = 15.0


#: Widest table (sum of column widths, in characters of the default 11-pt font) still fitted
#: one A4 landscape page wide. The printable width with our margins is about 784 pt; a
#: column of width w takes about 0.75 * (7 w + 5) pt at 100 % (more in LibreOffice's
#: default font: 215 characters printed 11-pt text at 6.6 pt there), so 190 characters keep
#: 11-pt text at about 7 pt or more. Wider tables flow over pages at full size with their
#: key columns repeated (shrinking them further would make them unreadable).
PRINT_FIT_MAX_CHARS = 190

#: Default column width of a spreadsheet (characters), for columns we did not size.
DEFAULT_COLUMN_WIDTH = 8.43

#: Footer of every printed page (our own wording).
PRINT_FOOTER = "&L&8Indicative results - see the cautions on the Summary&R&8&A - page &P of &N"


def print_setup(ws: Any, printed_width: float, header_rows: tuple[int, int] | None = None,
                key_columns: int = 0, last_row: int | None = None,
                last_col: int | None = None) -> bool:
    """Print a sheet landscape on A4: fitted one page wide when it can stay legible.

    Parameters
    ----------
    ws : xlsxwriter.worksheet.Worksheet
        The sheet.
    printed_width : float
        Sum of the widths of the printed columns [characters].
    header_rows : tuple of int, optional
        First and last header row (0-based), repeated at the top of every page.
    key_columns : int
        Leading columns repeated on every page when the sheet is too wide to fit.
    last_row, last_col : int, optional
        Print area (from A1) when given.

    Returns
    -------
    bool
        True when the sheet is fitted one page wide.
    """
    ws.set_landscape()
    ws.set_paper(9)  # A4
    ws.set_margins(left=0.4, right=0.4, top=0.5, bottom=0.6)
    ws.set_footer(PRINT_FOOTER)
    fitted = printed_width <= PRINT_FIT_MAX_CHARS
    if fitted:
        ws.fit_to_pages(1, 0)
    elif key_columns > 0:
        ws.repeat_columns(0, key_columns - 1)
    if header_rows is not None:
        ws.repeat_rows(header_rows[0], header_rows[1])
    if last_row is not None and last_col is not None:
        ws.print_area(0, 0, last_row, last_col)
    return fitted


def wrapped_lines(text: str, width_chars: float) -> int:
    """Return how many lines ``text`` takes when wrapped at word boundaries (estimate)."""
    room = max(width_chars - 1.5, 1.0)
    lines = 0
    for part in text.splitlines() or [""]:
        current = 0.0
        lines += 1
        for word in part.split():
            need = len(word) if current == 0 else current + 1 + len(word)
            if need <= room or current == 0:
                current = need
                while current > room:  # a word longer than the column breaks
                    lines += 1
                    current -= room
            else:
                lines += 1
                current = len(word)
    return lines


def text_lines(text: str, width_chars: float) -> int:
    """Return how many lines ``text`` wraps to in a column ``width_chars`` wide (estimate).

    Average text in the default proportional font is a little narrower than the digit
    width the column unit counts, so a line holds about ``width_chars`` characters; the
    estimate is on the safe (taller) side.
    """
    total = 0
    for part in text.splitlines() or [""]:
        total += max(1, math.ceil(len(part) / max(width_chars - 1.0, 1.0)))
    return total


@dataclass
class SheetWriter:
    """One worksheet plus the widths its columns need.

    Parameters
    ----------
    ws : xlsxwriter.worksheet.Worksheet
        The worksheet.
    styles : Styles
        Shared formats.
    """

    ws: Any
    styles: Styles
    widths: dict[int, float] = field(default_factory=dict)
    #: Columns whose width is not measured (long wrapped notes).
    fixed_widths: dict[int, float] = field(default_factory=dict)
    #: Widths set so far (for the print layout).
    set_widths: dict[int, float] = field(default_factory=dict)
    #: The note in the first cell (A1), wrapped across the table at the end.
    notes: dict[int, str] = field(default_factory=dict)

    def _measure(self, col: int, chars: int) -> None:
        if chars > self.widths.get(col, 0):
            self.widths[col] = chars

    def text(self, row: int, col: int, value: object, style: str | None = "text",
             measure: bool = True) -> None:
        """Write ``value`` as text (never a formula); trigger-led text gets a quote prefix."""
        text = safe_cell_text(value)
        if text == "":
            self.blank(row, col, style)
            return
        fmt = self.styles.get(style, quote=is_trigger_led(text))
        self.ws.write_string(row, col, text, fmt)
        if style == "note" and row == 0 and col == 0 and not measure:
            self.notes[row] = text
        if measure:
            longest = max((len(part) for part in text.splitlines()), default=0)
            self._measure(col, longest)

    def blank(self, row: int, col: int, style: str | None = None) -> None:
        """Write an empty cell (kept only when it has a format)."""
        fmt = self.styles.get(style)
        if fmt is not None:
            self.ws.write_blank(row, col, None, fmt)

    def number(self, row: int, col: int, value: object, style: str | None = None) -> bool:
        """Write a finite number; None/NaN/inf leave the cell empty. Return True if written."""
        v = finite_number(value)
        if v is None:
            self.blank(row, col, style)
            return False
        self.ws.write_number(row, col, v, self.styles.get(style))
        self._measure(col, len(f"{v:.1f}") if abs(v) < 1e6 else 12)
        return True

    def boolean(self, row: int, col: int, value: object, style: str | None = "text") -> None:
        """Write ``yes``/``no`` text for a bool; empty for anything else."""
        if isinstance(value, bool):
            self.text(row, col, "yes" if value else "no", style)
        else:
            self.blank(row, col, style)

    def stamp(self, row: int, col: int, value: object, style: str = "datetime") -> str:
        """Write an ISO timestamp as a real date-time cell; return its UTC offset text.

        Text that is not a timestamp is written as text, so nothing is lost.
        """
        stamp, offset = parse_local_timestamp(value)
        if stamp is None:
            self.text(row, col, value)
            return ""
        self.ws.write_datetime(row, col, stamp, self.styles.get(style))
        self._measure(col, len(FMT_DATETIME))
        return offset

    def day(self, row: int, col: int, value: object) -> None:
        """Write ``"YYYY-MM-DD"`` as a real date cell (text if it is not a date)."""
        d = parse_date(value)
        if d is None:
            self.text(row, col, value)
            return
        self.ws.write_datetime(row, col, datetime(d.year, d.month, d.day), self.styles.get("date"))
        self._measure(col, len(FMT_DATE))

    def header(self, row: int, col: int, names: Sequence[str], style: str = "header") -> None:
        """Write a header row of our own column names (tall enough for wrapped names)."""
        lines = 1
        for i, name in enumerate(names):
            self.ws.write_string(row, col + i, name, self.styles.get(style))
            longest = min(max(len(w) for w in name.split()), 40) + 2
            self._measure(col + i, longest)
            # The column is at least `longest` wide; a longer name wraps onto more lines.
            lines = max(lines, min(3, -(-len(name) // max(longest, 8))))
        if lines > 1:
            self.ws.set_row(row, HEADER_LINE_HEIGHT_PT * lines)

    def key_values(self, row: int, col: int, pairs: Iterable[tuple[str, object]],
                   value_style: str | None = "text") -> int:
        """Write ``label | value`` rows; return the next free row."""
        for label, value in pairs:
            self.ws.write_string(row, col, label, self.styles.get("bold"))
            self._measure(col, len(label))
            if isinstance(value, bool):
                self.boolean(row, col + 1, value, value_style)
            elif isinstance(value, int | float):
                self.number(row, col + 1, value,
                            value_style if value_style != "text" else "value_left")
            else:
                self.text(row, col + 1, value, value_style)
            row += 1
        return row

    def fit_columns(self, minimum: float = 6.0, maximum: float = 60.0,
                    first_col: int = 0) -> None:
        """Set every measured column's width (characters), within ``[minimum, maximum]``."""
        for col in sorted(set(self.widths) | set(self.fixed_widths)):
            if col < first_col:
                continue
            width = self.fixed_widths.get(col)
            if width is None:
                width = min(max(self.widths[col] + 1.5, minimum), maximum)
            self.set_width(col, width)

    def set_width(self, col: int, width: float, hidden: bool = False, level: int = 0,
                  collapsed: bool = False) -> None:
        """Set one column's width [characters] and remember it for the print layout.

        ``level`` puts the column in an outline group (a spreadsheet shows a ``+`` above the
        columns to open it); ``collapsed`` marks the column after a closed group.
        """
        options: dict[str, Any] = {}
        if hidden:
            options["hidden"] = True
        if level:
            options["level"] = level
        if collapsed:
            options["collapsed"] = True
        self.ws.set_column(col, col, width, None, options or None)
        self.set_widths[col] = 0.0 if hidden else width

    def header_height(self, row: int, col: int, names: Sequence[str], bold: bool = True
                      ) -> None:
        """Set a header row tall enough for every name wrapped in its final column width."""
        lines = 1
        for i, name in enumerate(names):
            width = self.set_widths.get(col + i, DEFAULT_COLUMN_WIDTH)
            if width <= 0:
                continue
            # bold text is a little wider than the digit width the column unit counts
            lines = max(lines, wrapped_lines(name, (width + 1.0) / (1.05 if bold else 1.0)))
        self.ws.set_row(row, HEADER_LINE_HEIGHT_PT * lines + 2)

    def wrap_notes(self, last_col: int) -> None:
        """Wrap each first-column note across columns ``0..last_col`` (nothing runs off)."""
        width = self.printed_width(last_col)
        for row, text in self.notes.items():
            if last_col > 0:
                self.ws.merge_range(row, 0, row, last_col, "", self.styles.get("note_across"))
            self.ws.write_string(row, 0, text, self.styles.get("note_across",
                                                                quote=is_trigger_led(text)))
            lines = wrapped_lines(text, width * 1.05)
            if lines > 1:
                self.ws.set_row(row, HEADER_LINE_HEIGHT_PT * lines + 2)

    def printed_width(self, last_col: int) -> float:
        """Return the summed width of columns ``0..last_col`` [characters]."""
        return sum(self.set_widths.get(c, DEFAULT_COLUMN_WIDTH) for c in range(last_col + 1))


def cautions_lines() -> list[str]:
    """Return the cautions every surveytools workbook carries (our own wording)."""
    action = f"{constants.LEX8H_LOWER_ACTION_DB:.0f}"
    return [
        "These results are indicative. They come from an automated calculation over the "
        "logged data and have not been checked by a person.",
        "The applicable local standard and regulations govern the measurement method and "
        "the assessment; where they differ from the methods used here, they prevail.",
        "A competent person (licensed, where the jurisdiction requires it) must review and "
        "sign off these figures before they are used for planning or enforcement decisions.",
        f"Levels at or above occupational action values (lower exposure action value "
        f"LEX,8h = {action} dB(A), Directive 2003/10/EC) call for hearing protection and an "
        "occupational noise assessment; these environmental figures are not an exposure "
        "assessment. Defer to local codes.",
    ]


def occupational_warning(levels_db: Iterable[object]) -> str | None:
    """Return the warning line when any level reaches the lower action value, else None.

    Parameters
    ----------
    levels_db : iterable
        LAeq values (period and interval equivalent levels) found in the results. [dB]

    Returns
    -------
    str or None
        Warning text naming the highest level, or None when all are below
        :data:`surveytools.constants.LEX8H_LOWER_ACTION_DB`.
    """
    finite = [v for v in (finite_number(x) for x in levels_db) if v is not None]
    if not finite:
        return None
    top = max(finite)
    if top < constants.LEX8H_LOWER_ACTION_DB:
        return None
    return (
        f"WARNING: an equivalent level of {top:.1f} dB(A) in these results reaches or exceeds "
        f"{constants.LEX8H_LOWER_ACTION_DB:.0f} dB(A), the lower exposure action value (LEX,8h) of "
        "Directive 2003/10/EC, for anyone exposed to it for 8 hours. People working at this "
        "position may need hearing protection and an occupational noise assessment. Follow "
        "local codes."
    )


def severity_counts(findings: Sequence[Mapping[str, Any]],
                    finding_counts: Mapping[str, Any] | None) -> dict[str, int]:
    """Count findings by severity, including those beyond the per-code cap.

    The stored list gives each code's severity; ``finding_counts`` gives its full count.
    Codes only in the list (``findings-truncated``) are counted from the list.
    """
    counts = {"error": 0, "warning": 0, "info": 0}
    code_severity: dict[str, str] = {}
    listed: dict[str, int] = {}
    for f in findings:
        code = str(f.get("code"))
        sev = str(f.get("severity"))
        # a code has one severity; keep the most serious one seen
        if code not in code_severity or _rank(sev) < _rank(code_severity[code]):
            code_severity[code] = sev
        listed[code] = listed.get(code, 0) + 1
    full = dict(finding_counts or {})
    for code, sev in code_severity.items():
        n = full.get(code)
        n_int = int(n) if isinstance(n, int) and n >= listed[code] else listed[code]
        if sev in counts:
            counts[sev] += n_int
    return counts


def _rank(severity: str) -> int:
    return {"error": 0, "warning": 1, "info": 2}.get(severity, 3)

