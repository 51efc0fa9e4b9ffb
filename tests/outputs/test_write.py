"""Results workbook: figures equal the document, text stays text, charts exist, reruns agree.

The reference for every figure is the hand-built results document in
``tests/outputs/results_fixture.py`` (the input the writer is given), not the writer's output.
"""

from __future__ import annotations

import csv
import importlib.metadata
import re
import shutil
import subprocess
import zipfile
from datetime import datetime
from pathlib import Path
from typing import Any

import numpy as np
import openpyxl
import pandas as pd
import pytest

from surveytools.indicators.reporting import reported_level
from surveytools.outputs.write import flatten_settings, write_results_workbook
from tests.outputs.results_fixture import (
    INJECTIONS,
    build_results_doc,
    unreadable_doc,
    with_nones,
)

# ECMA-376 Part 1, ST_Xstring (escaped string): characters XML cannot carry literally are
# written as _xHHHH_ (from memory). Excel and LibreOffice decode it; openpyxl 3.1 leaves
# _x000D_ undecoded, so the tests decode it before comparing with the exact text.
_XSTRING_RE = re.compile(r"_x([0-9A-Fa-f]{4})_")


def xstring_decode(value: object) -> object:
    if not isinstance(value, str):
        return value
    return _XSTRING_RE.sub(lambda m: chr(int(m.group(1), 16)), value)


def write(tmp_path: Path, doc: dict[str, Any], name: str = "out.xlsx",
          annotations: pd.DataFrame | None = None) -> Path:
    path = tmp_path / name
    write_results_workbook(path, doc, annotations)
    return path


def find_label(ws: Any, label: str, col: int = 1) -> int:
    for row in ws.iter_rows(min_col=col, max_col=col):
        if row[0].value == label:
            return row[0].row
    raise AssertionError(f"label {label!r} not found in {ws.title}")


def sheet_xml(path: Path) -> dict[str, str]:
    with zipfile.ZipFile(path) as zf:
        return {n: zf.read(n).decode("utf-8") for n in zf.namelist()
                if n.startswith("xl/worksheets/sheet")}


def all_values(path: Path) -> dict[str, list[tuple[Any, ...]]]:
    wb = openpyxl.load_workbook(path)
    return {ws.title: [tuple(c.value for c in row) for row in ws.iter_rows()]
            for ws in wb.worksheets}


# --------------------------------------------------------------------------------------
# figures
# --------------------------------------------------------------------------------------

HEADLINE = [("Lden [dB]", "Lden"), ("Lday [dB]", "Lday"), ("Levening [dB]", "Levening"),
            ("Lnight [dB]", "Lnight"), ("Ldn [dB]", "Ldn"), ("CNEL [dB]", "CNEL"),
            ("LAeq,16h [dB]", "LAeq_16h"), ("LAeq,8h [dB]", "LAeq_8h")]


def test_summary_headline_equals_document(tmp_path: Path) -> None:
    doc = build_results_doc()
    ws = openpyxl.load_workbook(write(tmp_path, doc))["Summary"]
    for label, key in HEADLINE:
        r = find_label(ws, label)
        cell = ws.cell(r, 2)
        # reference: the document value, shown to 0.1 dB (results spec: workbooks show 0.1 dB)
        assert cell.value == round(doc["survey_average"][key], 1), label
        assert cell.number_format == "0.0"
    # Lden comes first in the headline block, right under its header
    header = find_label(ws, "Indicator")
    assert ws.cell(header + 1, 1).value == "Lden [dB]"
    assert ws.cell(header, 2).value == "Level [dB]"


def test_summary_background_whole_db_with_mode(tmp_path: Path) -> None:
    doc = build_results_doc()
    ws = openpyxl.load_workbook(write(tmp_path, doc))["Summary"]
    r = find_label(ws, "Background LA90, day [dB]")
    # BS 4142 quotes background to whole dB; method is "mode" in the fixture
    assert ws.cell(r, 2).value == 46
    assert ws.cell(r, 2).number_format == "0"
    assert ws.cell(r + 1, 2).value == 38


