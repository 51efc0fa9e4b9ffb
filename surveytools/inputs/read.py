"""Read one survey workbook (.xlsx / .xlsm) into a :class:`~surveytools.inputs.raw.RawWorkbook`.

Steps: :func:`~surveytools.inputs.preflight.preflight` (safety limits, extent, formulas without
cached values, merged ranges, date system); sheet selection by name (case, spaces and
punctuation ignored; never by position); header-row detection on the first rows with
python-calamine; the whole table read in one pass with fastexcel using explicit column
types (so a text cell far down a number column is reported, never silently nulled); the
cells that did not fit their column's type recovered as text; error cells (``#DIV/0!``)
kept apart. Sheet roles:

* Readings (required): a sheet named ``Readings``; failing that, the first visible sheet
  whose header row has a time column and ``LAeq`` (recorded as an info finding).
* Survey: key/value sheet (keys in the first column holding a known key, values in the next).
* Weather, Exclusions: tables with their own header vocabularies.

Header *meaning* (unknown or duplicate headers) is left to validation, which matches the
``RawColumn.header`` texts with :func:`surveytools.inputs.columns.match_columns`; the reader only
uses the vocabulary to find the header row and to choose each column's cell type.

Known limits (documented, not silent): fastexcel turns a yes/no cell in a number column into
1.0/0.0, and a plain number in a date-time column into a date with the 1900 epoch.
"""

from __future__ import annotations

import datetime as dt
import re
import threading
from collections.abc import Callable, Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

from surveytools import constants as const
from surveytools.debuglog import log_raw
from surveytools.errors import WorkbookError
from surveytools.inputs import columns as cols
from surveytools.inputs.preflight import HEAD_KEEP_BYTES as HEAD_KEEP
from surveytools.inputs.preflight import (
    PreflightLimits,
    PreflightReport,
    SheetInfo,
    column_letters,
    column_number,
    preflight,
    preflight_heads,
)
from surveytools.inputs.raw import (
    KeyValue,
    KeyValueSheet,
    RawColumn,
    RawTable,
    RawWorkbook,
    cell_number_text,
)
from surveytools.inputs.source import source_info
from surveytools.provenance import SourceInfo
from surveytools.safetext import clean_text, has_illegal_characters
from surveytools.settings import Settings
from surveytools.validation.findings import Finding, Severity

if TYPE_CHECKING:  # numpy and pandas are imported where values are converted, after the
    # fast parse has started: the batch worker imports them meanwhile (see worker.py)
    import numpy as np
    import pandas as pd

#: Rows searched for the header row (title rows above a table are common).
HEADER_SEARCH_ROWS = 30
#: Data rows sampled (below the header) to choose the type of columns whose name gives none.
TYPE_SAMPLE_ROWS = 50
#: Rows read from a key/value sheet at most.
KEY_VALUE_MAX_ROWS = 1_000

_SHEET_ROLES = {
    "readings": ("readings", "reading", "data", "log"),
    "survey": ("survey", "surveyinfo", "metadata", "info"),
    "weather": ("weather", "meteo", "met"),
    "exclusions": ("exclusions", "exclusion", "excluded", "disturbances"),
}
_TIME_COLUMNS = ("Start", "End", "Date", "Time")
_EXCEL_ERRORS = {
    "Div0": "#DIV/0!", "NA": "#N/A", "Name": "#NAME?", "Null": "#NULL!", "Num": "#NUM!",
    "Ref": "#REF!", "Value": "#VALUE!", "GettingData": "#GETTING_DATA",
}
_ERROR_DETAIL_RE = re.compile(r"Error\((\w+)\)")
#: Day 0 of the 1900 date system: time-of-day and duration cells are placed on it.
def _epochs() -> tuple[np.datetime64, np.datetime64]:
    """(time-only epoch 1899-12-31, 1904 epoch) as datetime64[ms] (numpy imported lazily)."""
    import numpy as np

    return (np.datetime64("1899-12-31T00:00:00", "ms"),
            np.datetime64("1904-01-01T00:00:00", "ms"))


def sheet_key(name: str) -> str:
    """Return a sheet name's comparison key (case, spaces and punctuation ignored)."""
    return re.sub(r"[^0-9a-z]+", "", name.lower())


# --------------------------------------------------------------------------------------
# Public entry point
# --------------------------------------------------------------------------------------


