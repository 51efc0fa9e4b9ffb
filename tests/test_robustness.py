"""Never lose work, never crash: overwrites, failed inputs, unwritable and full output folders.

Every fixture is built at test time; each test asserts the exit code and the message the
user sees (issue: robustness under fault injection).
"""

from __future__ import annotations

import errno
import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from surveytools.batch import (
    BatchOptions,
    BatchResult,
    check_output_folder,
    describe_write_fault,
    os_error_in,
    run_batch,
)
from surveytools.errors import SurveyToolsError
from tests.workbooks import survey_workbook


def run_cli(*args: str, cwd: Path) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "surveytools", *args], cwd=cwd,
                          capture_output=True, text=True, timeout=600, check=False)


# --- lost work: template and demo never replace a user's file ---------------------------

def test_template_refuses_to_overwrite_a_filled_in_workbook(tmp_path: Path) -> None:
    survey = survey_workbook(tmp_path / "site.xlsx")
    before = survey.read_bytes()
    proc = run_cli("template", "site.xlsx", cwd=tmp_path)
    assert proc.returncode == 2
    assert "site.xlsx" in proc.stderr and "--force" in proc.stderr
    assert "Traceback" not in proc.stderr
    assert survey.read_bytes() == before
    forced = run_cli("template", "site.xlsx", "--force", cwd=tmp_path)
    assert forced.returncode == 0, forced.stderr
    assert survey.read_bytes() != before


@pytest.mark.parametrize("name", ["survey.csv", "survey", "survey.xls", "survey.xlsm"])
def test_template_refuses_a_name_that_is_not_xlsx(tmp_path: Path, name: str) -> None:
    proc = run_cli("template", name, cwd=tmp_path)
    assert proc.returncode == 2
    assert ".xlsx" in proc.stderr and name in proc.stderr
    assert not (tmp_path / name).exists()


def test_template_write_never_replaces_a_file_created_meanwhile(tmp_path: Path) -> None:
    from surveytools.outputs.atomic import atomic_path

    target = tmp_path / "x.xlsx"
    with pytest.raises(FileExistsError), atomic_path(target, replace=False) as part:
        part.write_bytes(b"ours")
        target.write_bytes(b"theirs")  # someone else's file appears before the rename
    assert target.read_bytes() == b"theirs"
    assert [p.name for p in tmp_path.iterdir()] == ["x.xlsx"]  # no temporary left


def test_demo_keeps_the_users_settings_file(tmp_path: Path) -> None:
    folder = tmp_path / "d"
    folder.mkdir()
    mine = folder / "settings.toml"
    mine.write_text('reporting_interval = "5min"\n')
    proc = run_cli("demo", "d", cwd=tmp_path)
    assert proc.returncode == 2
    assert "settings.toml" in proc.stderr and "--force" in proc.stderr
    assert mine.read_text() == 'reporting_interval = "5min"\n'
    assert sorted(p.name for p in folder.iterdir()) == ["settings.toml"]  # nothing written
    forced = run_cli("demo", "d", "--force", cwd=tmp_path)
    assert forced.returncode == 0, forced.stderr
    assert "reporting_interval = \"15min\"" in mine.read_text()


def test_subcommands_describe_themselves_in_help(tmp_path: Path) -> None:
    from surveytools.cli import build_parser

    parser = build_parser()
    sub = next(a for a in parser._actions if a.dest == "command")
    for name in ("verify", "demo", "template"):
        assert sub.choices[name].description, name  # type: ignore[index]


# --- a failed input never breaks the next run -----------------------------------------

def _options(tmp_path: Path, inputs: Path, memory: int | None, **kw: object) -> BatchOptions:
    return BatchOptions(paths=[inputs], out_dir=tmp_path / "out", settle_s=0.0,
                        memory_bytes=memory, timeout_s=120.0, **kw)  # type: ignore[arg-type]