def test_summary_identity_coverage_status_and_criteria(tmp_path: Path) -> None:
    doc = build_results_doc()
    ws = openpyxl.load_workbook(write(tmp_path, doc))["Summary"]
    assert ws.cell(find_label(ws, "Site"), 2).value == "Larkspur Yard"
    assert ws.cell(find_label(ws, "Position"), 2).value == "North fence"
    r = find_label(ws, "Survey window (local)")
    # hand-evaluated: "2026-06-10T12:00:00+02:00" -> wall clock 2026-06-10 12:00, offset +02:00
    assert ws.cell(r, 2).value == "2026-06-10 12:00 to 2026-06-12 12:00 (UTC +02:00)"
    cov = ws.cell(find_label(ws, "Data coverage"), 2).value
    # hand-evaluated: 169200 s = 47.0 h valid of 172800 s = 48.0 h; 47/48 = 97.9 %
    assert cov.startswith("47.0 h valid of 48.0 h measured (97.9 % valid)")
    # verdict first: criteria outcome (2 of the fixture's 3 criteria fail), then data quality
    assert find_label(ws, "Criteria outcome") == 4
    assert ws.cell(4, 2).value.startswith("NOT MET - 2 of 3 criteria not met")
    assert find_label(ws, "Data quality") == 5
    assert ws.cell(5, 2).value.startswith("with errors")
    fail_row = find_label(ws, "Night LAFmax")
    assert ws.cell(fail_row, 3).value == "not met"
    assert ws.cell(fail_row, 3).fill.fgColor.rgb.endswith("F8D0C8")
    # findings by severity: error count uses the full count (3), not the one listed
    findings = ws.cell(find_label(ws, "Findings"), 2).value
    assert findings.startswith("Findings: 3 error(s), 1 warning(s)")


def test_summary_page_setup_is_one_landscape_a4_page(tmp_path: Path) -> None:
    ws = openpyxl.load_workbook(write(tmp_path, build_results_doc()))["Summary"]
    assert ws.page_setup.orientation == "landscape"
    assert ws.page_setup.paperSize == 9  # ECMA-376 paperSize 9 = A4 (from memory)
    # ECMA-376 CT_PageSetup: fitToWidth/fitToHeight default to 1 when absent (from memory)
    assert ws.page_setup.fitToWidth in (None, 1)
    assert ws.page_setup.fitToHeight in (None, 1)
    assert ws.sheet_properties.pageSetUpPr.fitToPage
    assert ws.print_area is not None
    caution_row = find_label(ws, "CAUTIONS")
    lden_row = find_label(ws, "Lden [dB]")
    last_print_row = int(re.findall(r"\$(\d+)$", ws.print_area[0] if isinstance(
        ws.print_area, list) else ws.print_area)[0])
    assert lden_row < caution_row < last_print_row


def test_cautions_text_and_occupational_warning(tmp_path: Path) -> None:
    quiet = openpyxl.load_workbook(write(tmp_path, build_results_doc(), "q.xlsx"))["Summary"]
    loud = openpyxl.load_workbook(
        write(tmp_path, build_results_doc(high_level=True), "l.xlsx"))["Summary"]

    def texts(ws: Any) -> str:
        return "\n".join(str(c.value) for row in ws.iter_rows() for c in row if c.value)

    q, lo = texts(quiet), texts(loud)
    for phrase in ("indicative", "local standard and regulations", "competent person",
                   "sign off", "Directive 2003/10/EC", "hearing protection"):
        assert phrase in q
    # Directive 2003/10/EC Art. 3(1)(c): lower exposure action value LEX,8h = 80 dB(A); the
    # fixture's loud variant holds an interval LAeq of 84.2 dB, the quiet one's equivalent
    # levels stay below 80 dB.
    assert "WARNING" not in q
    assert "WARNING: an equivalent level of 84.2 dB(A)" in lo