def read_workbook(
    path: str | Path,
    settings: Settings | None = None,
    limits: PreflightLimits | None = None,
    report: PreflightReport | None = None,
    source: SourceInfo | None = None,
    overlap_scan: bool = False,
    before_scan: Callable[[], None] | None = None,
    after_scan: Callable[[], None] | None = None,
) -> RawWorkbook:
    """Read a survey workbook, safely, with every value located.

    Parameters
    ----------
    path : str or Path
        The .xlsx / .xlsm file (read-only; never modified).
    settings : Settings, optional
        Uses ``settings.column_map`` (extra header spellings).
    limits : PreflightLimits, optional
        Safety limits of the preflight.
    report : PreflightReport, optional
        The preflight of this very file, when it was already run (the batch runs it in the
        parent process while the worker starts). The caller must make sure the file has not
        changed since (same SHA-256 as ``source``).
    source : SourceInfo, optional
        The file's identity, when already hashed.
    overlap_scan : bool
        Without a ``report``: start reading after the checks of :func:`preflight_heads`
        and run the worksheet extent scans of the full :func:`preflight` in a background
        thread meanwhile (both cores busy: the typed parse releases the interpreter lock).
        What was read is used only once the full preflight has passed; its refusal wins
        over anything the reader found. Only for a process with memory and time limits
        (the batch worker): a hostile file then reaches the reader before its scan ends.
    before_scan, after_scan : callable, optional
        With ``overlap_scan``: called in the scan's thread before the full preflight
        starts and after it ended (the batch worker imports the later phases first, then
        lets the scan run, then pre-faults heap: one busy thread beside the parse at a
        time, as three on two cores slow the parse down). What is read is returned
        without waiting for ``after_scan``.

    Returns
    -------
    RawWorkbook
        Tables with typed columns and their cell locations, plus reader findings.

    Raises
    ------
    WorkbookError
        When the file cannot be opened safely (see :func:`preflight` for the codes) or a
        reader fails on it (``reader-failed``).
    """
    settings = settings or Settings()
    p = Path(path)
    full: _Background | None = None
    if report is None and overlap_scan:
        report = preflight_heads(p, limits)
        full = _Background(lambda: preflight(p, limits, helper_thread=False), before_scan,
                           after_scan)
    elif report is None:
        report = preflight(p, limits)
    if source is None:
        source = source_info(p)
    reader = None
    try:
        reader = _Reader(p, report, source, settings.column_map,
                         full.result if full is not None else None)
        raw = reader.read()
        if full is not None:
            full.result()  # the full preflight's refusal wins over what was read
        return raw
    except WorkbookError:
        if full is not None:
            full.result()
        raise
    except Exception as exc:  # any reader failure on a file that passed the preflight
        if full is not None:
            full.result()  # a file the full preflight refuses is reported as refused
        log_raw(f"reading {p}", exc)  # the library's own words: debug log only
        raise WorkbookError(
            "reader-failed",
            "The workbook could not be read: its contents could not be decoded (a damaged "
            "part, a cell or style the format does not allow, or a number too large for its "
            "kind). Open it in a "
            "spreadsheet program, save it again as .xlsx and retry.",
        ) from exc
    except BaseException as exc:  # a panic in the native reader (a value beyond its range)
        if type(exc).__name__ != "PanicException":
            raise
        if full is not None:
            full.result()
        log_raw(f"reading {p}", exc)
        raise _panic_refusal(p, reader) from None
    finally:
        if reader is not None:
            reader.close()


#: A date cell's serial value in a reader's cell-error detail.
_DATE_SERIAL_RE = re.compile(r"ExcelDateTime \{ value: ([^,]+),")
#: Date serials the native reader can convert: year 1 to year 9999 [days since 1899-12-30].
_SERIAL_MIN, _SERIAL_MAX = -693_593.0, 2_958_465.0


def _panic_refusal(path: Path, reader: _Reader | None) -> WorkbookError:
    """Return the refusal of a workbook whose cells made the native reader panic.

    The usual cause is a date cell whose serial lies beyond any calendar (-1E+308). Each
    sheet is read again with every column as numbers (a date cell then arrives as a cell
    error that carries its serial, with no conversion) to name the first such cell.
    """
    where = ""
    try:
        import fastexcel

        book = fastexcel.read_excel(str(path))
        for name in book.sheet_names:
            sheet = book.load_sheet(name, header_row=None, dtypes="float",
                                    schema_sample_rows=None, dtype_coercion="coerce")
            _batch, errors = sheet.to_arrow_with_errors()
            for e in (errors.errors if errors is not None else []):
                m = _DATE_SERIAL_RE.search(str(e.detail))
                if m is None:
                    continue
                try:
                    serial = float(m.group(1))
                except ValueError:
                    continue
                if not _SERIAL_MIN <= serial <= _SERIAL_MAX:
                    row, col = e.position
                    where = (f" (cell {name}!{column_letters(int(col) + 1)}{int(row) + 1} holds "
                             f"the date serial {serial:.6g})")
                    break
            if where:
                break
    except BaseException as exc:  # a second panic: only the location is lost
        log_raw(f"locating the cell that stopped the reader in {path}", exc)
    del reader
    return WorkbookError(
        "cell-date-out-of-range",
        f"A date cell holds a value far beyond any calendar{where}, which cannot be read. "
        "Correct or delete that cell (it shows as ##### in a spreadsheet program) and "
        "re-run.")


class _Background:
    """Run ``before``, a function, then ``after`` in a background thread.

    :meth:`result` waits for the function (not for ``after``) and returns its value or
    raises its exception.
    """

    def __init__(self, fn: Callable[[], PreflightReport],
                 before: Callable[[], None] | None = None,
                 after: Callable[[], None] | None = None) -> None:
        self._value: PreflightReport | None = None
        self._error: BaseException | None = None
        self._done = threading.Event()

        def target() -> None:
            try:
                if before is not None:
                    before()
                self._value = fn()
            except BaseException as exc:  # handed to the caller of result()
                self._error = exc
            finally:
                self._done.set()
                if after is not None:
                    after()

        self._thread = threading.Thread(target=target, name="preflight-scan", daemon=True)
        self._thread.start()

    def result(self) -> PreflightReport:
        self._done.wait()
        if self._error is not None:
            raise self._error
        assert self._value is not None
        return self._value


