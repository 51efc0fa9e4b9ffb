"""The Summary sheet: the verdict first, then the figures a manager acts on, on one A4 page.

Top down: the criteria outcome in words (how many criteria were not met, of how many, or that
none were set) and, separately and named as such, the data quality with every warning that
affects the figures, by message; then position, survey window and coverage; the
survey-average figures with how each was derived; the criteria, each with the reported
values it was judged on; the source assessments (impact wording keeps the standard's own
caveat); the cautions. Every level is the reported 0.1 dB value
(:mod:`surveytools.outputs.display`). The page prints on exactly one A4 landscape page;
every text that could be longer than its cell wraps inside a merged range whose height is
set for it, so nothing is cut at the edge.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from surveytools.outputs import display as d
from surveytools.outputs.book import Book
from surveytools.outputs.spectra_sheet import summary_lines
from surveytools.outputs.xlsx_style import (
    HEADER_LINE_HEIGHT_PT,
    PRINT_FOOTER,
    SheetWriter,
    cautions_lines,
    finite_number,
    occupational_warning,
    parse_local_timestamp,
    severity_counts,
    text_lines,
    wrapped_lines,
)
from surveytools.verdict import episode_counts

SHEET_SUMMARY = "Summary"

#: Column widths of the Summary [characters]: labels, four narrow value columns, text.
COLUMNS = (30.0, 13.0, 13.0, 13.0, 20.0, 62.0)
LAST_COL = len(COLUMNS) - 1
#: Rows listed per block on the Summary (the detail sheets list them all).
MAX_LIST = 4
#: Warnings affecting the figures listed by message on the Summary.
MAX_WARNINGS = 4
#: Height of the thin gap rows between blocks [pt].
GAP_PT = 7.0
#: Characters of running text per column-width unit in a wide cell: text averages narrower
#: than the digit the unit counts (measured on printed pages: a 121-unit span held about
#: 135 characters of message text in the widest fallback font, DejaVu Sans).
_TEXT_PER_UNIT = 1.1
#: Line height of 11-pt text and of 9-pt notes [pt].
LINE_PT = HEADER_LINE_HEIGHT_PT
NOTE_LINE_PT = 12.0


def _span_width(first: int, last: int) -> float:
    return sum(COLUMNS[first:last + 1])


def _para(sw: SheetWriter, row: int, text: str, style: str, first: int = 1,
          last: int = LAST_COL, small: bool = False) -> None:
    """Write wrapped text over merged columns with a row height that shows all of it."""
    sw.ws.merge_range(row, first, row, last, "", sw.styles.get(style))
    sw.text(row, first, text, style, measure=False)
    width = _span_width(first, last) * (11.0 / 9.0 if small else 1.0) * _TEXT_PER_UNIT
    lines = text_lines(text, width)
    height = (NOTE_LINE_PT if small else LINE_PT) * lines + 2
    if lines > 1 or height > LINE_PT + 2:
        sw.ws.set_row(row, height)


def _row_height(sw: SheetWriter, row: int, texts: list[tuple[str, int, bool]]) -> None:
    """Set a table row's height for wrapped cells: (text, column, small font)."""
    lines = 1
    pt = LINE_PT
    for text, col, small in texts:
        width = COLUMNS[col] * (11.0 / 9.0 if small else 1.0)
        n = wrapped_lines(text, width * (_TEXT_PER_UNIT if width > 40 else 1.0))
        if n > lines:
            lines = n
            pt = NOTE_LINE_PT if small else LINE_PT
    if lines > 1:
        sw.ws.set_row(row, pt * lines + 2)