def test_a_high_maximum_alone_does_not_raise_the_exposure_warning(tmp_path: Path) -> None:
    # The action value is an 8-hour exposure level (Directive 2003/10/EC Art. 2, LEX,8h per
    # ISO 9612): a momentary LAFmax of 95 dB with equivalent levels far below 80 dB(A) is not
    # an exposure at the action value.
    doc = build_results_doc()
    doc["overall"]["LAFmax"] = 95.0
    doc["intervals"][3]["LAFmax"] = 95.0
    ws = openpyxl.load_workbook(write(tmp_path, doc, "m.xlsx"))["Summary"]
    text = "\n".join(str(c.value) for row in ws.iter_rows() for c in row if c.value)
    assert "WARNING" not in text


def test_days_sheet_values_and_insufficient_greyed(tmp_path: Path) -> None:
    doc = build_results_doc()
    ws = openpyxl.load_workbook(write(tmp_path, doc))["Days"]
    headers = [c.value for c in ws[2]]
    # a header may name the limit of a criterion judged per day ("Lnight [dB] limit 45.0")
    col = {h.split(" limit ")[0]: i + 1 for i, h in enumerate(headers) if h}
    assert ws.freeze_panes == "B3"
    assert ws.auto_filter.ref is not None
    for i, day in enumerate(doc["days"]):
        r = 3 + i
        assert ws.cell(r, 1).value == datetime.fromisoformat(day["date"])
        for key, name in (("Lden", "Lden [dB]"), ("Lnight", "Lnight [dB]"),
                          ("LAeq_16h", "LAeq,16h [dB]")):
            cell = ws.cell(r, col[name])
            # the reported value: half up to 0.1 dB (indicators.reporting)
            assert cell.value == (None if day[key] is None else reported_level(day[key]))
            if day[key] is not None and not day["sufficient"][key]:
                assert cell.font.i and cell.font.color.rgb.endswith("7F7F7F")
        assert ws.cell(r, col["Valid day [%]"]).value == reported_level(
            100 * day["coverage"]["day"])
        events = next(c for h, c in col.items() if h.startswith("Night LAFmax events"))
        assert ws.cell(r, events).value == day["night_events"]["count"]
    # fixture day 1: Lday, Lden, Ldn, CNEL, LAeq,16h are None; day 3: Lday 57.9 on 42 % cover
    assert ws.cell(3, col["Note"]).value == \
        "not computed (no valid time): Lday, Lden, Ldn, CNEL, LAeq,16h"
    assert ws.cell(5, col["Note"]).value == (
        "indicative only (coverage below 75 %): Lday; not computed (no valid time): Levening, "
        "Lnight, Lden, Ldn, CNEL, LAeq,16h, LAeq,8h")
    lday = ws.cell(5, col["Lday [dB]"])
    assert lday.value == 57.9 and lday.font.i and lday.font.color.rgb.endswith("7F7F7F")
    assert not ws.cell(4, col["Lday [dB]"]).font.i


def test_intervals_sheet_times_levels_and_exceedance_formatting(tmp_path: Path) -> None:
    doc = build_results_doc()
    ws = openpyxl.load_workbook(write(tmp_path, doc))["Intervals"]
    headers = [c.value for c in ws[2]]
    assert headers[:6] == ["Start", "End", "UTC offset", "Period", "LAeq [dB]", "LAFmax [dB]"]
    assert "LA90 [dB]" in headers and "Excluded reasons" in headers
    assert ws.max_row == 2 + len(doc["intervals"])
    iv = doc["intervals"][41]
    r = 3 + 41
    assert ws.cell(r, 1).value == datetime.fromisoformat(iv["start"]).replace(tzinfo=None)
    assert ws.cell(r, 3).value == "+02:00"
    assert ws.cell(r, 5).value is None  # rain-excluded interval: no level
    assert ws.cell(r, headers.index("Excluded reasons") + 1).value == "rain"
    # one number everywhere: the reported value, half up to 0.1 dB
    assert ws.cell(3, 5).value == reported_level(doc["intervals"][0]["LAeq"])
    assert ws.cell(3, 5).number_format == "0.0"
    # the fixture's interval criteria (on the reporting intervals): LAFmax > 60 at night,
    # LAeq > 65 by day. A cell is highlighted exactly when its reported value is above the
    # limit of a criterion that applies to its period.
    for i, iv in enumerate(doc["intervals"]):
        for col, key, limit, period in ((6, "LAFmax", 60.0, "night"), (5, "LAeq", 65.0, "day")):
            value = iv.get(key)
            over = (value is not None and iv["period"] == period
                    and reported_level(value) > limit)
            fill = ws.cell(3 + i, col).fill.fgColor.rgb
            assert (str(fill).endswith("F8D0C8")) == over, (i, key)


