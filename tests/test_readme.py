"""The README's examples are real: the settings block loads, the quick start is two commands."""

from __future__ import annotations

import re
from pathlib import Path

from surveytools.settings import Settings, load_settings

README = Path(__file__).resolve().parents[1] / "README.md"
CI = Path(__file__).resolve().parents[1] / ".ci" / "run"


def _section(title: str) -> str:
    text = README.read_text(encoding="utf-8")
    start = text.index(f"## {title}\n")
    end = text.find("\n## ", start + 1)
    return text[start:end if end > 0 else None]


def test_the_settings_reference_block_is_a_valid_settings_file(tmp_path: Path) -> None:
    (block,) = re.findall(r"```toml\n(.*?)```", _section("Settings"), flags=re.S)
    path = tmp_path / "readme.toml"
    path.write_text(block, encoding="utf-8")
    settings = load_settings(path)
    defaults = Settings()
    # The block shows the defaults, plus one example of each list table and a column map.
    assert settings.periods == defaults.periods
    assert settings.background == defaults.background
    assert settings.exclusions == defaults.exclusions
    assert settings.calibration == defaults.calibration
    assert settings.residual == defaults.residual
    assert settings.events == defaults.events
    assert settings.output == defaults.output
    assert len(settings.assessments) == 1 and len(settings.criteria) == 2
    working = settings.criteria[1]
    assert (working.warning_db, working.interval_s) == (70.0, 3600.0)
    assert working.schedule == ({"days": "Mon-Fri", "from": "07:00", "to": "19:00"},
                                {"days": "Sat", "from": "08:00", "to": "13:00"})
    assert settings.calendar.holidays == ("2026-12-25", "2026-12-26")
    assert settings.column_map == {"Leq": "LAeq"}


def test_quick_start_has_exactly_two_commands_and_ci_runs_the_second() -> None:
    (block,) = re.findall(r"```bash\n(.*?)```", _section("Quick start"), flags=re.S)
    commands = [line for line in block.splitlines() if line.strip() and not line.startswith("#")]
    assert len(commands) == 2
    assert "surveytools run workbooks_demo" in commands[0]
    assert "pytest" in commands[1]
    assert commands[1] in CI.read_text(encoding="utf-8")
