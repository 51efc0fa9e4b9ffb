"""The catalogue of finding codes: every code surveytools reports, with what it means.

Codes are stable (QA scripts filter on them); messages may improve. ``scope`` says where a
finding points: ``file`` (the input could not be read at all; status ``unreadable``),
``sheet``, ``cell`` (sheet + row + column) or ``batch`` (a path the batch did not process).
The README table is generated from :data:`CODES` (a test keeps them equal), and a test
fails when code anywhere reports a code missing here.
"""

from __future__ import annotations

from typing import NamedTuple


class Code(NamedTuple):
    """One documented finding code."""

    severity: str  # "error" | "warning" | "info"
    scope: str  # "file" | "sheet" | "cell" | "batch"
    meaning: str


#: Codes of JSON Schema keywords on the Survey sheet: ``survey-<keyword>`` (e.g.
#: ``survey-required``, ``survey-enum``, ``survey-type``, ``survey-minimum``).
SURVEY_SCHEMA_PREFIX = "survey-"

CODES: dict[str, Code] = {
    # --- the file cannot be read (status "unreadable") ---------------------------------
    "file-unreadable": Code("error", "file", "the file cannot be opened (missing, no permission)"),
    "file-not-regular": Code("error", "file", "not a regular file (pipe, device, link)"),
    "file-empty": Code("error", "file", "the file has 0 bytes"),
    "file-too-large": Code("error", "file", "larger than the size limit for a survey export"),
    "file-not-a-zip": Code("error", "file", "not an .xlsx container (e.g. a CSV or web page "
                                            "renamed .xlsx)"),
    "file-legacy-xls-or-encrypted": Code("error", "file", "a legacy .xls or a password-"
                                                          "protected workbook"),
    "file-xlsb": Code("error", "file", "a binary .xlsb workbook"),
    "file-ods": Code("error", "file", "an OpenDocument spreadsheet"),
    "file-not-ooxml": Code("error", "file", "a zip file without a workbook inside"),
    "file-changed": Code("error", "file", "the file changed while it was being processed"),
    "zip-corrupt": Code("error", "file", "damaged or truncated container"),
    "zip-too-many-members": Code("error", "file", "more parts than any workbook has"),
    "zip-too-large": Code("error", "file", "unpacks to more than the size limit (zip bomb)"),
    "zip-ratio": Code("error", "file", "compression ratio of a zip bomb"),
    "zip-encrypted-member": Code("error", "file", "an encrypted part inside the container"),
    "xml-doctype": Code("error", "file", "a DTD/entity declaration in an XML part (entity "
                                         "expansion or external-entity attack)"),
    "xml-encoding": Code("error", "file", "an XML part in a refused text encoding"),
    "sheet-too-large": Code("error", "sheet", "used area beyond the sheet or cell-count limit "
                                              "(e.g. cells at A1 and XFD1048576)"),
    "reader-failed": Code("error", "file", "the reader failed on a file that passed the "
                                           "safety checks"),
    "csv-encoding": Code("error", "file", "a CSV file that is not UTF-8"),
    "csv-unreadable": Code("error", "file", "a malformed CSV file"),
    "parquet-unreadable": Code("error", "file", "a Parquet file that cannot be read (damaged, "
                               "too large once read, a column of an unusable type)"),
    "log-too-long-to-read-whole": Code("error", "file", "a CSV or Parquet log too long to "
                                       "read at once that cannot be assessed in parts either "
                                       "(rows far out of time order)"),
    "worker-timeout": Code("error", "file", "processing took longer than the time limit"),
    "worker-out-of-memory": Code("error", "file", "reading needed more memory than allowed"),
    "worker-killed": Code("error", "file", "processing was stopped by a CPU-time or kill "
                                           "limit"),
    "cell-date-out-of-range": Code("error", "file", "a date cell beyond any calendar (e.g. "
                                                    "-1E+308) that the reader cannot convert"),
    "grid-too-large": Code("error", "file", "the readings span more intervals than a results "
                                            "workbook holds at the settings' interval"),
    "strings-count-implausible": Code("error", "file", "the shared-strings part declares more "
                                                       "text values than it can hold"),
    "internal-error": Code("error", "file", "a fault in surveytools itself on this file"),
    "output-disk-full": Code("error", "file", "the results of this input could not be written: "
                                              "the disk is full; it is processed again on the "
                                              "next run"),
    "output-not-writable": Code("error", "file", "the results of this input could not be "
                                                 "written (read-only or no permission)"),
    # --- batch: paths not processed ------------------------------------------------------
    "path-missing": Code("error", "batch", "a path given on the command line does not exist"),
    "not-regular-file": Code("info", "batch", "a link, pipe or device in the folder: skipped"),
    "lock-or-temp-file": Code("info", "batch", "a lock or temporary file of a spreadsheet "
                                               "program, or a surveytools output named as an "
                                               "input: skipped (outputs found in a scanned "
                                               "folder are passed over silently)"),
    "not-a-survey-file": Code("info", "batch", "not an .xlsx, .xlsm, .csv or .parquet file: "
                                               "skipped"),
    "file-changing": Code("warning", "batch", "still being copied: deferred to the next run"),
    # --- sheets and columns ----------------------------------------------------------------
    "readings-sheet-missing": Code("error", "file", "no readings sheet found"),
    "readings-sheet-chosen": Code("info", "sheet", "the readings sheet was recognised by "
                                                   "another name or by its columns"),
    "readings-missing": Code("error", "sheet", "no usable readings table (none found, or a "
                                               "header without readings below it)"),
    "header-missing": Code("error", "sheet", "no header row in the first rows of a sheet"),
    "column-missing": Code("error", "sheet", "a required column (LAeq, a time column) is "
                                             "missing"),
    "column-duplicate": Code("warning", "cell", "two columns mean the same quantity"),
    "column-unknown": Code("info", "cell", "a column not in the vocabulary (kept, ignored)"),
    "sheet-hidden": Code("warning", "sheet", "a hidden sheet was used"),
    "merged-cells": Code("warning", "cell", "merged cells in data rows"),
    "formula-without-value": Code("warning", "cell", "a formula cell with no stored result "
                                                     "(treated as empty)"),
    "cell-error-value": Code("error", "cell", "a spreadsheet error value such as #DIV/0!"),
    "text-control-characters": Code("warning", "cell", "illegal control characters replaced"),
    "text-truncated": Code("warning", "cell", "text cut to the 32,767-character cell limit"),
    "row-empty": Code("info", "cell", "an empty row inside the table"),
    # --- Survey sheet ------------------------------------------------------------------
    "survey-not-finite": Code("error", "cell", "a Survey number that is not finite"),
    "survey-time-zone-unknown": Code("error", "cell", "a time zone that is not an IANA name"),
    "survey-key-duplicate": Code("warning", "cell", "a Survey field given twice"),
    "survey-default-used": Code("info", "cell", "a Survey field taken from the settings"),
    "clock-invalid": Code("error", "cell", "a clock that is not local, UTC or UTC+hh:mm"),
    "time-zone-assumed": Code("warning", "sheet", "no time zone given: the site's civil time "
                                                  "(periods, days, local times) is assumed"),
    "calibration-drift": Code("warning", "cell", "calibration checks before/after differ by "
                                                 "more than the limit"),
    "calibration-missing": Code("warning", "cell", "a calibration check is not recorded"),
    "calibrator-level-unusual": Code("warning", "cell", "calibrator level not near a nominal "
                                                        "value (94, 104, 114 dB)"),
    # --- timestamps ----------------------------------------------------------------------
    "timestamp-stray": Code("error", "cell", "a reading far outside the survey's span (a "
                                            "wrong year or month); the row is left out"),
    "column-not-numbers": Code("error", "cell", "most cells of a level or weather column are "
                                               "text (decimal commas, units in the cells): "
                                               "reported once, at the column's header"),
    "timestamp-column-unreadable": Code("error", "cell", "most timestamps of a column share one "
                                                        "problem (e.g. day/month/year text): "
                                                        "reported once, at the column's header"),
    "timestamp-invalid": Code("error", "cell", "not a date-time (the row cannot be placed "
                                               "in time)"),
    "timestamp-missing": Code("error", "cell", "a row with values but no timestamp"),
    "timestamp-nonexistent": Code("error", "cell", "a local time skipped by the clock change "
                                                   "to summer time"),
    "timestamp-ambiguous": Code("warning", "cell", "a repeated autumn hour that the row order "
                                                   "cannot place"),
    "timestamp-duplicate": Code("error", "cell", "the same start time twice (the later row is "
                                                 "excluded)"),
    "timestamp-out-of-order": Code("warning", "cell", "a row earlier than the row above it"),
    "timestamps-end-used": Code("info", "sheet", "times taken as interval ends"),
    "dst-policy-applied": Code("info", "sheet", "how a summer-time change was handled"),
    "interval-overlap": Code("warning", "cell", "an interval overlapping the previous one "
                                                "(excluded)"),
    "gap": Code("info", "cell", "a gap in the log longer than the logging step allows"),
    "duration-invalid": Code("error", "cell", "an interval length that is empty, zero, "
                                              "negative or text"),
    # --- levels and flags ----------------------------------------------------------------
    "level-not-a-number": Code("error", "cell", "text in a level cell"),
    "level-not-finite": Code("error", "cell", "an infinite or NaN level"),
    "level-missing": Code("warning", "cell", "an empty LAeq cell (the reading is excluded)"),
    "level-out-of-range": Code("error", "cell", "a level outside the plausible range"),
    "level-overload-marker": Code("warning", "cell", "an overload marker (e.g. OVL) in a level "
                                                     "cell"),
    "level-order": Code("warning", "cell", "LAFmax >= LAeq >= LAF90 >= LAFmin does not hold"),
    "flag-not-yes-no": Code("warning", "cell", "an Overload/Operating cell that is not yes/no"),
    # --- weather and technician exclusions ---------------------------------------------
    "weather-not-a-number": Code("error", "cell", "text in a wind or rain cell"),
    "weather-not-finite": Code("error", "cell", "an infinite or NaN wind or rain value"),
    "weather-out-of-range": Code("error", "cell", "a wind or rain value outside its range"),
    "weather-file-unreadable": Code("error", "sheet", "the shared weather file (--weather) "
                                                      "cannot be used; no shared weather "
                                                      "applied"),
    "weather-source": Code("info", "sheet", "which weather (own sheet, shared file) covers "
                                            "which time"),
    "weather-gap": Code("warning", "sheet", "a stretch of the survey that no weather covers "
                                            "(once per gap)"),
    "exclusion-span-invalid": Code("error", "cell", "an exclusion whose To is not after From"),
    "exclusion-scope-unknown": Code("error", "cell", "Applies to is neither all nor "
                                                     "background"),
    # --- frequency analysis ------------------------------------------------------------
    "band-total-mismatch": Code("warning", "sheet", "the A-weighted total of the band levels "
                                                    "does not match the logged LAeq"),
    # --- bookkeeping -----------------------------------------------------------------------
    "findings-truncated": Code("info", "file", "more findings of one code than are listed"),
}


def is_known(code: str) -> bool:
    """Return True when ``code`` is catalogued (``survey-<keyword>`` codes included)."""
    return code in CODES or (code.startswith(SURVEY_SCHEMA_PREFIX)
                             and code[len(SURVEY_SCHEMA_PREFIX):].replace("-", "").isalpha())


def markdown_table() -> str:
    """Return the finding-code table shown in the README."""
    lines = ["| code | severity | points to | meaning |", "|---|---|---|---|"]
    for code, c in CODES.items():
        lines.append(f"| `{code}` | {c.severity} | {c.scope} | {c.meaning} |")
    lines.append("| `survey-<keyword>` | error | cell | a Survey value breaks "
                 "`schemas/survey.schema.json` (`survey-required`, `survey-enum`, "
                 "`survey-type`, `survey-minimum` ...) |")
    return "\n".join(lines) + "\n"