# --------------------------------------------------------------------------------------
# Implementation
# --------------------------------------------------------------------------------------


class _Reader:
    def __init__(self, path: Path, report: PreflightReport, source: SourceInfo,
                 column_map: Mapping[str, str],
                 full_report: Callable[[], PreflightReport] | None = None) -> None:
        self.path = path
        self.report = report
        self._full_report = full_report
        self.source = source
        self.column_map = dict(column_map)
        self.findings: list[Finding] = []
        # Opened on first use (key/value sheets, heads the kept bytes cannot give): opening
        # loads every shared string, which fastexcel does again for the table read.
        self._calamine: Any = None
        self._fastexcel: Any = None
        self._parts: _WorkbookParts | None = None

    def close(self) -> None:
        if self._parts is not None:
            self._parts.close()
        if self._calamine is not None:
            self._calamine.close()

    def _exact(self, info: SheetInfo | None = None) -> SheetInfo | None:
        """Switch to the full preflight's report (waiting for it if the scans still run).

        Returns the exact info of sheet ``info`` (by name), or None without ``info``.
        """
        if not self.report.extents_known:
            assert self._full_report is not None, "a heads-only report needs the full one"
            self.report = self._full_report()
        return self.report.sheet(info.name) if info is not None else None

    def calamine(self) -> Any:
        """Return the python-calamine workbook, opening it on first use."""
        if self._calamine is None:
            from python_calamine import CalamineWorkbook

            self._calamine = CalamineWorkbook.from_path(str(self.path))
        return self._calamine

    # -- sheets -------------------------------------------------------------------------

    def read(self) -> RawWorkbook:
        by_role = self._sheets_by_role()
        readings_info = by_role.get("readings") or self._find_readings_by_signature()
        readings = None
        if readings_info is None:
            self.findings.append(Finding(
                "readings-sheet-missing", Severity.ERROR,
                "No sheet named 'Readings' and no visible sheet with a time column and an "
                "LAeq column was found. Name the readings sheet 'Readings'.",
            ))
        else:
            readings = self._read_table(readings_info, cols.READINGS_COLUMNS)
        survey = self._read_key_values(by_role["survey"]) if "survey" in by_role else None
        weather = (self._read_table(by_role["weather"], cols.WEATHER_COLUMNS)
                   if "weather" in by_role else None)
        exclusions = (self._read_table(by_role["exclusions"], cols.EXCLUSION_COLUMNS)
                      if "exclusions" in by_role else None)
        return RawWorkbook(source=self.source, readings=readings, survey=survey,
                           weather=weather, exclusions=exclusions, findings=self.findings,
                           date_system=self.report.date_system)

    def _sheets_by_role(self) -> dict[str, SheetInfo]:
        out: dict[str, SheetInfo] = {}
        for role, keys in _SHEET_ROLES.items():
            # The role's own name first ("readings"), then the other accepted names.
            for key in keys:
                found = [s for s in self.report.sheets if sheet_key(s.name) == key]
                if found:
                    out[role] = found[0]
                    break
        for info in out.values():
            self._note_hidden(info)
        readings = out.get("readings")
        if readings is not None and sheet_key(readings.name) not in ("readings", "reading"):
            self.findings.append(Finding(
                "readings-sheet-chosen", Severity.INFO,
                f"No sheet is named 'Readings'; sheet '{readings.name}' was used as the "
                "readings sheet because of its name. Name the sheet 'Readings' to make this "
                "explicit.", sheet=readings.name,
            ))
        return out

    def _note_hidden(self, info: SheetInfo) -> None:
        if info.visibility != "visible":
            self.findings.append(Finding(
                "sheet-hidden", Severity.WARNING,
                f"Sheet '{info.name}' is {info.visibility} in the workbook but was used. "
                "Check that it holds the data you meant; unhide it or delete it.",
                sheet=info.name,
            ))

    def _find_readings_by_signature(self) -> SheetInfo | None:
        self._exact()
        for info in self.report.sheets:
            if info.visibility != "visible" or info.max_row == 0:
                continue
            rows = self._head_rows(info, HEADER_SEARCH_ROWS)
            r = _best_header_row(rows, cols.READINGS_COLUMNS, self.column_map)
            if r is None:
                continue
            matched, _, _ = cols.match_columns(rows[r], cols.READINGS_COLUMNS, self.column_map)
            if "LAeq" in matched and any(t in matched for t in _TIME_COLUMNS):
                self.findings.append(Finding(
                    "readings-sheet-chosen", Severity.INFO,
                    f"No sheet is named 'Readings'; sheet '{info.name}' was used because its "
                    f"row {r + 1} has a time column and an LAeq column. Name the sheet "
                    "'Readings' to make this explicit.",
                    sheet=info.name,
                ))
                return info
        return None

    def _head_rows(self, info: SheetInfo, n: int) -> list[list[Any]]:
        """Return the first ``n`` rows (from A1) for header search and type sampling.

        Parsed from the sheet XML head kept by the preflight (no second full parse of a
        large sheet); falls back to python-calamine when the head does not reach ``n`` rows
        and the sheet is small, or when the head cannot be parsed.
        """
        if self._parts is None:
            self._parts = _WorkbookParts(self.path, self.report.date_system)
        rows = self._parts.head_rows(info, n)
        if rows is None:
            sheet = self.calamine().get_sheet_by_name(info.name)
            rows = [list(r) for r in sheet.to_python(skip_empty_area=False, nrows=n)]
        return rows

    def _all_rows(self, info: SheetInfo, n: int) -> list[list[Any]]:
        """Return the first ``n`` rows with python-calamine (exact values; small sheets)."""
        sheet = self.calamine().get_sheet_by_name(info.name)
        return [list(r) for r in sheet.to_python(skip_empty_area=False, nrows=n)]

    # -- tables -------------------------------------------------------------------------

    def _read_table(self, info: SheetInfo,
                    vocabulary: Mapping[str, Sequence[str]]) -> RawTable | None:
        head = self._head_rows(info, HEADER_SEARCH_ROWS + TYPE_SAMPLE_ROWS)
        r = _best_header_row(head[:HEADER_SEARCH_ROWS], vocabulary, self.column_map)
        if r is None:
            self.findings.append(Finding(
                "header-missing", Severity.ERROR,
                f"No header row was found in the first {HEADER_SEARCH_ROWS} rows of sheet "
                f"'{info.name}'. Put the column names (e.g. Start, LAeq) in one row above the "
                "data.", sheet=info.name,
            ))
            return None
        header_row = r + 1
        headers = head[r]
        sample = head[r + 1:]
        first_col = next(i for i, h in enumerate(headers) if _has_text(h))
        if len(info.head) < HEAD_KEEP:  # the whole sheet was in the head: small, so wait
            info = self._exact(info) or info
        # Columns the head does not reach take "auto" (no header, no sample), so without a
        # known extent the head's width gives the same choices.
        width = (info.max_col if self.report.extents_known
                 else max((len(row) for row in head), default=0))
        dtypes = {}
        for j in range(first_col, max(len(headers), width)):
            header = headers[j] if j < len(headers) else ""
            dtypes[j] = _choose_dtype(header, [row[j] if j < len(row) else "" for row in sample],
                                      vocabulary, self.column_map)
        table = self._load(info, header_row, first_col, headers, dtypes)
        self._locate_sheet_extras(self._exact(info) or info, table)
        return table

    def _fx(self) -> Any:
        if self._fastexcel is None:
            import fastexcel

            self._fastexcel = fastexcel.read_excel(str(self.path))
        return self._fastexcel

    def _load(self, info: SheetInfo, header_row: int, first_col: int, headers: list[Any],
              dtypes: dict[int, str]) -> RawTable:
        import pandas as pd

        n_cols = max(len(headers), info.max_col)
        if self.report.extents_known and info.max_row <= header_row:  # header only
            columns = [RawColumn(_header_text(headers[j] if j < len(headers) else ""),
                                 column_letters(j + 1), "empty", pd.Series([], dtype=object))
                       for j in range(first_col, n_cols) if _has_text(headers[j])]
            return RawTable(info.name, header_row, columns, 0)
        # Columns are chosen and typed by absolute sheet index (0 = column A); a column the
        # sheet's cell range does not reach is simply absent.
        try:
            sheet = self._fx().load_sheet(
                info.name, header_row=header_row - 1,
                use_columns=lambda c: c.absolute_index >= first_col,
                dtypes={k: v for k, v in dtypes.items() if v != "auto"},
                schema_sample_rows=None, dtype_coercion="coerce",
            )
            batch, errors = sheet.to_arrow_with_errors()
        except Exception:
            exact = self._exact(info) if not self.report.extents_known else None
            if exact is not None and exact.max_row <= header_row:  # header only, after all
                return self._load(exact, header_row, first_col, headers, dtypes)
            raise
        info = self._exact(info) or info  # formulas without value: from the full scan
        selected = list(sheet.selected_columns)
        abs_index = [c.absolute_index for c in selected]
        # A cell error names its column by the range index, not by the batch position.
        position_of = {c.index: k for k, c in enumerate(selected)}
        cell_errors: dict[int, list[tuple[int, str]]] = {}
        for e in (errors.errors if errors is not None else []):
            pos, col = e.offset_position
            k = position_of.get(int(col))
            if k is not None:
                cell_errors.setdefault(k, []).append((int(pos), str(e.detail)))
        n = batch.num_rows
        raw_cols: list[RawColumn] = []
        text_needed: dict[int, tuple[RawColumn, list[int]]] = {}
        # Positions of text cells that may need cleaning, by index in raw_cols.
        suspects: dict[int, np.ndarray] = {}
        for k in range(batch.num_columns):
            j = abs_index[k]
            header = headers[j] if j < len(headers) else ""
            arr = batch.column(k)
            if not _has_text(header) and arr.null_count == len(arr):
                continue
            header_text = self._clean(_header_text(header), info.name, header_row,
                                      column_letters(j + 1))
            col = _arrow_to_column(arr, header_text, column_letters(j + 1),
                                   self.report.date_system)
            if col.kind == "text":
                suspects[len(raw_cols)] = _suspect_texts(arr)
            for pos, detail in cell_errors.get(k, []):
                m = _ERROR_DETAIL_RE.search(detail)
                if m:
                    col.error_cells[pos] = _EXCEL_ERRORS.get(m.group(1), f"#{m.group(1)}")
                else:
                    text_needed.setdefault(k, (col, []))[1].append(pos)
            raw_cols.append(col)
        if text_needed:
            self._recover_text(info, header_row, abs_index, text_needed)
        by_letter = {c.letter: c for c in raw_cols}
        for ref in info.formulas_without_value:
            letters, row = _split_ref(ref)
            if letters in by_letter and row > header_row:
                by_letter[letters].formula_without_value.add(row - header_row - 1)
        n = _used_length(raw_cols, n)
        for c in raw_cols:
            c.values = c.values.iloc[:n].reset_index(drop=True)
            c.text_cells = {p: t for p, t in c.text_cells.items() if p < n}
            c.error_cells = {p: t for p, t in c.error_cells.items() if p < n}
            c.formula_without_value = {p for p in c.formula_without_value if p < n}
        table = RawTable(info.name, header_row, raw_cols, n)
        self._clean_texts(table, suspects)
        return table

    def _recover_text(self, info: SheetInfo, header_row: int, abs_index: list[int],
                      text_needed: dict[int, tuple[RawColumn, list[int]]]) -> None:
        """Read, as text, the cells that did not fit their column's type (rare: one more pass)."""
        wanted = {abs_index[k] for k in text_needed}
        sheet = self._fx().load_sheet(
            info.name, header_row=header_row - 1,
            use_columns=lambda c: c.absolute_index in wanted,
            dtypes=dict.fromkeys(wanted, "string"), schema_sample_rows=None,
        )
        batch = sheet.to_arrow()
        batch_position = {c.absolute_index: i for i, c in enumerate(sheet.selected_columns)}
        for k, (col, positions) in text_needed.items():
            values = batch.column(batch_position[abs_index[k]])
            for pos in positions:
                text = values[pos].as_py() if pos < len(values) else None
                col.text_cells[pos] = "" if text is None else str(text)

    def _clean_texts(self, table: RawTable, suspects: Mapping[int, np.ndarray]) -> None:
        """Clean the text cells that are too long or hold XML-illegal characters.

        ``suspects`` gives, by column index, the positions found by a vectorised pre-check
        (:func:`_suspect_texts`); each is checked again here with the exact rule.
        """
        for k, c in enumerate(table.columns):
            if c.kind == "text" and k in suspects:
                for flagged in suspects[k][suspects[k] < table.n_rows]:
                    i = int(flagged)
                    v = c.values.iat[i]
                    if isinstance(v, str) and (len(v) > const.CELL_MAX_CHARS
                                               or has_illegal_characters(v)):
                        c.values.iat[i] = self._clean(v, table.sheet,
                                                      table.first_data_row + i, c.letter)
            for pos, text in list(c.text_cells.items()):
                c.text_cells[pos] = self._clean(text, table.sheet, table.first_data_row + pos,
                                                c.letter)

    def _clean(self, text: str, sheet: str, row: int, column: str | None) -> str:
        cleaned, changes = clean_text(text)
        for code in changes:
            what = ("control characters that cannot be stored in a workbook were replaced "
                    "by \ufffd" if code == "text-control-characters" else
                    f"the text was cut to 32,767 characters (it had {len(text):,})")
            self.findings.append(Finding(code, Severity.WARNING,
                                         f"In this cell {what}. Check the cell's text.",
                                         sheet=sheet, row=row, column=column))
        return cleaned

    def _locate_sheet_extras(self, info: SheetInfo, table: RawTable) -> None:
        for ref in info.formulas_without_value:
            letters, row = _split_ref(ref)
            self.findings.append(Finding(
                "formula-without-value", Severity.WARNING,
                "This formula cell has no stored result (the file was written by a program "
                "that does not calculate), so it is read as empty. Open the file in a "
                "spreadsheet program, let it recalculate, and save.",
                sheet=info.name, row=row, column=letters,
            ))
        for rng in info.merged_ranges:
            first, _, last = rng.partition(":")
            _, r1 = _split_ref(first)
            _, r2 = _split_ref(last or first)
            if r2 >= table.first_data_row:
                self.findings.append(Finding(
                    "merged-cells", Severity.WARNING,
                    f"Cells {rng} are merged; only the first cell of a merged range holds a "
                    "value, the others are read as empty. Unmerge them and fill each row.",
                    sheet=info.name, row=max(r1, table.first_data_row),
                    column=_split_ref(first)[0],
                ))

    # -- key/value sheet ----------------------------------------------------------------

    def _read_key_values(self, info: SheetInfo) -> KeyValueSheet:
        info = self._exact(info) or info
        rows = self._all_rows(info, min(KEY_VALUE_MAX_ROWS, max(info.max_row, 1)))
        key_col = None
        for j in range(max((len(r) for r in rows), default=0)):
            if any(j < len(r) and cols.canonical_name(r[j], cols.SURVEY_KEYS, self.column_map)
                   for r in rows):
                key_col = j
                break
        entries: list[KeyValue] = []
        if key_col is not None:
            for i, r in enumerate(rows):
                key = r[key_col] if key_col < len(r) else ""
                if not _has_text(key):
                    continue
                value = r[key_col + 1] if key_col + 1 < len(r) else None
                entries.append(KeyValue(
                    key=self._clean(_header_text(key), info.name, i + 1,
                                    column_letters(key_col + 1)),
                    value=self._key_value(value, info.name, i + 1, column_letters(key_col + 2)),
                    row=i + 1, key_column=column_letters(key_col + 1),
                    value_column=column_letters(key_col + 2),
                ))
        for ref in info.formulas_without_value:
            letters, row = _split_ref(ref)
            self.findings.append(Finding(
                "formula-without-value", Severity.WARNING,
                "This formula cell has no stored result, so it is read as empty. Open the "
                "file in a spreadsheet program, let it recalculate, and save.",
                sheet=info.name, row=row, column=letters,
            ))
        return KeyValueSheet(info.name, entries)

    def _key_value(self, value: Any, sheet: str, row: int, column: str) -> Any:
        if isinstance(value, str):
            if value == "":
                return None
            return self._clean(value, sheet, row, column)
        if isinstance(value, dt.datetime):
            return value
        if isinstance(value, dt.date):
            return dt.datetime(value.year, value.month, value.day)
        return value


