"""The Episodes sheet and the Summary's episode lines, read back from the workbook."""

from __future__ import annotations

from datetime import datetime
from pathlib import Path

import openpyxl

from surveytools.outputs.write import write_results_workbook
from tests.outputs.results_fixture import build_results_doc


def test_episodes_sheet_lists_every_episode_in_time_order(tmp_path: Path) -> None:
    doc = build_results_doc()
    path = tmp_path / "r.xlsx"
    write_results_workbook(path, doc)
    wb = openpyxl.load_workbook(path)
    ws = wb["Episodes"]
    rows = [tuple(c.value for c in row) for row in ws.iter_rows(min_row=3, max_col=9)]
    # the fixture's 4 episodes (3 of one criterion, 1 of another), sorted by start
    expected = sorted(
        [(c["name"], e) for c in doc["criteria"] for e in c["episodes"]],
        key=lambda pair: pair[1]["start"])
    assert [(r[0], r[1], r[5], r[6]) for r in rows] == [
        (name, e["severity"], e["intervals"], e["max_db"]) for name, e in expected]
    first = next(r for r in rows if r[0] == "Lden limit")
    assert first[2] == datetime(2026, 6, 11, 7, 0) and first[4] == "+02:00"
    assert first[8] == 55.0 and first[7] is None
    night = next(r for r in rows if r[0] == "Night LAFmax")
    assert night[7] == 58.0  # the warning level beside each episode


def test_summary_shows_the_first_episodes(tmp_path: Path) -> None:
    doc = build_results_doc()
    path = tmp_path / "r.xlsx"
    write_results_workbook(path, doc)
    ws = openpyxl.load_workbook(path)["Summary"]
    texts = [c.value for row in ws.iter_rows() for c in row if isinstance(c.value, str)]
    assert "Episodes (above a warning level or limit)" in texts
    assert "4 episodes, 3 above a limit" in texts


def test_no_episodes_sheet_without_criteria(tmp_path: Path) -> None:
    doc = build_results_doc()
    doc["criteria"] = []
    path = tmp_path / "r.xlsx"
    write_results_workbook(path, doc)
    assert "Episodes" not in openpyxl.load_workbook(path).sheetnames