def test_after_a_worker_failure_the_next_run_processes_the_input(tmp_path: Path) -> None:
    inputs = tmp_path / "in"
    inputs.mkdir()
    survey_workbook(inputs / "a.xlsx")
    # 20 MB of address space: the worker cannot even import its libraries and dies.
    failed = run_batch(_options(tmp_path, inputs, 20 * 1024**2), "k")
    assert [o["status"] for o in failed.outcomes] == ["unreadable"]
    assert failed.outcomes[0]["findings"][0]["code"] == "worker-out-of-memory"
    manifest = json.loads((tmp_path / "out" / ".surveytools-manifest.json").read_text())
    assert manifest == {}  # a failure is not remembered as a result
    again = run_batch(_options(tmp_path, inputs, None), "k")
    assert [o["status"] for o in again.outcomes] == ["ok"]
    assert not again.outcomes[0].get("reused")
    # The third run reuses the complete results.
    third = run_batch(_options(tmp_path, inputs, None), "k")
    assert third.outcomes[0].get("reused") is True


def test_a_damaged_manifest_entry_means_the_input_is_processed_again(tmp_path: Path) -> None:
    inputs = tmp_path / "in"
    inputs.mkdir()
    path = survey_workbook(inputs / "a.xlsx")
    first = run_batch(_options(tmp_path, inputs, None), "k")
    assert first.exit_code() == 0
    manifest_path = tmp_path / "out" / ".surveytools-manifest.json"
    manifest = json.loads(manifest_path.read_text())
    for bad in (None, "../../etc/passwd", 3):
        manifest[str(path.resolve())]["results_xlsx"] = bad
        manifest_path.write_text(json.dumps(manifest))
        result = run_batch(_options(tmp_path, inputs, None), "k")
        assert [o["status"] for o in result.outcomes] == ["ok"]
        assert not result.outcomes[0].get("reused")
        manifest = json.loads(manifest_path.read_text())


@pytest.mark.slow
def test_watch_survives_an_input_whose_worker_fails(tmp_path: Path) -> None:
    inputs = tmp_path / "in"
    inputs.mkdir()
    survey_workbook(inputs / "a.xlsx")
    proc = run_cli("run", "in", "-o", "out", "--watch", "--interval", "0.1",
                   "--max-cycles", "2", "--memory-limit", "0.02", "--settle", "0",
                   cwd=tmp_path)
    assert proc.returncode == 1, proc.stderr
    assert "internal error" not in proc.stderr
    # Retried at every poll, but said once while it fails the same way.
    assert proc.stdout.count("worker-out-of-memory") == 1


