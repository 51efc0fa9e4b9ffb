"""Figures decisions rest on, end to end through ``surveytools run`` (design.md §9).

Exact LN at ties, one rounding for criteria, a source-free background with its basis, and
Operating-column assessments split at period bounds — each on a workbook built here.
Expected values are hand-evaluated from the published definitions named beside them.
"""

from __future__ import annotations

import json
import subprocess
import sys
from datetime import datetime, timedelta
from pathlib import Path
from typing import Any

import openpyxl
import pytest

pytestmark = pytest.mark.slow

ZONE = "Europe/Berlin"


def workbook(path: Path, position: str, start: datetime, step_s: int,
             columns: dict[str, list[Any]]) -> Path:
    """Survey + Readings with Start, Duration and the given columns (local clock)."""
    wb = openpyxl.Workbook()
    ws = wb.active
    assert ws is not None
    ws.title = "Survey"
    for row in (["Field", "Value"], ["Position", position], ["Time zone", ZONE],
                ["Clock", "local"], ["Calibration before (dB)", 94.0],
                ["Calibration after (dB)", 94.0], ["Calibrator level (dB)", 94.0]):
        ws.append(row)
    rd = wb.create_sheet("Readings")
    names = list(columns)
    rd.append(["Start", "Duration (s)", *names])
    n = len(columns[names[0]])
    for i in range(n):
        rd.append([start + timedelta(seconds=i * step_s), step_s,
                   *(columns[name][i] for name in names)])
    wb.save(path)
    return path


SETTINGS = """
percentiles = [90, 95, 99]

[[criteria]]
name = "Night limit"
indicator = "Lnight"
limit_db = 45.0
position = "R1"

[[assessments]]
name = "Plant by day"
position = "BG1"
source_on = [["2026-07-03 11:00", "2026-07-03 13:00"]]
residual = [["2026-07-03 10:00", "2026-07-03 11:00"]]

[[assessments]]
name = "Pump at dawn"
position = "OP1"
use_operating_column = true
"""


@pytest.fixture(scope="module")
def run_results(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict[str, Any]]:
    base = tmp_path_factory.mktemp("figures")
    folder = base / "in"
    folder.mkdir()
    # LN: 100 one-minute readings at 30.0, 30.1, ... 39.9 dB
    workbook(folder / "ln.xlsx", "LN1", datetime(2026, 7, 3, 10, 0), 60,
             {"LAeq (dB)": [round(30 + k / 10, 1) for k in range(100)]})
    # Rounding: a night of hourly readings at 45.049 dB (23:00-07:00)
    workbook(folder / "night.xlsx", "R1", datetime(2026, 7, 3, 23, 0), 3600,
             {"LAeq (dB)": [45.049] * 8})
    # Background: 10-13 h, 15-min readings; LAF90 35 dB before the plant, 50 dB while on
    workbook(folder / "background.xlsx", "BG1", datetime(2026, 7, 3, 10, 0), 900,
             {"LAeq (dB)": [45.0] * 4 + [60.0] * 8, "LAF90 (dB)": [35.0] * 4 + [50.0] * 8})
    # Operating column: night residual 05:00-06:00 at 40 dB, source on from 06:22
    # (two readings at 50 dB, then 06:52-07:07 at 60 dB)
    path = workbook(folder / "operating.xlsx", "OP1", datetime(2026, 7, 4, 5, 0), 900,
                    {"LAeq (dB)": [40.0] * 4, "Operating": ["no"] * 4})
    wb = openpyxl.load_workbook(path)
    rd = wb["Readings"]
    for k, level in enumerate([50.0, 50.0, 60.0]):
        rd.append([datetime(2026, 7, 4, 6, 22) + timedelta(minutes=15 * k), 900, level, "yes"])
    wb.save(path)
    settings = base / "settings.toml"
    settings.write_text(SETTINGS, encoding="utf-8")
    out = base / "out"
    proc = subprocess.run([sys.executable, "-m", "surveytools", "run", str(folder), "-o",
                           str(out), "--settings", str(settings), "--settle", "0", "--quiet"],
                          capture_output=True, text=True, timeout=600, check=False)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    docs = {p.name.split(".")[0]: json.loads(p.read_text())
            for p in out.glob("*.results.json")}
    return out, docs


def test_exact_ln_at_ties(run_results: tuple[Path, dict[str, Any]]) -> None:
    # ISO 1996-1 LN (level exceeded for no more than N % of the time), hand-evaluated:
    # T = 100 min; LA95: 95 readings (95 min) above 30.4 -> 30.4; LA99: 99 min above 30.0
    # -> 30.0; LA90: 90 min above 30.9 -> 30.9.
    overall = run_results[1]["ln"]["overall"]
    assert (overall["LA90"], overall["LA95"], overall["LA99"]) == (30.9, 30.4, 30.0)


def test_one_rounding_judges_45_049_as_45_0(run_results: tuple[Path, dict[str, Any]]) -> None:
    # Common practice: judged at the reported 0.1 dB, rounded once half up from the
    # unrounded value: 45.049 -> 45.0 <= 45.0 passes (not 45.05 -> 45.1).
    doc = run_results[1]["night"]
    (day,) = doc["days"]
    assert day["Lnight"] == 45.049
    (criterion,) = doc["criteria"]
    assert criterion["passed"] is True and criterion["failed"] == 0
    assert criterion["highest"] == {"when": "2026-07-03", "value": 45.049, "reported": 45.0,
                                    "sufficient": True}


def test_background_is_source_free_with_its_basis(run_results: tuple[Path, dict[str, Any]]
                                                  ) -> None:
    out, docs = run_results
    doc = docs["background"]
    # survey background (every hour): mode of whole-dB hourly LA90 {35, 50, 50} = 50
    assert doc["background"]["day"]["LA90"] == 50.0
    (a,) = doc["assessments"]
    # BS 4142 purpose (from memory): the background is the sound without the source; the
    # 11-13 h source time is left out -> 35 dB from 10-11 h
    assert a["background_LA90"] == 35.0
    assert a["background_basis"] == "source-free period"
    # the workbook says which, on the Assessments sheet
    # (one column per assessment, one row per figure)
    ws = openpyxl.load_workbook(out / "background.results.xlsx")["Assessments"]
    rows = {ws.cell(r, 1).value: ws.cell(r, 2).value for r in range(3, ws.max_row + 1)}
    assert rows["Background basis"] == "source-free period"


def test_operating_column_split_at_07_00(run_results: tuple[Path, dict[str, Any]]) -> None:
    (a,) = run_results[1]["operating"]["assessments"]
    # Directive 2002/49/EC Annex I night 23-07; hand-evaluated: night source-on time
    # 15 + 15 + 8 min = 2280 s; LAeq = 10 lg((30 * 10^5 + 8 * 10^6) / 38) = 54.616 dB
    assert a["background_period"] == "night"
    assert a["valid_s_total"] == 2280.0
    assert a["LAeq_total"] == pytest.approx(54.616, abs=0.0005)
