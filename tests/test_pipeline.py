"""One workbook end to end, in process: read -> validate -> assess -> results document."""

from __future__ import annotations

import json
import math
from datetime import datetime, timedelta
from pathlib import Path

import pytest

from surveytools.outputs.results_json import dumps_results, validate_results
from surveytools.pipeline import build_document, read_input, run_file
from surveytools.settings import Settings
from tests.workbooks import survey_workbook


def lg(x: float) -> float:
    return math.log10(x)


@pytest.fixture
def day_workbook(tmp_path: Path) -> Path:
    # 24 hourly readings from 07:00 (UTC clock): 12 h at 60 dB (07-19), 4 h at 55 dB (19-23),
    # 8 h at 50 dB (23-07). Invented values chosen so that the Directive's identity applies.
    return survey_workbook(tmp_path / "day.xlsx")


def test_full_day_through_a_workbook(day_workbook: Path) -> None:
    doc, _ = build_document(day_workbook, Settings())
    assert validate_results(doc) == []
    assert doc["status"] == "ok", doc["findings"]
    (day,) = doc["days"]
    assert day["date"] == "2026-06-01"
    # Directive 2002/49/EC Annex I: Lden(L, L-5, L-10) = L exactly.
    assert day["Lday"] == pytest.approx(60.0, abs=0.005)
    assert day["Levening"] == pytest.approx(55.0, abs=0.005)
    assert day["Lnight"] == pytest.approx(50.0, abs=0.005)
    assert day["Lden"] == pytest.approx(60.0, abs=0.005)
    # hand-evaluated: Ldn (07-22 / 22-07, +10 dB) = 10 lg((12*10^6 + 3*10^5.5
    #   + 10*(1*10^5.5 + 8*10^5)) / 24) = 10 lg(24 110 961 / 24) = 60.02
    ldn = 10 * lg((12e6 + 3 * 10**5.5 + 10 * (10**5.5 + 8e5)) / 24)
    assert day["Ldn"] == pytest.approx(ldn, abs=0.005)
    # hand-evaluated: CNEL (07-19 / 19-22 +5 / 22-07 +10) = 10 lg((12*10^6 + 3*10^6
    #   + 10*(10^5.5 + 8*10^5)) / 24) = 60.37
    cnel = 10 * lg((12e6 + 3 * 1e6 + 10 * (10**5.5 + 8e5)) / 24)
    assert day["CNEL"] == pytest.approx(cnel, abs=0.005)
    # hand-evaluated: LAeq,16h (07-23) = 10 lg((12*10^6 + 4*10^5.5)/16) = 59.19; LAeq,8h = 50.
    assert day["LAeq_16h"] == pytest.approx(10 * lg((12e6 + 4 * 10**5.5) / 16), abs=0.005)
    assert day["LAeq_8h"] == pytest.approx(50.0, abs=0.005)
    assert doc["coverage"]["measured_s"] == pytest.approx(86_400.0)
    assert doc["overall"]["LAFmax"] == pytest.approx(70.0)  # max logged LAFmax (60 + 10)


def test_results_file_is_deterministic_and_strict_json(day_workbook: Path, tmp_path: Path) -> None:
    out1 = tmp_path / "o1"
    out2 = tmp_path / "o2"
    out1.mkdir()
    out2.mkdir()
    a = run_file(day_workbook, out1, "day", Settings())
    b = run_file(day_workbook, out2, "day", Settings())
    assert a.status == b.status == "ok"
    text1 = (out1 / "day.results.json").read_text()
    assert text1 == (out2 / "day.results.json").read_text()
    json.loads(text1, parse_constant=lambda c: pytest.fail(f"non-strict JSON constant {c}"))
    assert text1 == dumps_results(json.loads(text1))
    assert (out1 / "day.results.xlsx").is_file()
    assert not list(out1.glob("*.part"))


def test_a_faulty_row_is_excluded_with_its_reason_and_the_rest_assessed(tmp_path: Path) -> None:
    path = survey_workbook(tmp_path / "f.xlsx",
                           levels=[60.0, "n/a"] + [60.0] * 10 + [55.0] * 4 + [50.0] * 8)
    doc, annotations = build_document(path, Settings())
    assert doc["status"] == "errors"
    codes = [(f["sheet"], f["row"], f["column"], f["code"]) for f in doc["findings"]
             if f["severity"] == "error"]
    assert codes == [("Readings", 3, "C", "level-not-a-number")]
    # 23 valid hours remain; the excluded hour is reported, not dropped.
    assert doc["coverage"]["valid_s"] == pytest.approx(23 * 3600.0)
    spans = [(s["first_row"], s["reason"]) for s in doc["exclusion_spans"]]
    assert spans == [(3, "level-invalid")]
    assert annotations is not None
    reasons = dict(zip(annotations["row"], annotations["reason"], strict=True))
    assert reasons[3] == "level-invalid" and reasons[2] == ""