@pytest.mark.slow
def test_watch_says_it_is_watching_once_and_then_only_what_changed(tmp_path: Path) -> None:
    inputs = tmp_path / "in"
    inputs.mkdir()
    survey_workbook(inputs / "a.xlsx")
    proc = run_cli("run", "in", "-o", "out", "--watch", "--interval", "0.1",
                   "--max-cycles", "4", "--settle", "0", cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.count("Watching in for new or changed files every 0.1 s") == 1
    assert proc.stdout.count("Processed ") == 1  # the later polls found nothing new
    assert proc.stdout.count("a.xlsx:") == 1


# --- the output folder ----------------------------------------------------------------

def test_an_output_path_under_a_file_is_refused_before_any_work(tmp_path: Path) -> None:
    survey_workbook(tmp_path / "a.xlsx")
    (tmp_path / "notes.txt").write_text("a file, not a folder")
    proc = run_cli("run", "a.xlsx", "-o", "notes.txt/out", cwd=tmp_path)
    assert proc.returncode == 2
    assert "notes.txt/out" in proc.stderr and "Nothing was processed" in proc.stderr
    assert "internal error" not in proc.stderr


@pytest.mark.skipif(os.geteuid() == 0, reason="root writes into read-only folders")
def test_a_read_only_output_folder_is_refused_before_any_work(tmp_path: Path) -> None:
    survey_workbook(tmp_path / "a.xlsx")
    out = tmp_path / "out"
    out.mkdir()
    out.chmod(0o555)
    try:
        proc = run_cli("run", "a.xlsx", "-o", "out", cwd=tmp_path)
    finally:
        out.chmod(0o755)
    assert proc.returncode == 2
    assert "out" in proc.stderr and "no permission" in proc.stderr


def test_output_folder_check_names_the_folder_and_the_reason(tmp_path: Path,
                                                              monkeypatch: pytest.MonkeyPatch
                                                              ) -> None:
    import tempfile

    def read_only(*_a: object, **_k: object) -> None:
        raise OSError(errno.EROFS, "Read-only file system")

    monkeypatch.setattr(tempfile, "NamedTemporaryFile", read_only)
    with pytest.raises(SurveyToolsError) as info:
        check_output_folder(tmp_path / "results")
    assert str(tmp_path / "results") in str(info.value)
    assert "read-only" in str(info.value)


def test_write_faults_are_described_in_our_words() -> None:
    class LibraryError(Exception):  # a library wrapping the system's error, as xlsxwriter does
        pass

    wrapped = LibraryError(OSError(errno.ENOSPC, "No space left on device"))
    fault = os_error_in(wrapped)
    assert fault is not None and fault.errno == errno.ENOSPC
    assert describe_write_fault(fault) == ("output-disk-full", "the disk is full (no space left)")
    assert os_error_in(ValueError("no system error here")) is None


def test_a_full_disk_is_recorded_against_the_input_and_a_rerun_recovers(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from surveytools import pipeline, worker

    inputs = tmp_path / "in"
    inputs.mkdir()
    path = survey_workbook(inputs / "a.xlsx")
    out = tmp_path / "out"
    out.mkdir()
    job = {"mode": "run", "path": str(path), "settings_path": None, "out_dir": str(out),
           "stem": "a", "sha256": None}
    real_run_file = pipeline.run_file

    def full_disk(*_a: object, **_k: object) -> None:
        raise RuntimeError("writer failed") from OSError(errno.ENOSPC, "No space left")

    monkeypatch.setattr(pipeline, "run_file", full_disk)
    outcome = worker.execute_job(job)
    finding = outcome["findings"][0]
    assert finding["code"] == "output-disk-full"
    assert str(out) in finding["message"] and "processed again" in finding["message"]
    monkeypatch.setattr(pipeline, "run_file", real_run_file)
    assert worker.execute_job(job)["status"] == "ok"


def test_a_full_disk_at_the_overview_is_reported_not_raised(tmp_path: Path,
                                                            monkeypatch: pytest.MonkeyPatch
                                                            ) -> None:
    import surveytools.batch as batch

    inputs = tmp_path / "in"
    inputs.mkdir()
    survey_workbook(inputs / "a.xlsx")

    def full(*_a: object, **_k: object) -> None:
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(batch, "write_overview", full)
    result = run_batch(_options(tmp_path, inputs, None), "k")
    assert result.output_error is not None and "disk is full" in result.output_error
    assert result.exit_code() == 2
    assert BatchResult().exit_code() == 0


# --- verify names days, intervals and cells ---------------------------------------------

def test_verify_names_the_day_interval_and_finding_that_differ(tmp_path: Path) -> None:
    from surveytools.pipeline import run_file
    from surveytools.settings import Settings
    from surveytools.verify import verify_results

    path = survey_workbook(tmp_path / "a.xlsx", levels=[60.0] * 12 + ["loud"] + [50.0] * 11)
    out = tmp_path / "out"
    out.mkdir()
    run_file(path, out, "a", Settings())
    results = out / "a.results.json"
    doc = json.loads(results.read_text())
    day = doc["days"][0]
    day["Lden"] = (day["Lden"] or 0) + 1
    interval = doc["intervals"][2]
    interval["LAeq"] = 1.0
    finding = next(f for f in doc["findings"] if f["row"] is not None)
    finding["message"] = "changed"
    results.write_text(json.dumps(doc))
    diffs, _notes = verify_results(results, path)
    text = "\n".join(diffs)
    assert f"days > day {day['date']} > Lden" in text
    assert f"intervals > interval from {interval['start']} > LAeq" in text
    assert (f"findings > finding {finding['code']} at {finding['sheet']}!"
            f"{finding['column']}{finding['row']} > message") in text
    assert "days.0" not in text and "intervals.2" not in text


def test_verify_describes_a_large_section_instead_of_printing_it() -> None:
    # a section that is gone in the recomputation is named by its size, not dumped whole
    # (a week's background section printed as one line of some 30,000 characters)
    from surveytools.verify import differences

    recorded = {"background": {"day": {"LA90": 51.0}, "reference_intervals": [
        {"LA90": 40.0 + i % 5, "period": "night"} for i in range(300)]}, "status": "ok"}
    recomputed = {"background": None, "status": "errors"}
    lines = differences(recorded, recomputed)
    assert lines == ["background: recorded a section of 2 keys (day, reference_intervals...), "
                     "recomputed None",
                     "status: recorded 'ok', recomputed 'errors'"]
    assert all(len(line) < 200 for line in lines)


def test_verify_refuses_a_file_that_is_not_json_in_our_words(tmp_path: Path) -> None:
    from surveytools.verify import verify_results

    bad = tmp_path / "x.results.json"
    bad.write_text("{not json")
    with pytest.raises(SurveyToolsError) as info:
        verify_results(bad)
    assert "not JSON at line 1" in str(info.value) and "Expecting" not in str(info.value)


# --- saying it once ---------------------------------------------------------------------

def test_a_column_of_day_first_timestamps_is_reported_once(tmp_path: Path) -> None:
    from datetime import datetime, timedelta

    from surveytools.pipeline import check_file
    from surveytools.settings import Settings

    start = datetime(2026, 6, 1, 7)
    lines = ["Start,Duration (s),LAeq (dB)"]
    lines += [f"{start + timedelta(hours=i):%d/%m/%Y %H:%M},3600,55.0" for i in range(250)]
    lines.append("2026-06-12 09:00,3600,55.0")  # one row in ISO form is read
    csv = tmp_path / "log.csv"
    csv.write_text("\n".join(lines) + "\n")
    outcome = check_file(csv, Settings()).to_json()
    codes = [f["code"] for f in outcome["findings"]]
    assert "timestamp-invalid" not in codes and "findings-truncated" not in codes
    (column,) = [f for f in outcome["findings"] if f["code"] == "timestamp-column-unreadable"]
    assert (column["row"], column["column"]) == (1, "A")
    message = column["message"]
    assert message.startswith("column A ('Start'): ")
    assert "250 of 251 timestamps" in message and "'01/06/2026 07:00' in row 2" in message
    assert "day/month/year" in message and "ISO 8601" in message


def test_scattered_bad_timestamps_keep_their_own_findings(tmp_path: Path) -> None:
    from datetime import datetime, timedelta

    from surveytools.pipeline import check_file
    from surveytools.settings import Settings

    start = datetime(2026, 6, 1, 7)
    rows = [f"{start + timedelta(hours=i):%Y-%m-%d %H:%M},3600,55.0" for i in range(40)]
    rows[5] = "05/06/2026 12:00,3600,55.0"
    rows[20] = "yesterday,3600,55.0"
    csv = tmp_path / "log.csv"
    csv.write_text("Start,Duration (s),LAeq (dB)\n" + "\n".join(rows) + "\n")
    outcome = check_file(csv, Settings()).to_json()
    located = sorted(f["row"] for f in outcome["findings"] if f["code"] == "timestamp-invalid")
    assert located == [7, 22]


@pytest.mark.parametrize(("cell", "cause"), [
    ("55 dB", "the unit is written in every cell"),
    ('"55,3"', "decimal commas"),
])
def test_a_column_of_text_levels_is_reported_once(tmp_path: Path, cell: str, cause: str
                                                  ) -> None:
    from datetime import datetime, timedelta

    from surveytools.pipeline import check_file
    from surveytools.settings import Settings

    start = datetime(2026, 6, 1, 7)
    rows = [f"{start + timedelta(hours=i):%Y-%m-%d %H:%M},3600,{cell}" for i in range(60)]
    csv = tmp_path / "log.csv"
    csv.write_text("Start,Duration (s),LAeq (dB)\n" + "\n".join(rows) + "\n")
    outcome = check_file(csv, Settings()).to_json()
    codes = [f["code"] for f in outcome["findings"]]
    assert "level-not-a-number" not in codes
    (column,) = [f for f in outcome["findings"] if f["code"] == "column-not-numbers"]
    assert (column["row"], column["column"]) == (1, "C")
    assert "60 of 60 cells" in column["message"] and "row 2" in column["message"]
    assert cause in column["message"]


@pytest.mark.slow
def test_output_cut_short_by_the_reader_is_not_an_internal_error(tmp_path: Path) -> None:
    from datetime import datetime, timedelta

    start = datetime(2026, 6, 1, 7)
    rows = [f"{start + timedelta(hours=i):%Y-%m-%d %H:%M},3600,oops" for i in range(3)]
    rows += [f"{start + timedelta(hours=i):%Y-%m-%d %H:%M},3600,5{i % 10}x"
             for i in range(3, 400, 40)]
    (tmp_path / "log.csv").write_text("Start,Duration (s),LAeq (dB)\n" + "\n".join(rows) + "\n")
    reader = subprocess.Popen([sys.executable, "-m", "surveytools", "check", "log.csv"],
                              cwd=tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    assert reader.stdout is not None
    reader.stdout.close()  # the reader is gone before anything is written (`| head -0`)
    _out, err = reader.communicate(timeout=120)
    assert reader.returncode == 1
    assert b"internal error" not in err and b"Traceback" not in err


def test_a_full_disk_gives_status_unwritten_not_unreadable(tmp_path: Path,
                                                           monkeypatch: pytest.MonkeyPatch
                                                           ) -> None:
    # The worker read the input, but the disk filled while its results were written: the
    # overview says so (status "unwritten", its own count), no results document claims the
    # file was unreadable, the exit code is 1, and the next run processes the input again.
    from jsonschema import Draft202012Validator

    import surveytools.batch as batch
    from surveytools.schema_files import schema_path

    inputs = tmp_path / "in"
    inputs.mkdir()
    survey_workbook(inputs / "a.xlsx")
    real_run = batch.WorkerSlot.run

    def full_disk(self: object, job: dict[str, object], *_a: object, **_k: object) -> dict:
        return batch.write_failure(Path(str(job["path"])), Path(str(job["out_dir"])),
                                   OSError(errno.ENOSPC, "No space left on device"))

    monkeypatch.setattr(batch.WorkerSlot, "run", full_disk)
    key = "0" * 64  # a settings hash
    result = run_batch(_options(tmp_path, inputs, None), key)
    (outcome,) = result.outcomes
    assert outcome["status"] == "unwritten" and outcome["results_json"] is None
    assert result.counts()["unwritten"] == 1 and result.counts()["unreadable"] == 0
    assert result.exit_code() == 1
    out = tmp_path / "out"
    assert not list(out.glob("*.results.json"))
    overview = json.loads((out / "overview.json").read_text(encoding="utf-8"))
    schema = json.loads(schema_path("overview.schema.json").read_text(encoding="utf-8"))
    Draft202012Validator(schema).validate(overview)
    (item,) = overview["inputs"]
    assert item["status"] == "unwritten" and "disk is full" in item["reason"]
    assert overview["counts"]["unwritten"] == 1
    monkeypatch.setattr(batch.WorkerSlot, "run", real_run)
    again = run_batch(_options(tmp_path, inputs, None), key)
    assert [o["status"] for o in again.outcomes] == ["ok"]
    assert again.counts()["unwritten"] == 0


def test_an_input_whose_results_could_not_be_written_is_not_called_unreadable() -> None:
    import io

    from surveytools.batch import write_failure
    from surveytools.cli import _report_cycle

    outcome = write_failure(Path("/data/a.xlsx"), Path("/results"),
                            OSError(errno.ENOSPC, "No space left on device"))
    out = io.StringIO()
    _report_cycle(out, BatchResult(outcomes=[outcome]), later_poll=False, told=set())
    text = out.getvalue()
    assert text.startswith("a.xlsx: read, but its results could not be written")
    assert "could not be read" not in text and "[output-disk-full]" in text
    assert outcome["status"] == "unwritten"
