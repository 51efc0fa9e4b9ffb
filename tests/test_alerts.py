"""Alerts: the once-per-episode ledger and the --on-alert program runner."""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Any

from surveytools.alerts import (
    ALERTS_NAME,
    episodes_of,
    record_alerts,
    run_on_alert,
    split_program,
)
from surveytools.schema_files import validator


def results_doc(episodes: list[dict[str, Any]], position: str = "North fence") -> dict[str, Any]:
    return {"input": {"file": "north.xlsx"}, "survey": {"position": position},
            "criteria": [{"name": "Working hours", "indicator": "LAeq", "limit_db": 75.0,
                          "warning_db": 70.0, "episodes": episodes}]}


def episode(start: str, end: str, severity: str, max_db: float) -> dict[str, Any]:
    return {"start": start, "end": end, "intervals": 1, "max_db": max_db, "severity": severity}


def ledger(out: Path) -> list[dict[str, Any]]:
    return [json.loads(line) for line in (out / ALERTS_NAME).read_text().splitlines()]


MON_8 = "2026-12-21T08:00:00+01:00"
MON_9 = "2026-12-21T09:00:00+01:00"
MON_10 = "2026-12-21T10:00:00+01:00"


def test_each_episode_is_alerted_once_across_runs(tmp_path: Path) -> None:
    doc = results_doc([episode(MON_8, MON_9, "warning", 71.0)])
    first = record_alerts(tmp_path, episodes_of(doc))
    again = record_alerts(tmp_path, episodes_of(doc))
    assert [a.start for a in first] == [MON_8] and again == []
    (line,) = ledger(tmp_path)
    assert list(validator("alert.schema.json").iter_errors(line)) == []
    assert line == {"position": "North fence", "criterion": "Working hours",
                    "severity": "warning", "start": MON_8, "end": MON_9, "max_db": 71.0,
                    "limit_db": 75.0, "warning_db": 70.0, "input": "north.xlsx"}


def test_a_growing_episode_is_not_alerted_again_but_an_escalation_is(tmp_path: Path) -> None:
    record_alerts(tmp_path, episodes_of(results_doc([episode(MON_8, MON_9, "warning", 71.0)])))
    # more data: the same episode (same start) runs on, still a warning -> nothing new
    longer = results_doc([episode(MON_8, MON_10, "warning", 72.0)])
    assert record_alerts(tmp_path, episodes_of(longer)) == []
    # it now reaches the limit -> one more line; after that nothing more
    limit = results_doc([episode(MON_8, MON_10, "limit", 76.0)])
    (escalated,) = record_alerts(tmp_path, episodes_of(limit))
    assert (escalated.severity, escalated.max_db) == ("limit", 76.0)
    assert record_alerts(tmp_path, episodes_of(limit)) == []
    # a limit episode never falls back to a warning alert
    assert record_alerts(tmp_path, episodes_of(longer)) == []
    assert [x["severity"] for x in ledger(tmp_path)] == ["warning", "limit"]


def test_same_start_at_another_position_or_criterion_is_its_own_episode(tmp_path: Path) -> None:
    ep = [episode(MON_8, MON_9, "limit", 77.0)]
    record_alerts(tmp_path, episodes_of(results_doc(ep, "North fence")))
    assert len(record_alerts(tmp_path, episodes_of(results_doc(ep, "South gate")))) == 1
    doc = results_doc(ep)
    doc["criteria"][0]["name"] = "Night"
    assert len(record_alerts(tmp_path, episodes_of(doc))) == 1
    assert len(ledger(tmp_path)) == 3


def test_a_torn_last_line_is_skipped_and_the_next_append_starts_a_new_line(
        tmp_path: Path) -> None:
    (tmp_path / ALERTS_NAME).write_text('{"position": "North fence", "crit')
    (fresh,) = record_alerts(tmp_path, episodes_of(results_doc(
        [episode(MON_8, MON_9, "limit", 77.0)])))
    lines = (tmp_path / ALERTS_NAME).read_text().splitlines()
    assert lines[0] == '{"position": "North fence", "crit'  # kept: the ledger is append-only
    assert json.loads(lines[1])["start"] == fresh.start == MON_8


def recorder(tmp_path: Path, exit_code: int = 0, sleep_s: float = 0.0) -> list[str]:
    """A program that appends its standard input to calls.txt (then sleeps, exits)."""
    script = tmp_path / "record.py"
    script.write_text(
        "import sys, time\n"
        f"with open({str(tmp_path / 'calls.txt')!r}, 'a') as f:\n"
        "    f.write(sys.stdin.read())\n"
        "sys.stderr.write('gateway refused')\n"
        f"time.sleep({sleep_s})\n"
        f"sys.exit({exit_code})\n")
    return [sys.executable, str(script)]


def test_on_alert_program_gets_the_json_line_on_stdin(tmp_path: Path) -> None:
    (alert,) = episodes_of(results_doc([episode(MON_8, MON_9, "limit", 77.0)]))
    assert run_on_alert(recorder(tmp_path), alert) is None
    assert json.loads((tmp_path / "calls.txt").read_text()) == json.loads(alert.line())


def test_failing_missing_and_slow_programs_are_reported(tmp_path: Path) -> None:
    (alert,) = episodes_of(results_doc([episode(MON_8, MON_9, "limit", 77.0)]))
    failed = run_on_alert(recorder(tmp_path, exit_code=3), alert)
    assert failed is not None and "exit code 3" in failed and "gateway refused" in failed
    missing = run_on_alert([str(tmp_path / "no-such-program")], alert)
    assert missing is not None and "could not be started" in missing
    slow = run_on_alert(recorder(tmp_path, sleep_s=5), alert, timeout_s=0.5)
    assert slow is not None and "did not finish within 0.5 s" in slow


def test_program_text_is_split_without_a_shell() -> None:
    assert split_program("notify --to 'site office'") == ["notify", "--to", "site office"]
    assert split_program("a; rm -rf x") == ["a;", "rm", "-rf", "x"]  # no shell meaning
