"""Read a CSV readings log (for logs beyond a sheet's 1,048,576 rows) into a RawWorkbook.

The CSV holds one readings table: optional title lines, then a header row (found as in
workbooks, with the same vocabulary), then data. Accepted: UTF-8 with or without a BOM;
comma, semicolon or tab delimiter (detected from the header row); decimal point only, no
thousands separators (``"55,2"`` or ``"1,234.5"`` in a level column are kept as text cells,
and validation reports them). Time stamps are ISO 8601 text (``2026-07-01 22:00:00`` or
``2026-07-01T22:00:00.100``); other spellings are kept as text cells.

Locations: the table's sheet name is the file stem (``east_gate`` for ``east_gate.csv``);
rows are record numbers counted from 1 with the header included (as a spreadsheet program
shows the file), columns are letters A, B, ... A CSV carries no Survey sheet:
``RawWorkbook.survey`` is None and validation takes position, site, time zone and clock
from ``settings.survey``.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from surveytools import constants as const
from surveytools.debuglog import log_raw
from surveytools.errors import WorkbookError
from surveytools.inputs import columns as cols
from surveytools.inputs.preflight import column_letters
from surveytools.inputs.raw import RawColumn, RawTable, RawWorkbook
from surveytools.inputs.read import HEADER_SEARCH_ROWS, source_info
from surveytools.safetext import clean_text, has_illegal_characters
from surveytools.settings import Settings
from surveytools.validation.findings import Finding, Severity

#: Largest CSV accepted [bytes]; a week of 100 ms rows with 4 columns is ~250 MB.
MAX_CSV_BYTES = 2_000_000_000
_DELIMITERS = (",", ";", "\t")
_TIME_ONLY_DAY = "1899-12-31 "


def read_csv_table(path: str | Path, settings: Settings | None = None,
                   role: str = "readings") -> RawWorkbook:
    """Read a CSV readings log (or, with ``role="weather"``, a CSV of weather intervals).

    Parameters
    ----------
    path : str or Path
        The CSV file (read-only).
    settings : Settings, optional
        Uses ``settings.column_map``.
    role : {"readings", "weather"}
        Which header vocabulary finds the header row, and which slot gets the table.

    Returns
    -------
    RawWorkbook
        ``readings`` (or ``weather``) holds the table (sheet name = file stem); ``survey``
        is None.

    Raises
    ------
    WorkbookError
        ``file-empty``, ``file-too-large``, ``csv-encoding`` (not UTF-8) or
        ``csv-unreadable`` (malformed quoting).
    """
    settings = settings or Settings()
    vocabulary = cols.WEATHER_COLUMNS if role == "weather" else cols.READINGS_COLUMNS
    p = Path(path)
    size = p.stat().st_size
    if size == 0:
        raise WorkbookError("file-empty", "The CSV file is empty (0 bytes). Export it again.")
    if size > MAX_CSV_BYTES:
        raise WorkbookError("file-too-large", f"The CSV file is {size / 1e6:.0f} MB; the limit is "
                            f"{MAX_CSV_BYTES / 1e6:.0f} MB. Split the log into several files.")
    source = source_info(p)
    sheet = p.stem
    findings: list[Finding] = []
    found = _header(p, settings, vocabulary)
    if found is None:
        findings.append(Finding(
            "header-missing", Severity.ERROR,
            f"No header row was found in the first {HEADER_SEARCH_ROWS} lines of the CSV file. "
            "Put the column names (e.g. Start, LAeq) in one line above the data.", sheet=sheet))
        return RawWorkbook(source=source, readings=None, findings=findings)
    delimiter, best, headers = found
    try:
        frame = pd.read_csv(p, sep=delimiter, header=None, skiprows=best + 1, dtype=str,
                            keep_default_na=False, na_filter=False, encoding="utf-8-sig",
                            names=range(max(len(headers), 1)), index_col=False,
                            skip_blank_lines=False, engine="c")
    except (pd.errors.ParserError, UnicodeDecodeError, ValueError) as exc:
        code = "csv-encoding" if isinstance(exc, UnicodeDecodeError) else "csv-unreadable"
        log_raw(f"reading {p}", exc)  # the library's own words: debug log only
        why = ("it is not UTF-8 text" if isinstance(exc, UnicodeDecodeError)
               else "a line has more fields than the header, an unclosed quote or a binary part")
        raise WorkbookError(code, f"The CSV file could not be read ({why}). Check that every "
                            "line has the same number of fields and save it again as "
                            "'CSV UTF-8'.") from exc
    header_row = best + 1
    columns: list[RawColumn] = []
    for j, header in enumerate(headers):
        raw = frame[j] if j in frame.columns else pd.Series([""] * len(frame), dtype=object)
        name = cols.canonical_name(header, vocabulary, settings.column_map)
        col = _convert(raw, header, column_letters(j + 1), name)
        if not header and col.kind == "empty":
            continue
        columns.append(col)
    n = _used_rows(columns, len(frame))
    for c in columns:
        c.values = c.values.iloc[:n].reset_index(drop=True)
        c.text_cells = {k: v for k, v in c.text_cells.items() if k < n}
    table = RawTable(sheet, header_row, columns, n)
    _clean(table, findings)
    if role == "weather":
        return RawWorkbook(source=source, readings=None, weather=table, findings=findings,
                           date_system=1900)
    return RawWorkbook(source=source, readings=table, findings=findings, date_system=1900)


def _header(p: Path, settings: Settings, vocabulary: Mapping[str, Sequence[str]]
            ) -> tuple[str, int, list[str]] | None:
    """Return (delimiter, line index of the header row, headers), or None without one."""
    with p.open("rb") as fh:
        head_bytes = fh.read(1 << 16)
    try:
        head = head_bytes.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        if exc.start < len(head_bytes) - 4:  # not just a character cut at the 64 KiB edge
            raise WorkbookError(
                "csv-encoding", "The CSV file is not UTF-8 text. Save it again as "
                "'CSV UTF-8' and retry.") from exc
        head = head_bytes[: exc.start].decode("utf-8-sig")
    lines = head.splitlines()[:HEADER_SEARCH_ROWS]
    delimiter = _detect_delimiter(lines, vocabulary)
    rows = list(csv.reader(io.StringIO("\n".join(lines)), delimiter=delimiter))
    best, score = None, 0
    for i, row in enumerate(rows):
        matched, _, _ = cols.match_columns(row, vocabulary, settings.column_map)
        if len(matched) > score:
            best, score = i, len(matched)
    if best is None:
        return None
    return delimiter, best, [h.strip() for h in rows[best]]


def locate_header(path: Path, settings: Settings) -> tuple[str, int, list[str]] | None:
    """Delimiter, header line index and headers of a CSV readings log (None: no header).

    Used by the batch reader (:mod:`surveytools.inputs.batches`) to find the table as
    :func:`read_csv_table` does.
    """
    return _header(path, settings, cols.READINGS_COLUMNS)


def _detect_delimiter(lines: Sequence[str],
                      vocabulary: Mapping[str, Sequence[str]] = cols.READINGS_COLUMNS) -> str:
    """Return the delimiter that splits the most header-like line into the most fields."""
    best, best_fields = ",", 0
    for d in _DELIMITERS:
        for line in lines:
            fields = next(csv.reader([line], delimiter=d), [])
            matched, _, _ = cols.match_columns(fields, vocabulary)
            if len(matched) > best_fields:
                best, best_fields = d, len(matched)
    return best


def _convert(raw: pd.Series, header: str, letter: str, name: str | None) -> RawColumn:
    """Vectorised conversion of one text column to its kind; misfits become text cells."""
    s = raw.astype(object).str.strip()
    present = s != ""
    expected = cols.EXPECTED_KIND.get(name or "", "number" if (name or "").startswith("LZeq_")
                                      else "")
    if not present.any():
        return RawColumn(header, letter, "empty", pd.Series([None] * len(s), dtype=object))
    if expected in ("", "number"):
        num = pd.to_numeric(s.where(present, None), errors="coerce").astype("float64")
        bad_num = present & ~np.isfinite(num.fillna(np.inf)).astype(bool)
        if expected == "number" or not bad_num.any():
            numbers = num.where(~bad_num, np.nan)
            return RawColumn(header, letter, "number", numbers.reset_index(drop=True),
                             text_cells=_cells(raw, bad_num))
    if expected in ("", "datetime"):
        text = s.where(present, None)
        if name == "Time":
            text = (_TIME_ONLY_DAY + s).where(present, None)
        try:
            when = pd.to_datetime(text, format="ISO8601", errors="coerce")
        except (ValueError, TypeError):  # UTC offsets in some cells only (or different
            when = None  # ones): kept as text, read cell by cell with their offsets
        if when is not None and getattr(when.dtype, "tz", None) is None:
            bad_dt = present & when.isna()
            if expected == "datetime" or not bad_dt.any():
                stamps = when.astype("datetime64[ms]").reset_index(drop=True)
                return RawColumn(header, letter, "datetime", stamps,
                                 text_cells=_cells(raw, bad_dt))
    texts = s.where(present, None).reset_index(drop=True)
    return RawColumn(header, letter, "text", texts.astype(object))


def convert_text_column(raw: pd.Series, header: str, letter: str, name: str | None
                        ) -> RawColumn:
    """Convert one column of text cells to its kind (shared with the Parquet reader)."""
    return _convert(raw, header, letter, name)


def _cells(raw: pd.Series, bad: pd.Series) -> dict[int, str]:
    idx = np.flatnonzero(bad.to_numpy(dtype=bool))
    texts = raw.to_numpy(dtype=object)[idx]
    return {int(i): str(t) for i, t in zip(idx, texts, strict=True)}


def _used_rows(columns: Sequence[RawColumn], n: int) -> int:
    last = -1
    for c in columns:
        v: Any = c.values
        present = (v.map(lambda x: x is not None and x != "", na_action="ignore")
                   .fillna(False).to_numpy(dtype=bool) if c.kind in ("text", "empty")
                   else v.notna().to_numpy(dtype=bool))
        idx = np.flatnonzero(present)
        if idx.size:
            last = max(last, int(idx[-1]))
        if c.text_cells:
            last = max(last, max(c.text_cells))
    return min(n, last + 1)


def _clean(table: RawTable, findings: list[Finding]) -> None:
    def fix(text: str, pos: int, letter: str) -> str:
        cleaned, changes = clean_text(text)
        for code in changes:
            findings.append(Finding(code, Severity.WARNING,
                                    "Characters that cannot be stored in a workbook were "
                                    "replaced, or the text was cut to 32,767 characters. "
                                    "Check the cell's text.", sheet=table.sheet,
                                    row=table.first_data_row + pos, column=letter))
        return cleaned

    for c in table.columns:
        if c.kind == "text":
            flags = c.values.map(lambda v: isinstance(v, str) and (
                len(v) > const.CELL_MAX_CHARS or has_illegal_characters(v)), na_action="ignore")
            for i in np.flatnonzero(flags.fillna(False).to_numpy(dtype=bool)):
                c.values.iat[int(i)] = fix(str(c.values.iat[int(i)]), int(i), c.letter)
        for pos, text in list(c.text_cells.items()):
            c.text_cells[pos] = fix(text, pos, c.letter)