# --------------------------------------------------------------------------------------
# Helpers (pure)
# --------------------------------------------------------------------------------------


def _has_text(value: Any) -> bool:
    return value is not None and str(value).strip() != ""


def _header_text(value: Any) -> str:
    return "" if value is None else cell_number_text(value).strip()


def _split_ref(ref: str) -> tuple[str, int]:
    m = re.match(r"\$?([A-Za-z]+)\$?([0-9]+)", ref)
    if m is None:
        return ref, 0
    return m.group(1).upper(), int(m.group(2))


def _best_header_row(rows: Sequence[Sequence[Any]], vocabulary: Mapping[str, Sequence[str]],
                     column_map: Mapping[str, str]) -> int | None:
    """Return the index of the row matching the most vocabulary names (first on ties)."""
    best, best_score = None, 0
    for i, row in enumerate(rows):
        matched, _, _ = cols.match_columns(row, vocabulary, column_map)
        if len(matched) > best_score:
            best, best_score = i, len(matched)
    return best


def _choose_dtype(header: Any, sample: Sequence[Any], vocabulary: Mapping[str, Sequence[str]],
                  column_map: Mapping[str, str]) -> str:
    """Choose the fastexcel dtype of one column from its canonical name and a sample."""
    name = cols.canonical_name(header, vocabulary, column_map) if _has_text(header) else None
    expected = cols.EXPECTED_KIND.get(name or "", "number" if (name or "").startswith("LZeq_")
                                      else "")
    n_num = n_dt = n_str = n_bool = 0
    for v in sample:
        if isinstance(v, bool):
            n_bool += 1
        elif isinstance(v, int | float):
            n_num += 1
        elif isinstance(v, dt.date | dt.time | dt.timedelta):
            n_dt += 1
        elif isinstance(v, str) and v.strip():
            n_str += 1
    if expected == "number":
        return "string" if n_str and not n_num else "float"
    if expected == "datetime":
        return "string" if n_str and not n_dt else "datetime"
    if expected == "text":
        return "string"
    if expected == "flag":
        return "boolean" if n_bool and not (n_str or n_num) else "string"
    counts = {"float": n_num, "datetime": n_dt, "string": n_str, "boolean": n_bool}
    kind, top = max(counts.items(), key=lambda kv: kv[1])
    if top == 0:
        return "auto"
    return kind if sum(counts.values()) == top else "string"