def test_unreadable_file_gives_a_valid_unreadable_document(tmp_path: Path) -> None:
    bad = tmp_path / "bad.xlsx"
    bad.write_bytes(b"Start,LAeq\n2026-01-01,50\n")
    doc, annotations = build_document(bad, Settings())
    assert annotations is None
    assert doc["status"] == "unreadable"
    assert validate_results(doc) == []
    assert doc["findings"][0]["code"] == "file-not-a-zip"


def test_a_file_changed_since_the_batch_hashed_it_is_refused(day_workbook: Path) -> None:
    stale = "0" * 64  # the batch saw other bytes than the worker reads now
    doc, _ = build_document(day_workbook, Settings(), expected_sha256=stale)
    assert doc["status"] == "unreadable"
    assert [f["code"] for f in doc["findings"]] == ["file-changed"]


def test_a_file_gone_before_its_read_is_reported_not_raised(tmp_path: Path) -> None:
    read = read_input(tmp_path / "gone.xlsx", Settings())
    assert read.error is not None and read.error.code == "file-unreadable"
    doc, _ = build_document(tmp_path / "gone.xlsx", Settings(), read=read)
    assert doc["status"] == "unreadable"


@pytest.fixture
def long_workbook(tmp_path: Path) -> Path:
    """Four days of 1-minute readings: the sheet is larger than the head the preflight keeps,
    so an overlapped read really starts before the sheet scan ends."""
    from surveytools.inputs.preflight import HEAD_KEEP_BYTES, preflight_heads

    levels = [50.0 + (i % 37) / 10 for i in range(6000)]
    path = survey_workbook(tmp_path / "long.xlsx", levels=levels, step_s=60)
    heads = preflight_heads(path)
    assert len(heads.sheet("Readings").head) == HEAD_KEEP_BYTES
    assert not heads.extents_known
    return path


@pytest.mark.parametrize("which", ["day_workbook", "long_workbook"])
def test_overlapped_scan_reads_the_same_workbook(which: str,
                                                 request: pytest.FixtureRequest) -> None:
    path = request.getfixturevalue(which)
    plain = read_input(path, Settings())
    overlapped = read_input(path, Settings(), overlap_scan=True)
    assert plain.error is None and overlapped.error is None
    a, b = plain.raw, overlapped.raw
    assert a.readings is not None and b.readings is not None
    assert [(c.header, c.letter, c.kind) for c in a.readings.columns] == \
        [(c.header, c.letter, c.kind) for c in b.readings.columns]
    for x, y in zip(a.readings.columns, b.readings.columns, strict=True):
        assert x.values.equals(y.values)
    assert a.survey == b.survey and a.findings == b.findings


