"""The README walks a newcomer through their own survey (issue: newcomer README)."""

from __future__ import annotations

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
README = ROOT / "README.md"


def _section(title: str) -> str:
    text = README.read_text(encoding="utf-8")
    start = text.index(f"## {title}\n")
    end = text.find("\n## ", start + 1)
    return text[start:end if end > 0 else None]


def test_prerequisites_and_activation_come_before_the_commands() -> None:
    text = _section("Your own survey, step by step")
    assert "Python 3.11" in text and "venv" in text
    activate = text.index("source .venv/bin/activate")
    first_command = text.index("surveytools template")
    assert activate < first_command
    assert ".venv/bin/surveytools" in text  # the full path, for those who do not activate


def test_five_steps_template_fill_check_run_verify_in_order() -> None:
    text = _section("Your own survey, step by step")
    steps = re.findall(r"^(\d)\. \*\*(.+?)\*\*", text, flags=re.M)
    assert [n for n, _ in steps] == ["1", "2", "3", "4", "5"]
    commands = [text.index(f"`surveytools {c} ") for c in ("template", "check", "run", "verify")]
    assert commands == sorted(commands)


def test_the_assumed_time_zone_trap_is_explained() -> None:
    text = _section("Your own survey, step by step")
    trap = text[text.index("assumed time zone trap"):]
    assert "else UTC" in trap and "Time zone" in trap and "time-zone-assumed" in trap


def test_demo_results_are_ignored_by_git() -> None:
    lines = (ROOT / ".gitignore").read_text(encoding="utf-8").splitlines()
    assert "/demo_results/" in lines
