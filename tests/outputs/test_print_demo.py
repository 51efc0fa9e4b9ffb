"""The demo's result workbooks as a person receives them: opened and printed by LibreOffice.

Each workbook is converted to PDF with headless LibreOffice and read back with poppler's
``pdftotext`` / ``pdfinfo``: page 1 starts with the verdict and carries the reported values
the criteria were judged on, the Summary is exactly one page, every workbook prints within
a page bound derived from its rows, and no text prints smaller than about 7 pt. The Readings
sheet carries every level column of the input.
"""

from __future__ import annotations

import json
import math
import re
import shutil
import subprocess
import sys
from pathlib import Path
from typing import Any

import openpyxl
import pytest

from surveytools.indicators.reporting import reported_level

pytestmark = pytest.mark.slow

#: Rows a printed page holds at least (a sheet fitted one page wide, 11-pt rows at >= 65 %).
MIN_ROWS_PER_PAGE = 25
#: Word-box height / font size in poppler's bbox output, measured on a sheet printed at
#: 100 % (Provenance): 11-pt text 11.69, 8-pt footer 8.58 -> 1.07 (LibreOffice, DejaVu Sans).
BOX_PER_PT = 1.07
#: Smallest text we accept on paper [pt] (issue 14: "no smaller than about 7 pt").
MIN_TEXT_PT = 6.8


def _tools() -> str:
    exe = shutil.which("soffice") or shutil.which("libreoffice")
    if exe is None:
        pytest.skip("LibreOffice (soffice) is not installed; install libreoffice-calc-nogui")
    if shutil.which("pdftotext") is None or shutil.which("pdfinfo") is None:
        pytest.skip("poppler-utils (pdftotext, pdfinfo) are not installed")
    return exe


def _pdf(exe: str, src: Path, out: Path) -> Path:
    subprocess.run([exe, f"-env:UserInstallation=file://{out / 'lo-profile'}", "--headless",
                    "--convert-to", "pdf", "--outdir", str(out), str(src)],
                   check=True, capture_output=True, timeout=600)
    pdf = out / (src.stem + ".pdf")
    assert pdf.exists(), src
    return pdf


def _pages(pdf: Path) -> int:
    info = subprocess.run(["pdfinfo", str(pdf)], check=True, capture_output=True,
                          text=True).stdout
    return int(re.search(r"^Pages:\s+(\d+)", info, re.M).group(1))  # type: ignore[union-attr]


def _text(pdf: Path, first: int, last: int, *extra: str) -> str:
    return subprocess.run(["pdftotext", "-f", str(first), "-l", str(last), "-layout", *extra,
                           str(pdf), "-"], check=True, capture_output=True, text=True).stdout


def _smallest_text_pt(pdf: Path, page: int) -> float:
    """Smallest text size on a page [pt], leaving out the footer (8 pt before scaling)."""
    html = _text(pdf, page, page, "-bbox")
    height = float(re.search(r'<page width="[0-9.]+" height="([0-9.]+)"', html).group(1))  # type: ignore[union-attr]
    boxes = [(float(m.group(1)), float(m.group(2))) for m in re.finditer(
        r'yMin="([0-9.]+)" xMax="[0-9.]+" yMax="([0-9.]+)"', html)]
    body = [y1 - y0 for y0, y1 in boxes if y1 < height - 40.0]
    return min(body) / BOX_PER_PT


def _runs_off_the_right(pdf: Path, page: int) -> list[str]:
    """Words that reach beyond the footer's right edge (the printed area): text cut off."""
    html = _text(pdf, page, page, "-bbox")
    height = float(re.search(r'<page width="[0-9.]+" height="([0-9.]+)"', html).group(1))  # type: ignore[union-attr]
    words = [(float(x), float(y), w) for x, y, w in re.findall(
        r'xMax="([0-9.]+)" yMax="([0-9.]+)">([^<]*)<', html)]
    edge = max(x for x, y, _ in words if y >= height - 40.0)  # "... page N of M"
    return [w for x, y, w in words if y < height - 40.0 and x > edge + 1.0]