def arrow_to_column(arr: Any, header: str, letter: str, date_system: int) -> RawColumn:
    """Convert one typed Arrow column to a RawColumn (shared with the Parquet reader)."""
    return _arrow_to_column(arr, header, letter, date_system)


def _arrow_to_column(arr: Any, header: str, letter: str, date_system: int) -> RawColumn:
    import pandas as pd
    import pyarrow as pa

    typ = arr.type
    if pa.types.is_timestamp(typ) or pa.types.is_date(typ):
        values = _series(arr.cast(pa.timestamp("ms")).to_numpy(zero_copy_only=False),
                         "datetime64[ms]")
        if date_system == 1904:
            values = _shift_1904_times(values)
        return RawColumn(header, letter, "datetime", values)
    if pa.types.is_duration(typ):
        ms = arr.cast(pa.duration("ms")).to_numpy(zero_copy_only=False)
        values = pd.Series(_epochs()[0] + ms.astype("timedelta64[ms]"), dtype="datetime64[ms]")
        return RawColumn(header, letter, "datetime", values)
    if pa.types.is_floating(typ) or pa.types.is_integer(typ):
        values = _series(arr.cast(pa.float64()).to_numpy(zero_copy_only=False), "float64")
        return RawColumn(header, letter, "number", values)
    if pa.types.is_boolean(typ):
        values = pd.Series(arr.to_pylist(), dtype="boolean")
        return RawColumn(header, letter, "bool", values)
    if pa.types.is_null(typ):
        return RawColumn(header, letter, "empty", pd.Series([None] * len(arr), dtype=object))
    # pyarrow gives None for a null string: no NaN to replace.
    values = _series(arr.cast(pa.string()).to_numpy(zero_copy_only=False), object)
    return RawColumn(header, letter, "text", values)