@pytest.mark.parametrize("attack", ["billion_laughs", "bad_crc", "larger_than_declared"])
def test_the_full_preflights_refusal_wins_over_an_overlapped_read(
        long_workbook: Path, tmp_path: Path, attack: str) -> None:
    """The reader may start before the sheet scans end; their refusal is what is reported."""
    import zipfile

    from tests.inputs.hostile import patch_crc, patch_declared_size
    from tests.workbooks import billion_laughs

    day_workbook = long_workbook
    target = tmp_path / "hostile.xlsx"
    with zipfile.ZipFile(day_workbook) as zf:
        sheets = [n for n in zf.namelist() if n.startswith("xl/worksheets/sheet")]
        sizes = {n: zf.getinfo(n).file_size for n in sheets}
    member = max(sheets, key=lambda n: sizes[n])  # the readings sheet
    if attack == "billion_laughs":
        billion_laughs(target, day_workbook)
        expected = "xml-doctype"
    elif attack == "bad_crc":
        target.write_bytes(day_workbook.read_bytes())
        patch_crc(target, member, 0x12345678)
        expected = "zip-corrupt"
    else:
        target.write_bytes(day_workbook.read_bytes())
        patch_declared_size(target, member, sizes[member] // 2)
        expected = "zip-corrupt"
    read = read_input(target, Settings(), overlap_scan=True)
    assert read.error is not None and read.error.code == expected


def test_a_csv_log_takes_its_survey_facts_from_the_settings(tmp_path: Path) -> None:
    from dataclasses import replace

    from surveytools.settings import SurveyDefaults

    lines = ["Start,LAeq (dB)"] + [f"2026-06-01T{h:02d}:00:00,{50 + h % 3}" for h in range(24)]
    path = tmp_path / "long_log.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    # ISO 1996-2 (from memory): before/after checks 0.6 dB apart exceed the 0.5 dB limit.
    survey = SurveyDefaults(position="CSV-1", clock="UTC", calibration_before_db=94.0,
                            calibration_after_db=93.4, calibrator_level_db=94.0)
    doc, _ = build_document(path, replace(Settings(), survey=survey))
    assert validate_results(doc) == []
    assert doc["survey"]["position"] == "CSV-1"
    codes = {f["code"] for f in doc["findings"]}
    assert "calibration-drift" in codes and "calibration-missing" not in codes
    assert doc["coverage"]["measured_s"] == pytest.approx(24 * 3600.0)


def test_the_summary_sheet_shows_the_figures_of_the_json(day_workbook: Path,
                                                         tmp_path: Path) -> None:
    # Consistency of the two outputs of one run (not a reference check): every headline
    # figure on the Summary equals the results JSON rounded to 0.1 dB.
    import openpyxl

    out = tmp_path / "o"
    out.mkdir()
    run_file(day_workbook, out, "day", Settings())
    doc = json.loads((out / "day.results.json").read_text())
    wb = openpyxl.load_workbook(out / "day.results.xlsx", read_only=True)
    try:
        shown = {str(row[0]): row[1] for row in wb["Summary"].iter_rows(values_only=True)
                 if row and isinstance(row[0], str) and row[0].endswith("[dB]")}
    finally:
        wb.close()  # a read-only workbook keeps its file open until closed
    names = {"Lden": "Lden [dB]", "Lday": "Lday [dB]", "Levening": "Levening [dB]",
             "Lnight": "Lnight [dB]", "Ldn": "Ldn [dB]", "CNEL": "CNEL [dB]",
             "LAeq_16h": "LAeq,16h [dB]", "LAeq_8h": "LAeq,8h [dB]"}
    for key, label in names.items():
        assert shown[label] == pytest.approx(round(doc["survey_average"][key], 1), abs=1e-9)


def test_scan_hooks_run_around_the_overlapped_scan(long_workbook: Path) -> None:
    import threading

    from surveytools.inputs import read as read_module

    events: list[tuple[str, str]] = []
    release = threading.Event()
    after_done = threading.Event()
    real_preflight = read_module.preflight

    def watched_preflight(*args, **kwargs):  # type: ignore[no-untyped-def]
        events.append(("scan", threading.current_thread().name))
        return real_preflight(*args, **kwargs)

    def before() -> None:
        events.append(("before", threading.current_thread().name))

    def after() -> None:
        events.append(("after", threading.current_thread().name))
        release.wait(30)  # the read must not wait for this
        after_done.set()

    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(read_module, "preflight", watched_preflight)
        read = read_input(long_workbook, Settings(), overlap_scan=True,
                          scan_hooks=(before, after))
    assert read.error is None
    assert not after_done.is_set()
    release.set()
    assert after_done.wait(30)
    assert [e[0] for e in events] == ["before", "scan", "after"]
    assert {e[1] for e in events} == {"preflight-scan"}
    # without an overlapped scan (a plain read) the hooks are not called
    events.clear()
    read_input(long_workbook, Settings(), scan_hooks=(before, after))
    assert events == []


def test_overlapped_read_finds_deep_formulas_merges_and_text_like_a_plain_one(
        tmp_path: Path) -> None:
    """What only the full scan knows (formula cells without a stored value, merged cells),
    and a text cell far below the type sample, deep in a sheet larger than the kept head."""
    import openpyxl

    from surveytools.inputs.preflight import HEAD_KEEP_BYTES, preflight_heads

    path = survey_workbook(tmp_path / "deep.xlsx",
                           levels=[50.0 + (i % 37) / 10 for i in range(6000)], step_s=60)
    wb = openpyxl.load_workbook(path)
    rd = wb["Readings"]
    rd["C4000"] = "OVL"
    rd["C5000"] = "=C4999+1"  # openpyxl stores no cached value
    rd.merge_cells("D5500:D5502")
    wb.save(path)
    assert len(preflight_heads(path).sheet("Readings").head) == HEAD_KEEP_BYTES

    def located(read: object) -> list[tuple[object, ...]]:
        doc, _ = build_document(path, Settings(), read=read)  # type: ignore[arg-type]
        return sorted((f["code"], f["sheet"], f["row"], f["column"]) for f in doc["findings"])

    plain = located(read_input(path, Settings()))
    overlapped = located(read_input(path, Settings(), overlap_scan=True))
    assert overlapped == plain
    codes = {f[0] for f in plain}
    assert {"formula-without-value", "merged-cells"} <= codes
    assert any(f[2] == 4000 and f[3] == "C" for f in plain)  # the OVL cell is reported


def _band_workbook(path: Path, rows: int) -> None:
    import openpyxl

    wb = openpyxl.Workbook()
    ws = wb.active
    assert ws is not None
    ws.title = "Survey"
    for row in (["Field", "Value"], ["Position", "P1"], ["Time zone", "UTC"],
                ["Calibration before (dB)", 94.0], ["Calibration after (dB)", 94.0]):
        ws.append(row)
    rd = wb.create_sheet("Readings")
    rd.append(["Start", "Duration (s)", "LAeq (dB)", "LZeq 800 Hz", "1 kHz", "1250"])
    for i in range(rows):
        rd.append([datetime(2026, 6, 1, 12, 0) + timedelta(minutes=15 * i), 900, 60.8,
                   50.0, 63.0, 50.0])
    wb.save(path)


@pytest.mark.parametrize(("limit", "include", "bands_written"), [
    (24, False, True),    # 8 rows x 3 bands = 24 band cells: within the budget
    (23, False, False),   # one cell over: broadband levels only
    (0, True, True),      # --readings writes everything
])
def test_band_levels_in_readings_within_the_cell_budget(tmp_path: Path, limit: int,
                                                        include: bool,
                                                        bands_written: bool) -> None:
    from dataclasses import replace

    path = tmp_path / "bands.xlsx"
    _band_workbook(path, 8)
    settings = Settings()
    settings = replace(settings, output=replace(settings.output, include_readings=include,
                                                readings_band_cell_limit=limit))
    _doc, annotations = build_document(path, settings)
    assert annotations is not None
    columns = list(annotations.columns)
    assert "LAeq" in columns
    assert ("LZeq_1000Hz" in columns) is bands_written
    assert len(annotations) == 8


def test_band_columns_offset_give_a_located_warning(tmp_path: Path) -> None:
    # Three band columns spelled three ways (README column table); the 1 kHz column is 3 dB
    # too high. Hand-evaluated with IEC 61672-1:2013 Table 3 weights (-0.8 / 0 / +0.6 dB):
    # band total 63 + 10 lg(1 + 10**-1.38 + 10**-1.24) = 63.41 dB against a logged 60.8 dB.
    path = tmp_path / "bands.xlsx"
    _band_workbook(path, 8)
    doc, _ = build_document(path, Settings())
    assert validate_results(doc) == []
    assert doc["status"] == "warnings"
    (finding,) = [f for f in doc["findings"] if f["code"] == "band-total-mismatch"]
    assert finding["severity"] == "warning" and finding["sheet"] == "Readings"
    assert "+2.6 dB" in finding["message"]
    assert doc["spectral"]["bands_hz"] == [800.0, 1000.0, 1250.0]
    assert doc["spectral"]["band_check"]["median_difference_db"] == pytest.approx(2.61, abs=0.05)


def test_band_columns_of_readings_sheet_are_one_closed_group(tmp_path: Path) -> None:
    # Band levels stay in the Readings sheet (filterable), folded so that a printed page
    # is not eleven pages wide; the broadband columns stay open.
    import openpyxl

    path = tmp_path / "bands.xlsx"
    _band_workbook(path, 8)
    out = tmp_path / "out"
    out.mkdir()
    run_file(path, out, "bands", Settings())
    wb = openpyxl.load_workbook(out / "bands.results.xlsx")
    ws = wb["Readings"]
    headers = [c.value for c in ws[2]]
    band_letters = [openpyxl.utils.get_column_letter(i + 1)
                    for i, h in enumerate(headers) if str(h).startswith("LZeq_")]
    assert len(band_letters) == 3
    laeq_letter = openpyxl.utils.get_column_letter(headers.index("LAeq [dB]") + 1)

    def dims(letter: str) -> tuple[int, bool]:
        for key, dim in ws.column_dimensions.items():
            first, last = dim.min or 0, dim.max or 0
            index = openpyxl.utils.column_index_from_string(letter)
            if key == letter or first <= index <= last:
                return dim.outlineLevel, bool(dim.hidden)
        return 0, False

    assert all(dims(letter) == (1, True) for letter in band_letters)
    assert dims(laeq_letter) == (0, False)
    assert "folded column group" in str(ws["A1"].value)
    wb.close()