def test_chart_parts_exist_for_time_history_and_daily_levels(tmp_path: Path) -> None:
    path = write(tmp_path, build_results_doc())
    with zipfile.ZipFile(path) as zf:
        names = zf.namelist()
        assert "xl/charts/chart1.xml" in names
        charts = [zf.read(n).decode() for n in names if n.startswith("xl/charts/chart")]
    # The time history is a scatter chart with lines: a continuous time axis (a line chart's
    # date axis has whole-day resolution and would stack each day's intervals on midnight).
    history = [c for c in charts if "<c:scatterChart>" in c and "Intervals!" in c]
    assert history and "<c:valAx>" in history[0]
    assert 'formatCode="dd mmm hh:mm"' in history[0]
    bars = [c for c in charts if "<c:barChart>" in c and "Days!" in c]
    assert bars
    assert any("<c:barChart>" in c and "Background!" in c for c in charts)


# --------------------------------------------------------------------------------------
# text safety
# --------------------------------------------------------------------------------------

@pytest.mark.parametrize("bad", INJECTIONS)
def test_injection_strings_arrive_as_text(tmp_path: Path, bad: str) -> None:
    # reliability.md §3 test F1 (OWASP CSV Injection trigger list)
    doc = build_results_doc(site=bad, notes=bad, label=bad, extra_message=bad)
    doc["assessments"][0]["note"] = bad
    path = write(tmp_path, doc)
    for name, xml in sheet_xml(path).items():
        assert "<f>" not in xml and "<f " not in xml, name
    wb = openpyxl.load_workbook(path)
    site = wb["Summary"].cell(find_label(wb["Summary"], "Site"), 2)
    exclusions = wb["Exclusions"]
    header = find_label(exclusions, "From")
    label = exclusions.cell(header + 2, 9)  # second span carries the technician label
    findings = wb["Findings"]
    message = next(row[5] for row in findings.iter_rows(min_row=2)
               if row[1].value == "technician-note")
    assessments = wb["Assessments"].cell(find_label(wb["Assessments"], "Note"), 2)
    for cell in (site, label, message, assessments):
        assert cell.data_type == "s"
        assert xstring_decode(cell.value) == bad
        assert cell.quotePrefix, cell.coordinate


def test_control_characters_replaced_and_long_text_cut(tmp_path: Path) -> None:
    doc = build_results_doc(site="Yard\x07gate", extra_message="x" * 40_000)
    wb = openpyxl.load_workbook(write(tmp_path, doc))
    # W3C XML 1.0 §2.2: U+0007 is not a Char; replaced with U+FFFD
    assert wb["Summary"].cell(find_label(wb["Summary"], "Site"), 2).value == "Yard\ufffdgate"
    msg = next(row[5].value for row in wb["Findings"].iter_rows(min_row=2)
           if row[1].value == "technician-note")
    # Microsoft "Excel specifications and limits": 32,767 characters per cell
    assert len(msg) == 32_767