def _series(values: np.ndarray, dtype: Any) -> pd.Series:
    """Wrap a converted column in a Series, copying only a read-only (zero-copy) array."""
    import pandas as pd

    return pd.Series(values, dtype=dtype, copy=not values.flags.writeable)


#: XML-illegal characters (as :data:`surveytools.safetext._XML_ILLEGAL_RE`) in RE2
#: syntax; surrogates need no check because Arrow strings are UTF-8, which cannot hold them.
_ARROW_ILLEGAL_RE = r"[\x00-\x08\x0b\x0c\x0e-\x1f\x{FFFE}\x{FFFF}]"


def _suspect_texts(arr: Any) -> np.ndarray:
    """Return the positions of text cells too long to keep or holding XML-illegal characters.

    A vectorised pre-check in Arrow (no Python call per cell); the reader re-checks each
    position found with :func:`surveytools.safetext.has_illegal_characters`.
    """
    import numpy as np
    import pyarrow as pa
    import pyarrow.compute as pc

    text = arr.cast(pa.string())
    if text.null_count == len(text):
        return np.empty(0, dtype=np.int64)
    flags = pc.or_(pc.greater(pc.utf8_length(text), const.CELL_MAX_CHARS),
                   pc.match_substring_regex(text, _ARROW_ILLEGAL_RE))
    return np.asarray(pc.indices_nonzero(pc.fill_null(flags, False)).to_numpy(),
                      dtype=np.int64)