def _page_bound(doc: dict[str, Any], readings_rows: int) -> int:
    """Pages the results workbook may take: Summary 1, one per chart, rows / 25 per sheet."""
    bg = doc.get("background") or {}
    rows = {
        "days": len(doc["days"]), "intervals": len(doc["intervals"]),
        "hourly": sum(len(c.get("interval_figures") or []) for c in doc["criteria"]),
        "background": len(bg.get("reference_intervals") or []) + 40,
        "assessments": 25, "exclusions": len(doc["exclusion_spans"]) + 20,
        "readings": readings_rows, "findings": len(doc["findings"]) + 5,
        "provenance": 60 + 40 + 8 * len(doc["criteria"]) + 12 * len(doc["assessments"]),
    }
    charts = 5
    return 1 + charts + sum(math.ceil(n / MIN_ROWS_PER_PAGE) + 1 for n in rows.values())


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory: pytest.TempPathFactory) -> Path:
    # the command line in its own process, as a user runs it
    base = tmp_path_factory.mktemp("demo")
    cli = [sys.executable, "-m", "surveytools"]
    subprocess.run([*cli, "demo", str(base / "in")], check=True, capture_output=True,
                   cwd=base, timeout=300)
    out = base / "out"
    subprocess.run([*cli, "run", str(base / "in"), "--settings",
                    str(base / "in" / "settings.toml"), "-o", str(out), "--quiet",
                    "--settle", "0"], capture_output=True, cwd=base, timeout=600)
    assert (out / "overview.xlsx").exists()
    return out


@pytest.mark.parametrize("stem", ["kl2_garden", "kl3_lane_end"])
def test_printed_results_verdict_first_one_page_summary_and_bounded(
        demo_run: Path, tmp_path: Path, stem: str) -> None:
    exe = _tools()
    doc = json.loads((demo_run / f"{stem}.results.json").read_text(encoding="utf-8"))
    pdf = _pdf(exe, demo_run / f"{stem}.results.xlsx", tmp_path)
    page1 = _text(pdf, 1, 1)
    head = [line.strip() for line in page1.splitlines() if line.strip()][:5]
    verdict = doc["verdict"]
    # the verdict in words in the first lines: criteria outcome, then data quality
    assert any("Criteria outcome" in line and verdict["outcome_text"] in line for line in head)
    assert any(line.startswith("Data quality") and verdict["data_quality_text"] in line
               for line in head), head
    flat = " ".join(page1.split())
    for w in verdict["warnings_affecting_figures"][:6]:  # listed by message
        assert " ".join(w["message"].split())[:60] in flat, w
    # the judged values, as reported (half up to 0.1 dB from the unrounded value)
    for c in doc["criteria"]:
        for f in (c.get("failures") or [])[:2]:
            assert f"{reported_level(f['value']):.1f} dB" in page1, (c["name"], f)
    lden = doc["survey_average"]["Lden"]
    assert f"{reported_level(lden):.1f}" in page1
    # the Summary is exactly one page: page 2 is already the next sheet
    pages = _pages(pdf)
    footers = [_text(pdf, p, p) for p in range(1, min(pages, 3) + 1)]
    assert "Summary - page 1 of" in footers[0]
    assert all("Summary - page" not in f for f in footers[1:])
    wb = openpyxl.load_workbook(demo_run / f"{stem}.results.xlsx", read_only=True)
    readings = wb["Readings"].max_row if "Readings" in wb.sheetnames else 0
    assert pages <= _page_bound(doc, readings or 0), pages
    # legible: nothing smaller than about 7 pt on the Summary and the first detail pages,
    # and nothing running off the printed area
    for page in range(1, min(pages, 12) + 1):
        assert _smallest_text_pt(pdf, page) >= MIN_TEXT_PT, page
        assert _runs_off_the_right(pdf, page) == [], page


def test_printed_overview_is_legible_and_counts_criteria(demo_run: Path,
                                                          tmp_path: Path) -> None:
    exe = _tools()
    pdf = _pdf(exe, demo_run / "overview.xlsx", tmp_path)
    assert _smallest_text_pt(pdf, 1) >= MIN_TEXT_PT
    assert _runs_off_the_right(pdf, 1) == []
    text = " ".join(_text(pdf, 1, 1).split())
    overview = json.loads((demo_run / "overview.json").read_text(encoding="utf-8"))
    for item in overview["inputs"]:
        # the words for criteria count criteria; the count of figures says so in its header
        assert item["verdict"]["outcome_text"].split(";")[0][:14] in text
    assert "(count)" in text  # the header wraps over lines: "Figures above limits (count)"


def test_readings_sheet_carries_every_level_column(demo_run: Path) -> None:
    doc = json.loads((demo_run / "kl2_garden.results.json").read_text(encoding="utf-8"))
    wb = openpyxl.load_workbook(demo_run / "kl2_garden.results.xlsx", read_only=True)
    headers = [c for c in next(wb["Readings"].iter_rows(min_row=2, max_row=2,
                                                        values_only=True))]
    for name in doc["survey"]["level_columns"]:  # every level column read from the input
        assert f"{name} [dB]" in headers, (name, headers)
    assert headers[-1] == "Exclusion reason"
