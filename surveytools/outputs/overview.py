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

from surveytools.outputs.xlsx_style import (
    FIXED_CREATED,
    WORKBOOK_OPTIONS,
    SheetWriter,
    Styles,
    cautions_lines,
    finite_number,
)

SHEET_OVERVIEW = "Overview"
SHEET_SKIPPED = "Skipped"

#: What our own output names look like (sanitised stem, optional hash suffix, ``.xlsx``);
#: a name that does not match gets no link.
SAFE_OUTPUT_NAME_RE = re.compile(r"^[A-Za-z0-9_][A-Za-z0-9._-]{0,200}\.xlsx$")

#: Survey-average indicators shown per input (document key, header).
OVERVIEW_LEVELS: tuple[tuple[str, str], ...] = (
    ("Lday", "Lday"), ("Levening", "Levening"), ("Lnight", "Lnight"), ("Lden", "Lden"),
    ("Ldn", "Ldn"), ("LAeq_16h", "LAeq,16h"), ("LAeq_8h", "LAeq,8h"),
)


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


def _get(mapping: object, *keys: str) -> Any:
    node: Any = mapping
    for key in keys:
        if not isinstance(node, Mapping):
            return None
        node = node.get(key)
    return node


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


def _write_overview(sw: SheetWriter, overview: Mapping[str, Any]) -> None:
    ws = sw.ws
    tool = overview.get("tool") or {}
    sw.text(0, 0, "Sound survey batch overview", "title", measure=False)
    sw.text(1, 0, f"Written by {tool.get('name', 'surveytools')} {tool.get('version', '')}. "
                  "Levels are survey averages over all valid time; times are each "
                  "site's civil time (its time zone).", "note", measure=False)
    row = 3
    sw.text(row, 0, "CAUTIONS", "subtitle", measure=False)
    row += 1
    for line in cautions_lines():
        ws.merge_range(row, 0, row, 12, "", styles_get(sw, "caution"))
        sw.text(row, 0, line, "caution", measure=False)
        ws.set_row(row, 30)
        row += 1
    row += 1
    counts = overview.get("counts") or {}
    sw.text(row, 0, "Counts", "subtitle", measure=False)
    row += 1
    for key in ("ok", "warnings", "errors", "unreadable", "skipped"):
        sw.text(row, 0, key, f"st_{key}" if key != "skipped" else "text", measure=False)
        sw.number(row, 1, counts.get(key), "int")
        row += 1
    row += 1

    headers = ["Input file", "Position", "Site", "Status", "First (local)", "Last (local)",
               "Valid [%]"]
    headers += [f"{name} [dB]" for _, name in OVERVIEW_LEVELS]
    headers += ["Background LA90 day [dB]", "Background LA90 night [dB]",
                "Worst excess over background [dB]", "Criteria failed", "Errors", "Warnings",
                "Info", "Results workbook", "Reason (unreadable)"]
    header_row = row
    sw.header(header_row, 0, headers)
    ws.set_row(header_row, 30)
    ws.freeze_panes(header_row + 1, 1)
    inputs = list(overview.get("inputs") or [])
    link_fmt = sw.styles.get("link")
    for i, item in enumerate(inputs):
        r = header_row + 1 + i
        status = str(item.get("status") or "")
        sw.text(r, 0, item.get("file"))
        sw.text(r, 1, item.get("position"))
        sw.text(r, 2, item.get("site"))
        sw.text(r, 3, status, f"st_{status}" if status in ("ok", "warnings", "errors",
                                                              "unreadable") else "text")
        sw.stamp(r, 4, _get(item, "coverage", "first"), "datetime_short")
        sw.stamp(r, 5, _get(item, "coverage", "last"), "datetime_short")
        sw.number(r, 6, _get(item, "coverage", "valid_fraction"), "percent")
        col = 7
        avg = item.get("survey_average") or {}
        for key, _ in OVERVIEW_LEVELS:
            sw.number(r, col, avg.get(key), "level")
            col += 1
        sw.number(r, col, _get(item, "background", "day"), "level")
        sw.number(r, col + 1, _get(item, "background", "night"), "level")
        excess = finite_number(item.get("worst_excess_over_background"))
        sw.number(r, col + 2, excess, "level")
        failed = item.get("criteria_failed")
        sw.number(r, col + 3, failed, "fail" if isinstance(failed, int) and failed else "int")
        findings = item.get("findings") or {}
        for j, sev in enumerate(("error", "warning", "info")):
            n = findings.get(sev)
            sw.number(r, col + 4 + j, n, f"sev_{sev}" if isinstance(n, int) and n else "int")
        link_col = col + 7
        name = safe_link_name(item.get("results_xlsx"))
        if name is not None:
            ws.write_url(r, link_col, "external:" + name, link_fmt, string=name)
            sw.widths[link_col] = max(sw.widths.get(link_col, 0), len(name))
        elif item.get("results_xlsx"):
            sw.text(r, link_col, "(no link: unexpected output name)", "note")
        sw.text(r, link_col + 1, item.get("reason"), measure=False)
    last = header_row + max(len(inputs), 1)
    ws.autofilter(header_row, 0, last, len(headers) - 1)
    if not inputs:
        sw.text(header_row + 1, 0, "No inputs were processed.", "note", measure=False)
    sw.fit_columns(minimum=9.0, maximum=40.0)
    ws.set_column(len(headers) - 1, len(headers) - 1, 80)
    ws.set_landscape()
    ws.set_paper(9)
    ws.fit_to_pages(1, 0)
    ws.repeat_rows(header_row)


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