def test_none_and_nan_write_empty_cells(tmp_path: Path) -> None:
    doc = with_nones(build_results_doc())
    path = write(tmp_path, doc)
    for name, xml in sheet_xml(path).items():
        values = re.findall(r"<v>([^<]*)</v>", xml)
        assert not [v for v in values if v.lower() in ("nan", "inf", "-inf")], name
        assert 't="e"' not in xml, name  # no error cells
    wb = openpyxl.load_workbook(path)
    ws = wb["Summary"]
    r = find_label(ws, "Lden [dB]")
    assert ws.cell(r, 2).value is None
    assert "not available" in ws.cell(r, 4).value
    assert wb["Intervals"].cell(3, 5).value is None  # NaN LAeq in the document
    assert wb["Days"].cell(3, 5).value is None


def test_unreadable_document_still_writes(tmp_path: Path) -> None:
    wb = openpyxl.load_workbook(write(tmp_path, unreadable_doc()))
    ws = wb["Summary"]
    assert ws.cell(find_label(ws, "Data quality"), 2).value.startswith("file could not be read")
    assert wb["Findings"].cell(2, 2).value == "file-not-a-zip"
    assert "No assessment days" in wb["Days"].cell(3, 1).value


# --------------------------------------------------------------------------------------
# other sheets
# --------------------------------------------------------------------------------------

def test_exclusions_keep_every_span_and_unplaced_row(tmp_path: Path) -> None:
    doc = build_results_doc()
    ws = openpyxl.load_workbook(write(tmp_path, doc))["Exclusions"]
    hr = find_label(ws, "From")
    assert [c.value for c in ws[hr]][:9] == ["From", "To", "UTC offset", "First row",
                                             "Last row", "Rows", "Reason", "Scope", "Label"]
    for i, span in enumerate(doc["exclusion_spans"]):
        r = hr + 1 + i
        assert ws.cell(r, 1).value == datetime.fromisoformat(span["from"]).replace(tzinfo=None)
        assert (ws.cell(r, 4).value, ws.cell(r, 5).value, ws.cell(r, 6).value) == \
            (span["first_row"], span["last_row"], span["rows"])
        assert ws.cell(r, 7).value == span["reason"]
        assert ws.cell(r, 9).value == span["label"]
    unplaced = [(ws.cell(hr + 1 + i, 11).value, ws.cell(hr + 1 + i, 12).value,
                 ws.cell(hr + 1 + i, 13).value)
                for i in range(len(doc["unplaced"]))]
    assert unplaced == [(u["row"], u["reason"], u["raw"]) for u in doc["unplaced"]]


def test_findings_sheet_in_given_order_with_filter(tmp_path: Path) -> None:
    doc = build_results_doc()
    ws = openpyxl.load_workbook(write(tmp_path, doc))["Findings"]
    assert [c.value for c in ws[1]][:6] == ["Severity", "Code", "Sheet", "Row", "Column",
                                            "Message"]
    got = [(r[0].value, r[1].value, r[2].value, r[3].value, r[4].value, r[5].value)
           for r in ws.iter_rows(min_row=2, max_row=1 + len(doc["findings"]))]
    assert got == [(f["severity"], f["code"], f["sheet"], f["row"], f["column"], f["message"])
                   for f in doc["findings"]]
    assert ws.auto_filter.ref.startswith("A1:F")
    assert ws.freeze_panes == "A2"


