"""The batch overview workbook (``overview.xlsx``): one row per input, plus the cautions.

Links to each results workbook are relative file names built only from our own sanitised
output names (checked against :data:`SAFE_OUTPUT_NAME_RE`), never from input text.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from pathlib import Path, PurePosixPath
from typing import Any

import xlsxwriter

from surveytools.outputs.display import get, level, share
from surveytools.outputs.xlsx_style import (
    FIXED_CREATED,
    WORKBOOK_OPTIONS,
    SheetWriter,
    Styles,
    cautions_lines,
    print_setup,
    wrapped_lines,
)
from surveytools.verdict import UNWRITTEN, batch_tally, data_quality_words

SHEET_OVERVIEW = "Overview"
SHEET_SKIPPED = "Skipped"

#: What our own output names look like (sanitised stem, optional hash suffix, ``.xlsx``);
#: a name that does not match gets no link.
SAFE_OUTPUT_NAME_RE = re.compile(r"^[A-Za-z0-9_][A-Za-z0-9._-]{0,200}\.xlsx$")


def safe_link_name(results_xlsx: object) -> str | None:
    """Return the file name to link to, or None when it is not one of our output names.

    Parameters
    ----------
    results_xlsx : object
        The ``results_xlsx`` entry of an overview input (a name or a path).

    Returns
    -------
    str or None
        The bare file name when it matches :data:`SAFE_OUTPUT_NAME_RE` and holds no ``..``.
    """
    if not isinstance(results_xlsx, str) or not results_xlsx or "\\" in results_xlsx:
        return None
    name = PurePosixPath(results_xlsx).name
    if ".." in name or not SAFE_OUTPUT_NAME_RE.match(name):
        return None
    return name


def write_overview_workbook(path: Path, overview: dict[str, Any]) -> None:
    """Write the batch overview workbook.

    Parameters
    ----------
    path : pathlib.Path
        Where to write (the caller renames it into place).
    overview : dict
        The ``overview.json`` document: ``inputs``, ``counts``, ``skipped``, ...
    """
    wb = xlsxwriter.Workbook(str(path), WORKBOOK_OPTIONS)
    try:
        wb.set_properties({"title": "Sound survey batch overview", "author": "surveytools",
                           "created": FIXED_CREATED})
        styles = Styles(wb)
        sw = SheetWriter(wb.add_worksheet(SHEET_OVERVIEW), styles)
        _write_overview(sw, overview)
        skipped = SheetWriter(wb.add_worksheet(SHEET_SKIPPED), styles)
        _write_skipped(skipped, overview)
        sw.ws.activate()
    finally:
        wb.close()


#: Overview columns: (header, width in characters). Every level is the reported value.
OVERVIEW_COLUMNS: tuple[tuple[str, float], ...] = (
    ("Input file", 17.0), ("Position", 8.0), ("Site", 12.0), ("Criteria outcome", 15.0),
    ("Data quality", 11.0), ("Conditions affecting the figures", 24.0), ("Valid [%]", 6.5),
    ("Lden [dB]", 6.5), ("Lday [dB]", 6.5), ("Levening [dB]", 8.0), ("Lnight [dB]", 6.5),
    ("Background LA90 day [dB]", 11.0), ("Background LA90 night [dB]", 11.0),
    ("Worst excess over background [dB]", 11.0), ("Figures above limits (count)", 8.0),
    ("Episodes above limit / warning", 9.5),
    ("Errors", 6.5), ("Warnings", 8.0), ("Results workbook", 11.0),
)


def _conditions_text(item: Mapping[str, Any]) -> str:
    if item.get("status") == "unreadable":
        return f"could not be read: {item.get('reason') or 'see the results JSON'}"
    if item.get("status") == UNWRITTEN:
        return f"results not written: {item.get('reason') or 'see overview.json'}"
    verdict = item.get("verdict") or {}
    warnings = list(verdict.get("warnings_affecting_figures") or [])
    return "; ".join(str(w.get("message") or w.get("code")) for w in warnings) or "none found"


def _write_overview(sw: SheetWriter, overview: Mapping[str, Any]) -> None:
    ws = sw.ws
    tool = overview.get("tool") or {}
    last_col = len(OVERVIEW_COLUMNS) - 1
    for col, (_name, width) in enumerate(OVERVIEW_COLUMNS):
        sw.set_width(col, width)
    total_width = sum(w for _, w in OVERVIEW_COLUMNS)
    sw.text(0, 0, "Sound survey batch overview", "title", measure=False)
    note = (f"Written by {tool.get('name', 'surveytools')} {tool.get('version', '')}. "
            "One row per input: the criteria outcome (criteria not met of those set) and, "
            "separately, the data quality. Levels are survey averages over all valid time, "
            "reported to 0.1 dB as judged; times are each site's civil time (its time zone).")
    ws.merge_range(1, 0, 1, last_col, "", sw.styles.get("note_across"))
    sw.text(1, 0, note, "note_across", measure=False)
    ws.set_row(1, 15.0 * wrapped_lines(note, total_width * 1.05) + 2)
    row = 3
    sw.text(row, 0, "CAUTIONS", "subtitle", measure=False)
    row += 1
    for line in cautions_lines():
        ws.merge_range(row, 0, row, last_col, "", styles_get(sw, "caution"))
        sw.text(row, 0, line, "caution", measure=False)
        ws.set_row(row, 15.0 * wrapped_lines(line, total_width) + 2)
        row += 1
    row += 1
    inputs = list(overview.get("inputs") or [])
    counts: dict[str, int] = {"skipped": int((overview.get("counts") or {}).get("skipped") or 0)}
    tally, not_met = batch_tally([(str(i.get("status")), i.get("verdict")) for i in inputs])
    counts.update(tally)
    words = {"ok": "data ok", "warnings": "data with warnings", "errors": "data with errors",
             "unreadable": "could not be read", "skipped": "skipped"}
    if counts.get(UNWRITTEN):
        words[UNWRITTEN] = "with results not written"
    sw.text(row, 0, f"Inputs: criteria not met at {not_met} of {len(inputs)}; "
            + ", ".join(f"{int(counts.get(k) or 0)} {w}" for k, w in words.items()),
            "bold", measure=False)
    row += 2

    headers = [name for name, _ in OVERVIEW_COLUMNS]
    header_row = row
    sw.header(header_row, 0, headers)
    sw.header_height(header_row, 0, headers)
    ws.freeze_panes(header_row + 1, 1)
    link_fmt = sw.styles.get("link")
    for i, item in enumerate(inputs):
        r = header_row + 1 + i
        status = str(item.get("status") or "")
        verdict = item.get("verdict") or {}
        sw.text(r, 0, item.get("file"), "wrap", measure=False)
        sw.text(r, 1, item.get("position"), "wrap", measure=False)
        sw.text(r, 2, item.get("site"), "wrap", measure=False)
        outcome = verdict.get("outcome")
        sw.text(r, 3, verdict.get("outcome_text")
                or ("n/a" if status in ("unreadable", UNWRITTEN) else ""),
                {"not met": "wrap_fail", "met": "wrap_pass"}.get(str(outcome), "wrap"),
                measure=False)
        quality = str(verdict.get("data_quality") or status)
        sw.text(r, 4, data_quality_words(quality),
                f"wrap_{quality}" if quality in ("ok", "warnings", "errors", "unreadable")
                else "wrap_unreadable" if quality == UNWRITTEN else "wrap", measure=False)
        conditions = _conditions_text(item)
        sw.text(r, 5, conditions, "wrap", measure=False)
        sw.number(r, 6, share(get(item, "coverage", "valid_fraction")), "percent1")
        avg = item.get("survey_average") or {}
        for j, key in enumerate(("Lden", "Lday", "Levening", "Lnight")):
            sw.number(r, 7 + j, level(avg.get(key)), "level")
        whole = get(item, "background", "method") == "mode"
        for j, period in enumerate(("day", "night")):
            sw.number(r, 11 + j, level(get(item, "background", period), whole),
                      "whole_db" if whole else "level")
        sw.number(r, 13, level(item.get("worst_excess_over_background")), "level")
        failed = item.get("criteria_failed")
        sw.number(r, 14, failed, "fail" if isinstance(failed, int) and failed else "int")
        episodes = item.get("episodes")
        if isinstance(episodes, Mapping):  # absent in an overview of an earlier version
            above = int(episodes.get("limit") or 0)
            sw.text(r, 15, f"{above} / {int(episodes.get('warning') or 0)}",
                    "count_text_fail" if above else "count_text", measure=False)
        findings = item.get("findings") or {}
        for j, sev in enumerate(("error", "warning")):
            n = findings.get(sev)
            sw.number(r, 16 + j, n, f"sev_{sev}" if isinstance(n, int) and n else "int")
        name = safe_link_name(item.get("results_xlsx"))
        if name is not None:
            # a short link text: a file name has no place to wrap and would run off the
            # printed page; the target (and overview.json) keep the full name
            ws.write_url(r, 18, "external:" + name, link_fmt, string="open results",
                         tip=name)
        elif item.get("results_xlsx"):
            sw.text(r, 18, "(no link: unexpected output name)", "note")
        lines = max(wrapped_lines(str(t or ""), OVERVIEW_COLUMNS[c][1])
                    for c, t in ((0, item.get("file")), (2, item.get("site")),
                                 (3, verdict.get("outcome_text")), (5, conditions)))
        if lines > 1:
            ws.set_row(r, 15.0 * lines + 2)
    last = header_row + max(len(inputs), 1)
    ws.autofilter(header_row, 0, last, last_col)
    if not inputs:
        sw.text(header_row + 1, 0, "No inputs were processed.", "note", measure=False)
    print_setup(ws, total_width, (header_row, header_row), 1, last_row=last,
                last_col=last_col)
    ws.fit_to_pages(1, 0)  # always one page wide: the columns above are sized for it


def styles_get(sw: SheetWriter, name: str) -> Any:
    """Return the shared format ``name`` of a sheet writer."""
    return sw.styles.get(name)


def _write_skipped(sw: SheetWriter, overview: Mapping[str, Any]) -> None:
    ws = sw.ws
    sw.header(0, 0, ["Path", "Why it was not processed"])
    ws.freeze_panes(1, 0)
    skipped = list(overview.get("skipped") or [])
    for i, item in enumerate(skipped):
        sw.text(1 + i, 0, item.get("path"))
        sw.text(1 + i, 1, item.get("reason"))
    if not skipped:
        sw.text(1, 0, "Nothing was skipped.", "note", measure=False)
    ws.autofilter(0, 0, max(len(skipped), 1), 1)
    sw.fit_columns(minimum=12.0, maximum=90.0)


__all__ = ["safe_link_name", "write_overview_workbook"]
