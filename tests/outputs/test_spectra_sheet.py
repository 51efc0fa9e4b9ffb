"""The Spectra sheet and the Summary's frequency lines show what the document holds.

The reference is a hand-built ``spectral`` section (the writer's input), not the writer's
output.
"""

from __future__ import annotations

import zipfile
from pathlib import Path
from typing import Any

import openpyxl

from surveytools.outputs.spectra_sheet import SHEET_SPECTRA, summary_lines
from surveytools.outputs.write import write_results_workbook
from tests.outputs.results_fixture import build_results_doc

BANDS = [63.0, 80.0, 100.0, 125.0, 160.0]


def _spectrum(levels: list[float], tonal: list[float], low: bool, la: float) -> dict[str, Any]:
    return {"valid_s": 7200.0, "LZeq": levels, "LAeq_from_bands": la,
            "LCeq_from_bands": la + 12.3, "LC_minus_LA": 12.3, "low_frequency": low,
            "tonal_bands_hz": tonal, "tone_difference_db": [None, 0.0, 18.0, -18.0, None]}


def spectral_doc() -> dict[str, Any]:
    doc = build_results_doc()
    doc["spectral"] = {
        "bands_hz": BANDS,
        "valid_s": 86400.0,
        "incomplete_readings": 0,
        "tone_thresholds_db": [15.0, 15.0, 15.0, 15.0, 8.0],
        "low_frequency_threshold_db": 10.0,
        "periods": {
            "day": _spectrum([40.0, 40.0, 40.0, 40.0, 40.0], [], False, 30.1),
            "evening": None,
            "night": _spectrum([30.0, 31.0, 49.0, 31.0, 30.0], [100.0], True, 31.2),
        },
        "band_check": {"intervals": 96, "median_difference_db": 0.1,
                       "median_absolute_difference_db": 0.2,
                       "max_absolute_difference_db": 0.6, "tolerance_db": 1.0,
                       "mismatch": False},
        "tones": [{"band_hz": 100.0, "period": "night", "in_period_average": True,
                   "time_fraction": 0.5, "max_difference_db": 20.0, "threshold_db": 15.0}],
        "intervals": [],
    }
    assessment = doc["assessments"][0]
    assessment["spectrum_source_on"] = _spectrum([32.0, 33.0, 52.0, 33.0, 32.0], [100.0],
                                                 True, 33.0)
    assessment["spectrum_residual"] = _spectrum([30.0, 30.0, 30.0, 30.0, 30.0], [], False, 28.0)
    assessment["tonal_basis"] = {"source": "derived", "method": "one-third-octave",
                                 "bands_hz": [100.0], "reason": "tone at 100 Hz"}
    return doc


def test_spectra_sheet_table_totals_and_chart(tmp_path: Path) -> None:
    doc = spectral_doc()
    path = tmp_path / "x.results.xlsx"
    write_results_workbook(path, doc)
    wb = openpyxl.load_workbook(path)
    assert SHEET_SPECTRA in wb.sheetnames
    ws = wb[SHEET_SPECTRA]
    rows = [tuple(row) for row in ws.iter_rows(values_only=True)]
    header = rows[2]
    name = doc["assessments"][0]["name"]
    assert header[:6] == ("Band [Hz]", "Day LZeq [dB]", "Night LZeq [dB]",
                          f"{name}: source on [dB]", f"{name}: residual [dB]",
                          "Tone threshold [dB]")
    table = rows[3:3 + len(BANDS)]
    assert [r[0] for r in table] == BANDS
    assert [r[2] for r in table] == [30.0, 31.0, 49.0, 31.0, 30.0]
    assert table[2][6] == 52.0  # chart marker at the highest tonal level
    assert table[0][6] is None
    assert table[2][7] == f"Night LZeq; {name}: source on"  # the tonal band is named
    labels = {r[0]: r for r in rows if isinstance(r[0], str)}
    assert labels["LAeq from bands [dB]"][1:3] == (30.1, 31.2)
    assert labels["Low-frequency flag"][1:5] == ("no", "yes", "yes", "no")
    with zipfile.ZipFile(path) as z:
        charts = [n for n in z.namelist() if n.startswith("xl/charts/chart")]
        sheet_names = z.read("xl/workbook.xml").decode()
    assert "Spectra" in sheet_names
    assert charts  # a native chart (the Spectra chart among the others)


def test_no_spectra_sheet_without_band_levels(tmp_path: Path) -> None:
    path = tmp_path / "x.results.xlsx"
    write_results_workbook(path, build_results_doc())
    assert SHEET_SPECTRA not in openpyxl.load_workbook(path).sheetnames


def test_summary_names_tone_and_low_frequency_in_one_line_each(tmp_path: Path) -> None:
    doc = spectral_doc()
    lines = summary_lines(doc)
    assert [flag for _, flag in lines] == [True, True]
    assert lines[0][0].startswith("Tone: 100 Hz band, night (in 50% of the valid night time")
    assert lines[1][0].startswith("Low-frequency content: night LC - LA = 12.3 dB")
    path = tmp_path / "x.results.xlsx"
    write_results_workbook(path, doc)
    summary = [c for row in openpyxl.load_workbook(path)["Summary"].iter_rows(values_only=True)
               for c in row if isinstance(c, str)]
    assert lines[0][0] in summary and lines[1][0] in summary


def test_summary_all_clear_and_mismatch_lines() -> None:
    doc = spectral_doc()
    doc["spectral"]["tones"] = []
    doc["spectral"]["periods"]["night"]["low_frequency"] = False
    (line,) = summary_lines(doc)
    assert line == ("No one-third-octave tone and no low-frequency flag in the period "
                    "spectra (details on the Spectra sheet).", False)
    doc["spectral"]["band_check"].update(mismatch=True, median_difference_db=3.04)
    (line,) = summary_lines(doc)
    assert line[1] and "median difference +3.0 dB" in line[0]
    assert summary_lines(build_results_doc()) == []


def test_chart_can_be_placed_elsewhere(tmp_path: Path) -> None:
    import xlsxwriter

    from surveytools.outputs.spectra_sheet import write_spectra_sheet
    from surveytools.outputs.xlsx_style import SheetWriter, Styles

    placed: list[Any] = []
    wb = xlsxwriter.Workbook(str(tmp_path / "x.xlsx"))
    sw = SheetWriter(wb.add_worksheet(SHEET_SPECTRA), Styles(wb))
    write_spectra_sheet(sw, wb, spectral_doc(), place_chart=placed.append)
    wb.close()
    assert len(placed) == 1  # the spectra chart went to the caller, not onto the sheet