def _shift_1904_times(values: pd.Series) -> pd.Series:
    """Place 1904-system time-of-day / duration cells on the 1900 day 0, like the rest."""
    import numpy as np
    import pandas as pd

    arr = values.to_numpy()
    valid = ~np.isnat(arr)
    time_only, epoch_1904 = _epochs()
    if valid.any() and (arr[valid] < epoch_1904 + np.timedelta64(366, "D")).all():
        arr = np.where(valid, arr - (epoch_1904 - time_only), arr)
        return pd.Series(arr, dtype="datetime64[ms]")
    return values


def _used_length(columns: Sequence[RawColumn], n: int) -> int:
    """Return the number of rows up to the last one holding anything (trailing empties cut)."""
    last = -1
    for c in columns:
        last = max(last, _last_present(c))
        for store in (c.text_cells, c.error_cells, c.formula_without_value):
            if store:
                last = max(last, max(store))
    return min(n, last + 1)


def _last_present(column: RawColumn) -> int:
    """Return the position of the column's last non-empty value (-1 when there is none).

    Looks at a block at the end first, then at blocks growing eightfold towards the start:
    a column that is full to its end costs one small block, not a pass over all rows.
    """
    import numpy as np

    v = column.values
    end, block = len(v), 4096
    while end > 0:
        start = max(0, end - block)
        part = v.iloc[start:end]
        present = part.notna().to_numpy(dtype=bool)
        if column.kind == "text":
            present = present & (part.to_numpy(dtype=object) != "")
        idx = np.flatnonzero(present)
        if idx.size:
            return start + int(idx[-1])
        end, block = start, block * 8
    return -1


class _StopParsingError(Exception):
    pass


_BUILTIN_DATE_FORMATS = frozenset([*range(14, 23), *range(27, 37), *range(45, 48),
                                   *range(50, 59)])
_FORMAT_NOISE_RE = re.compile(r'"[^"]*"|\\.|\[[^\]]*\]|_.|\*.')
_DATE_FORMAT_CHARS_RE = re.compile(r"[ymdhs]", re.I)