def _verdict(sw: SheetWriter, doc: Mapping[str, Any], row: int) -> int:
    verdict = d.verdict_of(doc)
    outcome = verdict.get("outcome")
    text = str(verdict.get("outcome_text") or "")
    figures = int(verdict.get("figures_not_meeting") or 0)
    if outcome == "not met":
        style = "verdict_fail"
        text = (f"NOT MET - {text} ({figures} figure{'s' if figures != 1 else ''} above "
                "their limits; see Criteria below)")
    elif outcome == "met" and verdict.get("criteria_checked") == verdict.get("criteria_total"):
        style, text = "verdict_pass", f"MET - {text}"
    elif outcome == "met":
        style, text = "verdict_pass", f"NONE EXCEEDED - {text}"
    else:
        style = "verdict_neutral"
    sw.text(row, 0, "Criteria outcome", "verdict_label", measure=False)
    _para(sw, row, text, style)
    sw.ws.set_row(row, 24)
    row += 1
    quality = str(verdict.get("data_quality") or "")
    warnings = list(verdict.get("warnings_affecting_figures") or [])
    words = str(verdict.get("data_quality_text") or quality)
    if warnings:
        n = len(warnings)
        words += (f" - {n} condition{'s' if n != 1 else ''} affect{'s' if n == 1 else ''} "
                  "the figures (listed below)")
    elif quality == "ok":
        words += " - no condition found that affects the figures"
    style = {"ok": "verdict_pass", "warnings": "verdict_warn"}.get(quality, "verdict_fail")
    sw.text(row, 0, "Data quality", "verdict_label", measure=False)
    _para(sw, row, words, style)
    sw.ws.set_row(row, 24)
    row += 1
    for w in warnings[:MAX_WARNINGS]:
        count = int(w.get("count") or 1)
        message = str(w.get("message") or w.get("code"))
        if count > 1 and not str(w.get("code", "")).startswith(("coverage", "excluded",
                                                                 "failures")):
            message += f" ({count} findings of this kind; see Findings)"
        sw.text(row, 0, "Affects the figures", "bold", measure=False)
        _para(sw, row, message, "warn_line")
        row += 1
    if len(warnings) > MAX_WARNINGS:
        sw.text(row, 1, f"... and {len(warnings) - MAX_WARNINGS} more on the Findings sheet",
                "note", measure=False)
        row += 1
    return row


def _identity(sw: SheetWriter, doc: Mapping[str, Any], row: int) -> int:
    survey = doc.get("survey") or {}
    position = survey.get("position")
    site = survey.get("site")
    cov = doc.get("coverage") or {}
    sw.text(row, 0, "Position", "bold", measure=False)
    _para(sw, row, str(position or "not stated"), "wrap")
    row += 1
    sw.text(row, 0, "Site", "bold", measure=False)
    _para(sw, row, str(site or "not stated"), "wrap")
    row += 1
    sw.text(row, 0, "Input file", "bold", measure=False)
    _para(sw, row, str(d.get(doc, "input", "file") or ""), "wrap")
    row += 1
    sw.text(row, 0, "Survey window (local)", "bold", measure=False)
    first, off1 = parse_local_timestamp(cov.get("first"))
    last, off2 = parse_local_timestamp(cov.get("last"))
    if first is not None and last is not None:
        offs = " / ".join(dict.fromkeys(o for o in (off1, off2) if o))
        window = (f"{first:%Y-%m-%d %H:%M} to {last:%Y-%m-%d %H:%M}"
                  + (f" (UTC {offs})" if offs else ""))
    else:
        window = "no readings could be placed in time"
    _para(sw, row, window, "wrap")
    row += 1
    sw.text(row, 0, "Data coverage", "bold", measure=False)
    valid, measured = cov.get("valid_s"), cov.get("measured_s")
    measured_s = finite_number(measured)
    if measured_s:
        text = (f"{d.hours_text(valid)} valid of {d.hours_text(measured)} measured "
                f"({d.share_text((finite_number(valid) or 0.0) / measured_s)} valid)")
    elif finite_number(valid) is not None:
        text = f"{d.hours_text(valid)} valid"
    else:
        text = "no readings could be placed in time"
    excluded = cov.get("excluded_s") or {}
    if excluded:
        background_only = {str(sp.get("reason")) for sp in doc.get("exclusion_spans") or []
                           if sp.get("scope") == "background"}
        parts = sorted(excluded.items(), key=lambda kv: -float(kv[1] or 0))
        text += "; excluded: " + ", ".join(
            f"{k} {d.duration_text(v)}" + (" (from background only)" if k in background_only
                                        else "") for k, v in parts)
    unplaced = cov.get("unplaced_rows")
    if isinstance(unplaced, int) and unplaced:
        text += f"; {unplaced} row(s) could not be placed in time (see Exclusions)"
    _para(sw, row, text, "wrap")
    return row + 1


