"""The committed demo workbooks are exactly what ``surveytools demo`` writes."""

from __future__ import annotations

from pathlib import Path

from python_calamine import CalamineWorkbook

from surveytools.demo import POSITIONS, SETTINGS_TOML, write_demo

DEMO_DIR = Path(__file__).resolve().parents[1] / "workbooks_demo"


def _cells(path: Path) -> dict[str, list[list[object]]]:
    wb = CalamineWorkbook.from_path(str(path))
    return {name: wb.get_sheet_by_name(name).to_python() for name in wb.sheet_names}


def test_demo_writes_the_committed_workbooks(tmp_path: Path) -> None:
    written = write_demo(tmp_path)
    assert sorted(p.name for p in written) == sorted([p.file for p in POSITIONS]
                                                     + ["settings.toml"])
    for pos in POSITIONS:
        assert _cells(tmp_path / pos.file) == _cells(DEMO_DIR / pos.file), pos.file
    assert (DEMO_DIR / "settings.toml").read_text() == SETTINGS_TOML


def test_demo_positions_use_three_logging_intervals() -> None:
    # The scenario promises 15 min, 1 min and 1 s logging (issue: demo).
    assert sorted(p.step_s for p in POSITIONS) == [1.0, 60.0, 900.0]