class _WorkbookParts:
    """Shared strings and date styles, read lazily, to decode a sheet's first rows."""

    def __init__(self, path: Path, date_system: int) -> None:
        import zipfile

        self.zip = zipfile.ZipFile(path)
        self.names = set(self.zip.namelist())
        self.date_system = date_system
        self._date_styles: set[int] | None = None
        self._strings: list[str] = []
        self._strings_done = "xl/sharedStrings.xml" not in self.names
        self._strings_iter: Any = None

    def close(self) -> None:
        if self._strings_iter is not None:
            self._strings_iter.close()
        self.zip.close()

    def date_styles(self) -> set[int]:
        from xml.parsers import expat

        if self._date_styles is not None:
            return self._date_styles
        out: set[int] = set()
        if "xl/styles.xml" in self.names:
            custom: dict[int, str] = {}
            xfs: list[int] = []
            depth = {"cellXfs": False}

            def start(tag: str, attrs: dict[str, str]) -> None:
                local = tag.rsplit(" ", 1)[-1]
                if local == "numFmt":
                    custom[int(attrs.get("numFmtId", "0"))] = attrs.get("formatCode", "")
                elif local == "cellXfs":
                    depth["cellXfs"] = True
                elif local == "xf" and depth["cellXfs"]:
                    xfs.append(int(attrs.get("numFmtId", "0")))

            def end(tag: str) -> None:
                if tag.rsplit(" ", 1)[-1] == "cellXfs":
                    depth["cellXfs"] = False

            parser = expat.ParserCreate(namespace_separator=" ")
            parser.StartElementHandler = start
            parser.EndElementHandler = end
            parser.Parse(self.zip.read("xl/styles.xml"), True)
            for i, fmt_id in enumerate(xfs):
                code = custom.get(fmt_id)
                if fmt_id in _BUILTIN_DATE_FORMATS or (
                        code is not None
                        and _DATE_FORMAT_CHARS_RE.search(_FORMAT_NOISE_RE.sub("", code))):
                    out.add(i)
        self._date_styles = out
        return out

    def string(self, index: int) -> str:
        while index >= len(self._strings) and not self._strings_done:
            self._more_strings()
        return self._strings[index] if 0 <= index < len(self._strings) else ""

    def _more_strings(self) -> None:
        from xml.parsers import expat

        if self._strings_iter is None:
            state: dict[str, Any] = {"in_si": False, "in_t": False, "skip": 0, "buf": []}
            parser = expat.ParserCreate(namespace_separator=" ")

            def start(tag: str, attrs: dict[str, str]) -> None:
                local = tag.rsplit(" ", 1)[-1]
                if local == "si":
                    state["in_si"], state["buf"] = True, []
                elif local in ("rPh", "phoneticPr"):
                    state["skip"] += 1
                elif local == "t" and state["in_si"] and not state["skip"]:
                    state["in_t"] = True

            def end(tag: str) -> None:
                local = tag.rsplit(" ", 1)[-1]
                if local == "si":
                    self._strings.append("".join(state["buf"]))
                    state["in_si"] = False
                elif local in ("rPh", "phoneticPr"):
                    state["skip"] -= 1
                elif local == "t":
                    state["in_t"] = False

            def chars(data: str) -> None:
                if state["in_t"]:
                    state["buf"].append(data)

            parser.StartElementHandler = start
            parser.EndElementHandler = end
            parser.CharacterDataHandler = chars
            def feed() -> Any:
                with self.zip.open("xl/sharedStrings.xml") as fh:
                    while block := fh.read(1 << 16):
                        parser.Parse(block, False)
                        yield
                    parser.Parse(b"", True)

            self._strings_iter = feed()
        try:
            next(self._strings_iter)
        except StopIteration:
            self._strings_done = True

    def head_rows(self, info: SheetInfo, n: int) -> list[list[Any]] | None:
        from xml.parsers import expat

        if not info.head:
            return None
        rows: dict[int, dict[int, Any]] = {}
        st: dict[str, Any] = {"row": 0, "col": 0, "t": "n", "s": 0, "text": None,
                              "in_v": False, "in_t": False, "complete": False}
        dates = self.date_styles()

        def start(tag: str, attrs: dict[str, str]) -> None:
            local = tag.rsplit(" ", 1)[-1]
            if local == "row":
                r = attrs.get("r")
                st["row"] = int(r) if r and r.isdigit() else st["row"] + 1
                st["col"] = 0
                if st["row"] > n:
                    st["complete"] = True
                    raise _StopParsingError
            elif local == "c":
                ref = attrs.get("r")
                if ref:
                    letters, row = _split_ref(ref)
                    st["col"], st["row"] = column_number(letters), row
                else:
                    st["col"] += 1
                st["t"] = attrs.get("t", "n")
                st["s"] = int(attrs.get("s", "0") or 0)
                st["text"] = None
            elif local == "v":
                st["in_v"], st["text"] = True, st["text"] or ""
            elif local == "t" and st["t"] == "inlineStr":
                st["in_t"], st["text"] = True, st["text"] or ""

        def end(tag: str) -> None:
            local = tag.rsplit(" ", 1)[-1]
            if local in ("v", "t"):
                st["in_v"] = st["in_t"] = False
            elif local == "c" and st["text"] is not None and st["row"] <= n:
                rows.setdefault(st["row"], {})[st["col"]] = self._value(
                    st["t"], st["s"], st["text"], dates)
            elif local == "sheetData":
                st["complete"] = True

        def chars(data: str) -> None:
            if st["in_v"] or st["in_t"]:
                st["text"] += data

        parser = expat.ParserCreate(namespace_separator=" ")
        parser.StartElementHandler = start
        parser.EndElementHandler = end
        parser.CharacterDataHandler = chars
        try:
            parser.Parse(info.head, len(info.head) < HEAD_KEEP)
        except _StopParsingError:
            pass
        except expat.ExpatError:
            return None
        if not st["complete"] and len(info.head) >= HEAD_KEEP:
            return None  # the kept head ends before row n
        width = max((max(r) for r in rows.values() if r), default=0)
        return [[rows.get(i, {}).get(j, "") for j in range(1, width + 1)]
                for i in range(1, min(n, max(rows, default=0)) + 1)]

    def _value(self, typ: str, style: int, text: str, dates: set[int]) -> Any:
        try:
            if typ == "s":
                return self.string(int(text))
            if typ in ("str", "inlineStr"):
                return text
            if typ == "b":
                return text.strip() in ("1", "true")
            if typ == "e":
                return ""
            if typ == "d":
                return dt.datetime.fromisoformat(text)
            number = float(text)
        except (ValueError, OverflowError):
            return text
        if style in dates:
            return _serial_to_datetime(number, self.date_system)
        return number


def _serial_to_datetime(serial: float, date_system: int) -> Any:
    """Excel serial -> datetime (time for serials below 1), rounded to the millisecond."""
    base = dt.datetime(1904, 1, 1) if date_system == 1904 else dt.datetime(1899, 12, 30)
    if date_system == 1900 and serial < 61:
        serial += 1  # Lotus 1900 leap-year bug: serials below 61 are one day early
    try:
        value = base + dt.timedelta(milliseconds=round(serial * 86_400_000))
    except OverflowError:
        return serial
    return value.time() if 0 <= serial < 1 else value


__all__ = ["column_number", "read_workbook", "sheet_key", "source_info"]