def test_background_and_assessments_sheets(tmp_path: Path) -> None:
    doc = build_results_doc()
    wb = openpyxl.load_workbook(write(tmp_path, doc))
    bg = wb["Background"]
    refs = doc["background"]["reference_intervals"]
    hr = find_label(bg, "Start")
    # reported values: half up to 0.1 dB
    assert [bg.cell(hr + 1 + i, 5).value for i in range(len(refs))] == [
        reported_level(r["LA90"]) for r in refs]
    texts = {c.value: c for row in bg.iter_rows() for c in row if isinstance(c.value, str)}
    assert "Method" in texts and "Basis" in texts
    # distribution: union of day and night whole-dB levels, counts per period
    start = bg.cell(find_label(bg, "LA90 [dB]"), 1)
    rows = []
    r = start.row + 1
    while bg.cell(r, start.column).value is not None:
        rows.append(tuple(bg.cell(r, start.column + k).value for k in range(3)))
        r += 1
    assert rows == [(36, 0, 4), (37, 0, 9), (38, 0, 12), (39, 0, 7), (44, 3, 0), (45, 5, 0),
                    (46, 8, 0), (47, 4, 0)]
    ws = wb["Assessments"]
    a = doc["assessments"][0]
    # transposed: one row per figure, one column per assessment
    assert ws.cell(2, 2).value == a["name"]
    row = {ws.cell(r, 1).value: ws.cell(r, 2).value for r in range(3, ws.max_row + 1)}
    assert row["Specific level [dB]"] == reported_level(a["specific_level"])
    assert row["Rating level [dB]"] == reported_level(a["rating_level"])
    assert row["Excess over background [dB]"] == reported_level(a["excess_over_background"])
    assert row["Source-on windows"] == "2026-06-11 08:00 to 2026-06-11 12:00"
    # hand-evaluated: 14400 s / 3600 = 4 h
    assert row["Valid time, total [h]"] == 4.0


def test_provenance_records_input_versions_and_settings(tmp_path: Path) -> None:
    doc = build_results_doc()
    ws = openpyxl.load_workbook(write(tmp_path, doc))["Provenance"]
    pairs = {r[0].value: r[1].value for r in ws.iter_rows(max_col=2)}
    assert pairs["Input SHA-256"] == doc["input"]["sha256"]
    assert pairs["Input size [bytes]"] == doc["input"]["size_bytes"]
    # reference: the installed distribution metadata (importlib.metadata)
    assert pairs["xlsxwriter"] == importlib.metadata.version("xlsxwriter")
    assert pairs["numpy"] == importlib.metadata.version("numpy")
    assert pairs["periods.lden.day_start"] == "07:00"
    assert pairs["coverage_threshold"] == doc["settings"]["coverage_threshold"]
    assert any("2002/49/EC" in str(v) for v in pairs.values())
    assert any("IEC 61672-1" in str(v) for v in pairs.values())
    # numbers sit beside their labels as the text values do (not at the page's far right)
    cells = {r[0].value: r[1] for r in ws.iter_rows(max_col=2)}
    for label in ("Input size [bytes]", "coverage_threshold"):
        assert cells[label].alignment.horizontal == "left", label


def test_flatten_settings_paths() -> None:
    flat = dict(flatten_settings({"a": {"b": 1, "c": [1, 2]}, "d": [{"e": "x"}], "f": None}))
    assert flat == {"a.b": 1, "a.c": "[1, 2]", "d[0].e": "x", "f": None}


def test_readings_sheet_from_annotations(tmp_path: Path) -> None:
    table = pd.DataFrame({
        "row": [2, 3, 4],
        "start": ["2026-06-10T12:00:00+02:00", "2026-06-10T12:01:00+02:00", None],
        "duration_s": [60.0, 60.0, np.nan],
        "LAeq": [51.23, np.nan, 49.9],
        "reason": ["", "rain", "=1+1"],
    })
    path = write(tmp_path, build_results_doc(), annotations=table)
    ws = openpyxl.load_workbook(path)["Readings"]
    assert [c.value for c in ws[2]] == ["Row", "Start", "UTC offset", "Duration [s]",
                                        "LAeq [dB]", "Exclusion reason"]
    assert ws.freeze_panes == "A3"
    assert ws.auto_filter.ref is not None
    assert [ws.cell(r, 1).value for r in (3, 4, 5)] == [2, 3, 4]
    assert ws.cell(3, 2).value == datetime(2026, 6, 10, 12, 0)
    assert ws.cell(3, 3).value == "+02:00"
    assert [ws.cell(r, 5).value for r in (3, 4, 5)] == [51.23, None, 49.9]
    assert ws.cell(4, 6).value == "rain"
    assert ws.cell(5, 6).value == "=1+1" and ws.cell(5, 6).quotePrefix
    assert all("<f>" not in x for x in sheet_xml(path).values())
    # no Readings sheet without annotations
    assert "Readings" not in openpyxl.load_workbook(write(tmp_path, build_results_doc(),
                                                          "b.xlsx")).sheetnames