def _figures(sw: SheetWriter, doc: Mapping[str, Any], row: int) -> int:
    sw.text(row, 0, "Survey-average figures (reported to 0.1 dB)", "subtitle", measure=False)
    row += 1
    sw.header(row, 0, ["Indicator", "Level [dB]", "Valid time [h]"])
    sw.header_height(row, 0, ["Indicator", "Level [dB]", "Valid time [h]"])
    sw.ws.merge_range(row, 3, row, LAST_COL, "", sw.styles.get("header"))
    sw.ws.write_string(row, 3, "How derived", sw.styles.get("header"))
    row += 1
    avg = doc.get("survey_average") or {}
    valid = avg.get("valid_s") or {}
    notes = d.how_derived(doc)
    valid_by_key: dict[str, object] = {"Lday": valid.get("day"),
                                       "Levening": valid.get("evening"),
                                       "Lnight": valid.get("night")}
    if all(finite_number(valid.get(k)) is not None for k in ("day", "evening", "night")):
        valid_by_key["Lden"] = sum(float(valid[k]) for k in ("day", "evening", "night"))
    for key in ("Lden", "Lday", "Levening", "Lnight", "Ldn", "CNEL", "LAeq_16h", "LAeq_8h"):
        sw.text(row, 0, f"{d.DAY_NAMES[key]} [dB]", "td_bold", measure=False)
        value = d.level(avg.get(key))
        sw.number(row, 1, value, "td_level_bold")
        sw.number(row, 2, d.hours(valid_by_key.get(key)), "td_hours")
        note = notes[key] if value is not None else "not available: no valid time in this period"
        _para(sw, row, note, "td_note", first=3, small=True)
        row += 1
    bg = doc.get("background") or {}
    whole = d.background_whole_db(doc)
    for period, key in (("day", "bg_day"), ("night", "bg_night")):
        sw.text(row, 0, f"Background LA90, {period} [dB]", "td_bold", measure=False)
        value = d.level(d.get(bg, period, "LA90"), whole)
        sw.number(row, 1, value, "td_whole_db_bold" if whole else "td_level_bold")
        sw.blank(row, 2, "td")
        n = d.get(bg, period, "n_intervals")
        note = notes[key]
        if value is None:
            note = "not available: no valid reference interval. " + note
        elif isinstance(n, int):
            note = f"{n} intervals. " + note
        _para(sw, row, note, "td_note", first=3, small=True)
        row += 1
    return row


def _criteria(sw: SheetWriter, doc: Mapping[str, Any], row: int) -> int:
    criteria = list(doc.get("criteria") or [])
    sw.text(row, 0, "Criteria (judged on reported values)", "subtitle", measure=False)
    row += 1
    if not criteria:
        sw.text(row, 0, "No criteria were set for this position.", "note", measure=False)
        return row + 1
    names = ["Criterion", "Limit [dB]", "Outcome", "Figures above limit", "Judged on",
             "First figures above the limit (reported)"]
    sw.header(row, 0, names)
    sw.header_height(row, 0, names)
    row += 1
    for c in criteria[:MAX_LIST]:
        name = str(c.get("name") or c.get("indicator"))
        sw.text(row, 0, name, "td_wrap", measure=False)
        sw.number(row, 1, finite_number(c.get("limit_db")), "td_level")
        outcome = d.outcome_word(c)
        sw.text(row, 2, outcome, {"not met": "td_fail", "met": "td_pass"}.get(outcome,
                                                                             "td_center"),
                measure=False)
        sw.text(row, 3, d.figure_count_text(c), "td_center", measure=False)
        judged = d.criterion_indicator(c)
        sw.text(row, 4, judged, "td_wrap", measure=False)
        fails = d.failures_text(c) or "none"
        sw.text(row, 5, fails, "td_wrap", measure=False)
        _row_height(sw, row, [(name, 0, False), (judged, 4, False), (fails, 5, False)])
        row += 1
    if len(criteria) > MAX_LIST:
        sw.text(row, 0, f"... and {len(criteria) - MAX_LIST} more criteria: see the Days, "
                        "Intervals and hourly sheets", "note", measure=False)
        row += 1
    return row


