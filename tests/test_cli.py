"""Acceptance tests: run the command line in tmp_path as a user would.

Each asserts the exit code (design §7 contract), a stable phrase and the parsed JSON.
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
import subprocess
import sys
import time
from pathlib import Path

import openpyxl
import pytest

from tests.workbooks import billion_laughs, survey_workbook

pytestmark = pytest.mark.slow


def run_cli(*args: str, cwd: Path) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "surveytools", *args], cwd=cwd,
                          capture_output=True, text=True, timeout=600, check=False)


def sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.fixture
def mixed_folder(tmp_path: Path) -> Path:
    drop = tmp_path / "drop"
    drop.mkdir()
    good = survey_workbook(drop / "good.xlsx", position="P1")
    # Faulty: a text cell in LAeq (row 3 of Readings: header is row 1) -> error finding.
    survey_workbook(drop / "faulty.xlsx", position="P2",
                    levels=[60.0, "n/a"] + [60.0] * 10 + [55.0] * 4 + [50.0] * 8)
    billion_laughs(drop / "hostile.xlsx", good)
    (drop / "~$good.xlsx").write_bytes(b"owner file")
    os.mkfifo(drop / "pipe.xlsx")
    (drop / "empty.xlsx").write_bytes(b"")
    return drop


def test_mixed_folder_every_input_accounted_for(mixed_folder: Path, tmp_path: Path) -> None:
    before = {p.name: sha(p) for p in mixed_folder.iterdir() if p.is_file()
              and not p.is_fifo() and not p.is_symlink()}
    out = tmp_path / "out"
    proc = run_cli("run", str(mixed_folder), "-o", str(out), "--quiet", "--settle", "0",
                   "--jobs", "2", cwd=tmp_path)
    assert proc.returncode == 1, proc.stdout + proc.stderr
    assert "Traceback" not in proc.stdout + proc.stderr
    assert "Processed 4 files" in proc.stdout
    overview = json.loads((out / "overview.json").read_text())
    status = {Path(r["file"]).name: r["status"] for r in overview["inputs"]}
    assert status == {"good.xlsx": "ok", "faulty.xlsx": "errors", "hostile.xlsx": "unreadable",
                      "empty.xlsx": "unreadable"}
    skipped = {Path(s["path"]).name: s["code"] for s in overview["skipped"]}
    assert skipped == {"~$good.xlsx": "lock-or-temp-file", "pipe.xlsx": "not-regular-file"}
    faulty = json.loads((out / "faulty.results.json").read_text())
    located = [(f["sheet"], f["row"], f["column"], f["code"]) for f in faulty["findings"]
               if f["severity"] == "error"]
    assert ("Readings", 3, "C", "level-not-a-number") in located
    hostile = json.loads((out / "hostile.results.json").read_text())
    assert hostile["status"] == "unreadable"
    assert hostile["findings"][0]["code"] == "xml-doctype"
    for name in ("good", "faulty"):
        assert (out / f"{name}.results.xlsx").is_file()
    # Inputs are never modified.
    after = {p.name: sha(p) for p in mixed_folder.iterdir() if p.is_file()
             and not p.is_fifo() and not p.is_symlink()}
    assert after == before


def test_jobs_two_gives_the_same_results_as_jobs_one(tmp_path: Path) -> None:
    drop = tmp_path / "drop"
    drop.mkdir()
    for i in range(3):
        survey_workbook(drop / f"p{i}.xlsx", position=f"P{i}",
                        levels=[60.0 + i] * 12 + [55.0] * 4 + [50.0] * 8)
    outs = []
    for jobs in ("1", "2"):
        out = tmp_path / f"out{jobs}"
        proc = run_cli("run", str(drop), "-o", str(out), "--quiet", "--settle", "0",
                       "--jobs", jobs, cwd=tmp_path)
        assert proc.returncode == 0, proc.stdout + proc.stderr
        outs.append(out)
    for i in range(3):
        a = (outs[0] / f"p{i}.results.json").read_bytes()
        b = (outs[1] / f"p{i}.results.json").read_bytes()
        assert a == b


def test_rerun_skips_unchanged_inputs_and_says_so(tmp_path: Path) -> None:
    drop = tmp_path / "drop"
    drop.mkdir()
    survey_workbook(drop / "a.xlsx")
    out = tmp_path / "out"
    first = run_cli("run", str(drop), "-o", str(out), "--quiet", "--settle", "0", cwd=tmp_path)
    assert first.returncode == 0, first.stdout + first.stderr
    js = (out / "a.results.json").read_bytes()
    second = run_cli("run", str(drop), "-o", str(out), "--quiet", "--settle", "0", cwd=tmp_path)
    assert second.returncode == 0
    assert "unchanged since the last run" in second.stdout
    # a kept result still tells its verdict and warnings: the same lines as the first run
    assert second.stdout.replace(" (unchanged since the last run; results kept)", "") == \
        first.stdout
    assert "criteria:" in second.stdout and "data quality:" in second.stdout
    assert (out / "a.results.json").read_bytes() == js
    third = run_cli("run", str(drop), "-o", str(out), "--quiet", "--settle", "0", "--force",
                    cwd=tmp_path)
    assert "unchanged since the last run" not in third.stdout
    assert (out / "a.results.json").read_bytes() == js  # byte-identical rerun


def test_verify_passes_on_the_original_and_fails_on_an_altered_reading(tmp_path: Path) -> None:
    src = survey_workbook(tmp_path / "v.xlsx")
    out = tmp_path / "out"
    assert run_cli("run", str(src), "-o", str(out), "--quiet", "--settle", "0",
                   cwd=tmp_path).returncode == 0
    ok = run_cli("verify", str(out / "v.results.json"), cwd=tmp_path)
    assert ok.returncode == 0, ok.stdout + ok.stderr
    assert "verified" in ok.stdout
    altered = tmp_path / "altered.xlsx"
    shutil.copy(src, altered)
    wb = openpyxl.load_workbook(altered)
    wb["Readings"]["C2"] = 70.0
    wb.save(altered)
    bad = run_cli("verify", str(out / "v.results.json"), "--input", str(altered), cwd=tmp_path)
    assert bad.returncode == 1
    assert "input > sha256" in bad.stdout
    assert "overall > LAeq" in bad.stdout


def test_check_reports_located_findings_as_text_and_json(tmp_path: Path) -> None:
    bad = survey_workbook(tmp_path / "east_gate.xlsx",
                          levels=[60.0, "n/a"] + [60.0] * 22)
    text = run_cli("check", str(bad), "--settle", "0", cwd=tmp_path)
    assert text.returncode == 1
    assert "east_gate.xlsx::Readings!C3:" in text.stdout
    assert "[level-not-a-number]" in text.stdout
    js = run_cli("check", str(bad), "--settle", "0", "--format", "json", cwd=tmp_path)
    payload = json.loads(js.stdout)
    codes = {(f["sheet"], f["row"], f["column"], f["code"])
             for f in payload["inputs"][0]["findings"]}
    assert ("Readings", 3, "C", "level-not-a-number") in codes


def test_bad_settings_exit_2_naming_the_key(tmp_path: Path) -> None:
    src = survey_workbook(tmp_path / "a.xlsx")
    settings = tmp_path / "s.toml"
    settings.write_text('[periods.lden]\nday_start = "7 am"\n')
    proc = run_cli("run", str(src), "--settings", str(settings), "-o", str(tmp_path / "o"),
                   cwd=tmp_path)
    assert proc.returncode == 2
    assert "periods.lden.day_start" in proc.stderr
    assert "Traceback" not in proc.stderr


def test_bad_arguments_exit_2(tmp_path: Path) -> None:
    proc = run_cli("run", cwd=tmp_path)
    assert proc.returncode == 2


def test_demo_then_run_exits_0_with_warnings_only(tmp_path: Path) -> None:
    demo = run_cli("demo", "d", cwd=tmp_path)
    assert demo.returncode == 0, demo.stderr
    run = run_cli("run", "d", "--settings", "d/settings.toml", "-o", "res", "--quiet",
                  "--settle", "0", cwd=tmp_path)
    assert run.returncode == 0, run.stdout + run.stderr
    overview = json.loads((tmp_path / "res" / "overview.json").read_text())
    statuses = sorted(r["status"] for r in overview["inputs"])
    assert statuses and set(statuses) <= {"ok", "warnings"}
    assert "warnings" in statuses
    # Every file written validates against the published schemas (the JSON contract).
    from surveytools.outputs.results_json import validate_overview, validate_results

    assert validate_overview(overview) == []
    for path in sorted((tmp_path / "res").glob("*.results.json")):
        assert validate_results(json.loads(path.read_text())) == [], path.name
    # Each input's line carries its headline figures.
    assert run.stdout.count("Lden ") == len(statuses) and "criteria:" in run.stdout


def test_template_filled_in_as_a_technician_would_checks_clean(tmp_path: Path) -> None:
    from datetime import datetime, timedelta

    proc = run_cli("template", "blank.xlsx", cwd=tmp_path)
    assert proc.returncode == 0
    wb = openpyxl.load_workbook(tmp_path / "blank.xlsx")
    assert {"Guidance", "Survey", "Readings", "Weather", "Exclusions"} <= set(wb.sheetnames)
    assert wb["Survey"].data_validations.dataValidation  # drop-down lists present
    # Fill in the Survey values and six readings; leave Weather and Exclusions empty.
    survey = wb["Survey"]
    values = {"Position": "T1", "Site": "Template test (invented)", "Time zone": "UTC",
              "Clock": "UTC", "Calibration before (dB)": 94.0,
              "Calibration after (dB)": 94.1, "Calibrator level (dB)": 94.0}
    for row in survey.iter_rows(min_row=2):
        if row[0].value in values:
            row[1].value = values[row[0].value]
    readings = wb["Readings"]
    start = datetime(2026, 5, 4, 8, 0)
    for i in range(6):
        readings.cell(row=2 + i, column=1, value=start + timedelta(minutes=15 * i))
        readings.cell(row=2 + i, column=2, value=900)
        readings.cell(row=2 + i, column=3, value=55.0 + i)
    wb.save(tmp_path / "filled.xlsx")
    checked = run_cli("check", "filled.xlsx", "--settle", "0", cwd=tmp_path)
    assert checked.returncode == 0, checked.stdout + checked.stderr
    assert "filled.xlsx: ok" in checked.stdout


def test_version_is_fast_to_start(tmp_path: Path) -> None:
    proc = run_cli("--version", cwd=tmp_path)
    assert proc.returncode == 0 and proc.stdout.startswith("surveytools ")


def test_an_internal_fault_is_a_plain_message_not_a_traceback(tmp_path: Path,
                                                              monkeypatch: pytest.MonkeyPatch,
                                                              capsys: pytest.CaptureFixture[str]
                                                              ) -> None:
    from surveytools import batch, cli

    def broken(*_a: object, **_k: object) -> None:
        raise RuntimeError("simulated fault")

    monkeypatch.setattr(batch, "run_batch", broken)
    monkeypatch.delenv("SURVEYTOOLS_DEBUG", raising=False)
    code = cli.main(["run", str(tmp_path), "-o", str(tmp_path / "o"), "--quiet"])
    captured = capsys.readouterr()
    assert code == 2
    assert "internal error (RuntimeError: simulated fault)" in captured.err
    assert "Traceback" not in captured.err


def test_run_format_json_prints_only_the_overview_document(tmp_path: Path) -> None:
    src = survey_workbook(tmp_path / "a.xlsx")
    proc = run_cli("run", str(src), "-o", str(tmp_path / "o"), "--settle", "0",
                   "--format", "json", cwd=tmp_path)
    assert proc.returncode == 0
    payload = json.loads(proc.stdout)  # nothing but the JSON document on stdout
    from surveytools.outputs.results_json import validate_overview

    assert validate_overview(payload) == []
    assert [r["status"] for r in payload["inputs"]] == ["ok"]


def test_watch_processes_each_new_completed_file_once(tmp_path: Path) -> None:
    drop = tmp_path / "drop"
    drop.mkdir()
    survey_workbook(drop / "first.xlsx")
    proc = subprocess.Popen([sys.executable, "-m", "surveytools", "run", str(drop), "-o",
                             str(tmp_path / "o"), "--watch", "--interval", "0.5",
                             "--max-cycles", "20", "--settle", "0", "--quiet"],
                            cwd=tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True)
    try:
        deadline = time.monotonic() + 120
        while not (tmp_path / "o" / "first.results.json").exists():
            assert time.monotonic() < deadline, "first file never processed"
            time.sleep(0.2)
        # Arrives complete, as a finished copy does (written aside, then moved in).
        survey_workbook(tmp_path / "second.xlsx", position="P2").rename(drop / "second.xlsx")
        while not (tmp_path / "o" / "second.results.json").exists():
            assert time.monotonic() < deadline, "new file never processed"
            time.sleep(0.2)
    finally:
        out, err = proc.communicate(timeout=300)
    assert proc.returncode == 0, err
    # Each file is reported once, however many polling cycles ran (verdict first: the
    # criteria outcome, then the data quality).
    assert out.count("first.xlsx: criteria: no criteria set; data quality: ok") == 1
    assert out.count("second.xlsx: criteria: no criteria set; data quality: ok") == 1


def test_a_symlinked_input_is_skipped_with_a_note(tmp_path: Path) -> None:
    drop = tmp_path / "drop"
    drop.mkdir()
    real = survey_workbook(tmp_path / "real.xlsx")
    (drop / "link.xlsx").symlink_to(real)
    proc = run_cli("run", str(drop), "-o", str(tmp_path / "o"), "--settle", "0", "--quiet",
                   cwd=tmp_path)
    assert proc.returncode == 0
    assert "link.xlsx: skipped - a symbolic link" in proc.stdout


def test_alerts_are_appended_once_across_runs_and_watch_polls(tmp_path: Path) -> None:
    # survey_workbook: hourly LAeq 60 dB 07:00-19:00, 55 dB to 23:00, 50 dB to 07:00 (UTC).
    # Hand-evaluated: LAeq,1h above 58 dB exactly 07:00-19:00 -> one limit episode of 12 h.
    drop = tmp_path / "drop"
    drop.mkdir()
    survey_workbook(drop / "north.xlsx", position="North fence")
    settings = tmp_path / "settings.toml"
    settings.write_text('[[criteria]]\nname = "Daytime"\nindicator = "LAeq"\n'
                        'interval = "1h"\nlimit_db = 58.0\n')
    script = tmp_path / "record.py"
    script.write_text("import sys\n"
                      f"with open({str(tmp_path / 'calls.txt')!r}, 'a') as f:\n"
                      "    f.write(sys.stdin.read())\n")
    out = tmp_path / "o"
    common = ["--settings", str(settings), "-o", str(out), "--quiet", "--settle", "0",
              "--on-alert", f"{sys.executable} {script}"]
    first = run_cli("run", str(drop), *common, cwd=tmp_path)
    assert first.returncode == 0, first.stderr
    assert first.stdout.count("ALERT limit: North fence - Daytime") == 1
    again = run_cli("run", str(drop), *common, "--force", cwd=tmp_path)  # reprocessed
    assert again.returncode == 0, again.stderr
    assert "ALERT" not in again.stdout
    lines = [json.loads(x) for x in (out / "alerts.jsonl").read_text().splitlines()]
    assert [(x["position"], x["start"], x["end"], x["max_db"], x["severity"]) for x in lines] == [
        ("North fence", "2026-06-01T07:00:00+00:00", "2026-06-01T19:00:00+00:00", 60.0,
         "limit")]
    calls = (tmp_path / "calls.txt").read_text().splitlines()
    assert [json.loads(c) for c in calls] == lines  # the program saw each line once

    proc = subprocess.Popen([sys.executable, "-m", "surveytools", "run", str(drop), *common,
                             "--watch", "--interval", "0.3", "--max-cycles", "25"],
                            cwd=tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True)
    try:
        deadline = time.monotonic() + 120
        time.sleep(1.0)
        survey_workbook(tmp_path / "south.xlsx", position="South gate").rename(
            drop / "south.xlsx")
        while not (out / "south.results.json").exists():
            assert time.monotonic() < deadline, "new file never processed"
            time.sleep(0.2)
        # North's log grows: 60 dB until 21:00, so its episode (same start) runs 14 h now;
        # reprocessed on the next poll, but not alerted again.
        before = (out / "north.results.json").stat().st_mtime_ns
        survey_workbook(tmp_path / "north2.xlsx", position="North fence",
                        levels=[60.0] * 14 + [55.0] * 2 + [50.0] * 8).rename(
            drop / "north.xlsx")
        while (out / "north.results.json").stat().st_mtime_ns == before:
            assert time.monotonic() < deadline, "changed file never reprocessed"
            time.sleep(0.2)
    finally:
        stdout, stderr = proc.communicate(timeout=300)
    assert proc.returncode == 0, stderr
    grown = json.loads((out / "north.results.json").read_text())
    assert [(e["start"], e["end"]) for e in grown["criteria"][0]["episodes"]] == [
        ("2026-06-01T07:00:00+00:00", "2026-06-01T21:00:00+00:00")]
    assert stdout.count("ALERT") == 1 and "ALERT limit: South gate - Daytime" in stdout
    positions = [json.loads(x)["position"]
                 for x in (out / "alerts.jsonl").read_text().splitlines()]
    assert positions == ["North fence", "South gate"]
    assert len((tmp_path / "calls.txt").read_text().splitlines()) == 2


def test_a_failing_alert_program_is_reported_and_the_run_goes_on(tmp_path: Path) -> None:
    survey_workbook(tmp_path / "north.xlsx", position="North fence")
    settings = tmp_path / "settings.toml"
    settings.write_text('[[criteria]]\nindicator = "LAeq"\nlimit_db = 58.0\n')
    proc = run_cli("run", str(tmp_path / "north.xlsx"), "--settings", str(settings), "-o",
                   str(tmp_path / "o"), "--quiet", "--on-alert", str(tmp_path / "missing"),
                   cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert "alert program missing could not be started" in proc.stderr
    assert "Traceback" not in proc.stderr
    assert (tmp_path / "o" / "north.results.json").exists()


def test_run_with_a_shared_weather_file(tmp_path: Path) -> None:
    from datetime import datetime

    from tests.validation.test_shared_weather import station_workbook

    # Station (UTC+01:00) windy at 10:00 and 11:00 (+01:00) = 09:00Z-11:00Z; North
    # (Europe/Berlin, from 07:00 CEST = 05:00Z) -> readings 5, 6 = rows 6, 7 (hand-evaluated).
    wind = [2.0] * 24
    wind[4] = wind[5] = 8.0
    station = station_workbook(tmp_path / "station.xlsx", datetime(2026, 6, 1, 6, 0), wind)
    drop = tmp_path / "drop"
    drop.mkdir()
    survey_workbook(drop / "north.xlsx", position="North", time_zone="Europe/Berlin")
    out = tmp_path / "o"
    proc = run_cli("run", str(drop), "-o", str(out), "--quiet", "--weather", str(station),
                   cwd=tmp_path)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    doc = json.loads((out / "north.results.json").read_text())
    assert [(s["first_row"], s["last_row"]) for s in doc["exclusion_spans"]
            if s["reason"] == "wind"] == [(6, 7)]
    assert any(f["code"] == "weather-source" for f in doc["findings"])
    assert doc["weather_file"]["file"] == "station.xlsx"
    # verify recomputes with the recorded weather file, and notices when it changed
    same = run_cli("verify", str(out / "north.results.json"), cwd=tmp_path)
    assert same.returncode == 0, same.stdout + same.stderr
    wind[5] = 2.0
    station_workbook(station, datetime(2026, 6, 1, 6, 0), wind)
    changed = run_cli("verify", str(out / "north.results.json"), cwd=tmp_path)
    assert changed.returncode == 1 and "weather_file > sha256" in changed.stdout
    missing = run_cli("run", str(drop), "-o", str(out), "--weather", str(tmp_path / "no.csv"),
                      cwd=tmp_path)
    assert missing.returncode == 2 and "--weather" in missing.stderr


def test_terminal_line_is_verdict_first_with_the_reported_figures() -> None:
    from surveytools.cli import _headline

    outcome = {"overview": {
        "position": "KL-2", "measured_s": 604800.0,
        "survey_average": {"Lden": 58.65},
        "coverage": {"valid_fraction": 570000.0 / 604800.0},
        "verdict": {"outcome_text": "4 of 4 criteria not met", "data_quality_text": "ok"}}}
    # hand-evaluated: Lden 58.65 -> 58.7 dB half up (not 58.6 as binary rounding may give);
    # 570000 / 604800 = 0.942460... -> 94.2 %; 604800 s = 168.0 h
    assert _headline(outcome) == ("criteria: 4 of 4 criteria not met; data quality: ok; "
                                  "position KL-2; Lden 58.7 dB (survey average); "
                                  "94.2 % of 168.0 h valid")


def test_closing_line_agrees_with_each_inputs_verdict() -> None:
    # Hand-made outcomes: one input whose findings are clean but whose verdict lists a
    # warning that affects the figures and 2 criteria not met; one clean input.
    from surveytools.cli import _summary_line

    outcomes = [
        {"status": "ok", "overview": {"verdict": {"data_quality": "warnings",
                                                 "criteria_not_met": 2}}},
        {"status": "ok", "overview": {"verdict": {"data_quality": "ok",
                                                 "criteria_not_met": 0}}},
    ]
    counts = {"ok": 2, "warnings": 0, "errors": 0, "unreadable": 0, "skipped": 0,
              "deferred": 0}
    line = _summary_line(counts, "Processed", outcomes)
    assert line == ("Processed 2 files: criteria not met at 1 of 2 inputs; data quality "
                    "1 ok, 1 with warnings, 0 with errors, 0 unreadable")
    assert counts["ok"] == 2  # the caller's counts (exit code) are not changed


def test_check_with_a_shared_weather_file_reports_its_findings(tmp_path: Path) -> None:
    from datetime import datetime

    from tests.validation.test_shared_weather import station_workbook

    # The station of test_run_with_a_shared_weather_file, with its 15:00Z row missing:
    # check validates with it as run would, so the gap and the source are reported, and
    # an unusable station file is an error on the input (exit 1), as in run.
    wind = [2.0] * 24
    station = station_workbook(tmp_path / "station.xlsx", datetime(2026, 6, 1, 6, 0), wind,
                               skip=(10,))
    north = survey_workbook(tmp_path / "north.xlsx", position="North",
                            time_zone="Europe/Berlin")
    js = run_cli("check", str(north), "--settle", "0", "--format", "json", "--weather",
                 str(station), cwd=tmp_path)
    codes = [f["code"] for f in json.loads(js.stdout)["inputs"][0]["findings"]]
    assert "weather-source" in codes and "weather-gap" in codes
    bad = tmp_path / "broken.xlsx"
    bad.write_bytes(b"not a workbook")
    refused = run_cli("check", str(north), "--settle", "0", "--weather", str(bad),
                      cwd=tmp_path)
    assert refused.returncode == 1
    assert "[weather-file-unreadable]" in refused.stdout
    missing = run_cli("check", str(north), "--weather", str(tmp_path / "nope.xlsx"),
                      cwd=tmp_path)
    assert missing.returncode == 2 and "--weather" in missing.stderr