@pytest.mark.parametrize("rows", [150, 600])
def test_a_long_readings_table_prints_only_a_first_page(tmp_path: Path, rows: int) -> None:
    # on screen every row; in print, a long table only its first rows (a week at 1 min
    # printed some 300 pages of raw readings), and the sheet's note says so
    start = pd.date_range("2026-06-10 12:00", periods=rows, freq="min")
    table = pd.DataFrame({"row": np.arange(2, rows + 2),
                          "start": [t.strftime("%Y-%m-%dT%H:%M:%S+02:00") for t in start],
                          "duration_s": 60.0, "LAeq": 50.0, "reason": ""})
    ws = openpyxl.load_workbook(write(tmp_path, build_results_doc(), annotations=table)
                                )["Readings"]
    assert ws.cell(rows + 2, 1).value == rows + 1  # the last reading is on the sheet
    area = ws.print_area[0] if isinstance(ws.print_area, list) else ws.print_area
    last_printed = int(re.findall(r"\$(\d+)$", area)[0])
    note = str(ws.cell(1, 1).value)
    if rows > 200:
        assert last_printed == 2 + 25  # header in row 2, then 25 readings
        assert f"only the first 25 of the {rows:,} rows" in note and "print area" in note
    else:
        assert last_printed == 2 + rows
        assert "Printing" not in note


def test_without_assessments_the_sheet_says_how_to_get_them(tmp_path: Path) -> None:
    doc = build_results_doc()
    doc["assessments"] = []
    ws = openpyxl.load_workbook(write(tmp_path, doc))["Assessments"]
    texts = [str(c.value) for row in ws.iter_rows() for c in row if c.value is not None]
    assert len(texts) == 1  # one note, no empty table of labels
    assert "No source assessments are configured" in texts[0]
    assert "[[assessments]]" in texts[0]


def test_rerun_gives_identical_cells_and_bytes(tmp_path: Path) -> None:
    doc = build_results_doc()
    a = write(tmp_path, doc, "a.xlsx")
    b = write(tmp_path, doc, "b.xlsx")
    assert all_values(a) == all_values(b)
    # XlsxWriter stores zip members with a fixed date and we fix the 'created' property,
    # so the files are byte-identical too
    assert a.read_bytes() == b.read_bytes()


# --------------------------------------------------------------------------------------
# a real spreadsheet program opens it
# --------------------------------------------------------------------------------------

def _soffice() -> str:
    exe = shutil.which("soffice") or shutil.which("libreoffice")
    if exe is None:
        pytest.skip("LibreOffice (soffice) is not installed; install libreoffice-calc-nogui")
    return exe


def _convert(exe: str, src: Path, out: Path, target: str) -> None:
    profile = out / "lo-profile"
    subprocess.run(
        [exe, f"-env:UserInstallation=file://{profile}", "--headless", "--convert-to",
         target, "--outdir", str(out), str(src)],
        check=True, capture_output=True, timeout=180,
    )


@pytest.mark.slow
def test_libreoffice_opens_and_prints_lden_and_cautions_on_page_one(tmp_path: Path) -> None:
    exe = _soffice()
    doc = build_results_doc(high_level=True)
    src = write(tmp_path, doc, "results.xlsx")
    _convert(exe, src, tmp_path, "pdf")
    pdf = tmp_path / "results.pdf"
    assert pdf.exists() and pdf.stat().st_size > 0
    if shutil.which("pdftotext") is None:
        pytest.skip("pdftotext (poppler-utils) is not installed; the PDF was written")
    page1 = subprocess.run(["pdftotext", "-f", "1", "-l", "1", "-layout", str(pdf), "-"],
                           check=True, capture_output=True, text=True).stdout
    assert "Lden [dB]" in page1
    assert f"{round(doc['survey_average']['Lden'], 1):.1f}" in page1
    assert "CAUTIONS" in page1 and "competent person" in page1
    assert "WARNING" in page1