def _episodes_line(sw: SheetWriter, doc: Mapping[str, Any], row: int) -> int:
    """Write the count of episodes of the criteria (the Episodes sheet lists each one)."""
    criteria = list(doc.get("criteria") or [])
    if not any(c.get("episodes") is not None for c in criteria):
        return row
    counts = episode_counts(doc)
    n_limit, n_all = counts["limit"], counts["limit"] + counts["warning"]
    sw.text(row, 0, "Episodes (above a warning level or limit)", "subtitle", measure=False)
    row += 1
    sw.text(row, 0, "Episodes", "bold", measure=False)
    text = f"{n_all} episodes, {n_limit} above a limit" if n_all else "none"
    _para(sw, row, text, "fail" if n_limit else "wrap", first=1, last=3)
    sw.text(row, 4, "each one on the Episodes sheet", "note", measure=False)
    return row + 1


def _assessments(sw: SheetWriter, doc: Mapping[str, Any], row: int) -> int:
    assessments = list(doc.get("assessments") or [])
    if not assessments:
        return row
    sw.text(row, 0, "Source assessments", "subtitle", measure=False)
    row += 1
    names = ["Assessment", "Specific level [dB]", "Rating level [dB]",
             "Excess over background [dB]", "Specific level basis", "Impact indication"]
    sw.header(row, 0, names)
    sw.header_height(row, 0, names)
    row += 1
    for a in assessments[:MAX_LIST]:
        name = str(a.get("name") or "")
        sw.text(row, 0, name, "td_wrap", measure=False)
        sw.number(row, 1, d.level(a.get("specific_level")), "td_level")
        sw.number(row, 2, d.level(a.get("rating_level")), "td_level")
        sw.number(row, 3, d.level(a.get("excess_over_background")), "td_level")
        basis = str(a.get("specific_basis") or "")
        sw.text(row, 4, basis, "td_wrap", measure=False)
        impact = d.impact_text(a.get("impact_indication")) or str(a.get("note") or "")
        sw.text(row, 5, impact, "td_wrap", measure=False)
        _row_height(sw, row, [(name, 0, False), (basis, 4, False), (impact, 5, False)])
        row += 1
    if len(assessments) > MAX_LIST:
        sw.text(row, 0, f"... and {len(assessments) - MAX_LIST} more: see the Assessments "
                        "sheet", "note", measure=False)
        row += 1
    return row


def _frequency(sw: SheetWriter, doc: Mapping[str, Any], row: int) -> int:
    """One line per tone and per low-frequency flag (only with band levels)."""
    lines = summary_lines(doc)
    if not lines:
        return row
    sw.text(row, 0, "Frequency content (one-third-octave bands)", "subtitle", measure=False)
    row += 1
    for text, flagged in lines:
        _para(sw, row, text, "caution" if flagged else "note_across", first=0)
        row += 1
    return row


def _cautions(sw: SheetWriter, doc: Mapping[str, Any], row: int) -> int:
    sw.text(row, 0, "CAUTIONS", "subtitle", measure=False)
    row += 1
    levels = _laeq_levels(doc)
    warning = occupational_warning(levels)
    if warning is not None:
        _para(sw, row, warning, "warning_line", first=0)
        row += 1
    for line in cautions_lines():
        _para(sw, row, line, "caution", first=0)
        row += 1
    return row