@pytest.mark.slow
def test_libreoffice_reads_injection_text_as_text(tmp_path: Path) -> None:
    exe = _soffice()
    doc = build_results_doc(site="=1+1", label="@SUM(A1)")
    src = write(tmp_path, doc, "inj.xlsx")
    # CSV export of every sheet (LibreOffice >= 7.2 filter option: sheet -1 = all sheets)
    _convert(exe, src, tmp_path,
             'csv:Text - txt - csv (StarCalc):44,34,76,1,,0,false,true,false,false,false,-1')
    summary = tmp_path / "inj-Summary.csv"
    exclusions = tmp_path / "inj-Exclusions.csv"
    assert summary.exists(), sorted(p.name for p in tmp_path.iterdir())
    with summary.open(encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    site = next(r for r in rows if r and r[0] == "Site")
    # a formula would have been evaluated by LibreOffice to 2
    assert site[1] == "=1+1"
    with exclusions.open(encoding="utf-8") as fh:
        labels = [r[8] for r in csv.reader(fh) if len(r) > 8]
    assert "@SUM(A1)" in labels


def test_hourly_criterion_highlights_hourly_figures_not_reporting_rows(tmp_path: Path) -> None:
    # A criterion over 1-h intervals is judged on hourly LAeq (its interval_figures); the
    # 15-min rows are never marked against it, the hourly sheet marks exactly the judged
    # hours whose reported value is above the limit (hand-built figures below).
    doc = build_results_doc()
    doc["criteria"] = [{
        "name": "Daytime hourly level", "indicator": "LAeq", "period": "day",
        "limit_db": 56.0, "applies_to": "interval", "interval_s": 3600.0, "checked": 3,
        "failed": 1, "passed": False,
        "failures": [{"when": "2026-06-10T13:00:00+02:00", "value": 56.25,
                      "reported": 56.3, "sufficient": True}],
        "interval_figures": [
            {"start": "2026-06-10T12:00:00+02:00", "period": "day", "value": 55.95,
             "reported": 56.0, "sufficient": True, "judged": True},  # 56.0 is not above 56
            {"start": "2026-06-10T13:00:00+02:00", "period": "day", "value": 56.25,
             "reported": 56.3, "sufficient": True, "judged": True},
            {"start": "2026-06-10T23:00:00+02:00", "period": "night", "value": 58.0,
             "reported": 58.0, "sufficient": True, "judged": False},  # not in its period
        ],
    }]
    wb = openpyxl.load_workbook(write(tmp_path, doc))
    intervals = wb["Intervals"]
    fills = {str(intervals.cell(r, 5).fill.fgColor.rgb) for r in range(3, intervals.max_row + 1)}
    assert not any(f.endswith("F8D0C8") for f in fills)
    ws = wb["Hourly"]
    headers = [c.value for c in ws[2]]
    col = headers.index("LAeq,1h [dB]") + 1
    outcome = headers.index("Outcome: Daytime hourly level") + 1
    got = [(ws.cell(r, col).value, str(ws.cell(r, col).fill.fgColor.rgb).endswith("F8D0C8"),
            ws.cell(r, outcome).value) for r in (3, 4, 5)]
    assert got == [(56.0, False, "met"), (56.3, True, "not met"), (58.0, False, None)]
    # the Summary shows the judged (reported) value of the failure
    summary = wb["Summary"]
    row = find_label(summary, "Daytime hourly level")
    assert "56.3 dB" in summary.cell(row, 6).value