def _laeq_levels(doc: Mapping[str, Any]) -> list[object]:
    """Every LAeq-family reported value (for the 80 dB(A) occupational caution).

    Maxima (LAFmax) are left out on purpose: the action value is an 8-hour exposure level
    (LEX,8h); an interval LAeq at or above 80 dB(A) is enough, since someone there for 8 h
    at that level reaches it.
    """
    out: list[object] = [d.get(doc, "overall", "LAeq")]
    out += [iv.get("LAeq") for iv in doc.get("intervals") or []]
    for day in doc.get("days") or []:
        out += [day.get(k) for k, _ in d.DAY_INDICATORS]
    avg = doc.get("survey_average") or {}
    out += [avg.get(k) for k, _ in d.DAY_INDICATORS]
    for a in doc.get("assessments") or []:
        out += [a.get("LAeq_total"), a.get("LAeq_residual"), a.get("specific_level")]
    return [d.level(v) for v in out]


def _pointers(sw: SheetWriter, doc: Mapping[str, Any], row: int) -> int:
    counts = severity_counts(doc.get("findings") or [], doc.get("finding_counts"))
    text = (f"Findings: {counts['error']} error(s), {counts['warning']} warning(s), "
            f"{counts['info']} note(s) - each with its sheet, row and column on the Findings "
            "sheet.")
    sw.text(row, 0, "Findings", "bold", measure=False)
    _para(sw, row, text, "wrap")
    row += 1
    days = list(doc.get("days") or [])
    weak = sum(1 for day in days
               if not all((day.get("sufficient") or {}).get(k, True)
                          for k in ("Lday", "Levening", "Lnight", "Lden")))
    text = (f"{len(days)} assessment day(s) on the Days sheet"
            + (f" ({weak} with a figure below the coverage threshold, shown grey)" if weak
               else "")
            + "; time history, hourly and daily charts with the limits on the Charts sheet.")
    sw.text(row, 0, "More detail", "bold", measure=False)
    _para(sw, row, text, "wrap")
    return row + 1


def add(book: Book) -> None:
    """Add the Summary sheet."""
    sw = book.sheet(SHEET_SUMMARY)
    doc = book.doc
    ws = sw.ws
    for col, width in enumerate(COLUMNS):
        sw.set_width(col, width)
    survey = doc.get("survey") or {}
    title = "Sound survey results"
    if survey.get("position"):
        title += f": position {survey['position']}"
    sw.text(0, 0, title, "title", measure=False)
    tool = doc.get("tool") or {}
    _para(sw, 1, f"Written by {tool.get('name', 'surveytools')} {tool.get('version', '')}. "
                 f"{d.offset_note(doc)}", "note_across", first=0)
    ws.set_row(2, GAP_PT)
    row = _verdict(sw, doc, 3)
    ws.set_row(row, GAP_PT)  # thin gaps between blocks keep the page legible at one page
    row = _identity(sw, doc, row + 1)
    ws.set_row(row, GAP_PT)
    row = _figures(sw, doc, row + 1)
    ws.set_row(row, GAP_PT)
    row = _criteria(sw, doc, row + 1)
    row = _episodes_line(sw, doc, row)
    ws.set_row(row, GAP_PT)
    if doc.get("assessments"):
        row = _assessments(sw, doc, row + 1)
        ws.set_row(row, GAP_PT)
    if doc.get("spectral"):
        row = _frequency(sw, doc, row + 1)
        ws.set_row(row, GAP_PT)
    row = _cautions(sw, doc, row + 1)
    last_row = _pointers(sw, doc, row) - 1
    ws.set_landscape()
    ws.set_paper(9)  # A4
    ws.set_margins(left=0.4, right=0.4, top=0.4, bottom=0.5)
    ws.print_area(0, 0, last_row, LAST_COL)
    ws.fit_to_pages(1, 1)
    ws.set_footer(PRINT_FOOTER)
    ws.activate()
