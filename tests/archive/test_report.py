"""``archive report``: long-term figures on a local Dask cluster, equal to ``run``'s days."""

from __future__ import annotations

import json
import math
import os
from pathlib import Path

import numpy as np
import openpyxl
import pytest

from surveytools.outputs.archive_report import validate_archive_report
from tests.archive.archive_inputs import cli, demo_folder, write_csv_log, write_settings


@pytest.fixture(scope="module")
def demo_dir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return demo_folder(tmp_path_factory)

DAY_LEVELS = ("Lday", "Levening", "Lnight", "Lden", "Ldn", "CNEL", "LAeq_16h", "LAeq_8h")


def _report(archive: Path | str, out: Path, *extra: str) -> dict:
    code, stdout, err = cli("archive", "report", str(archive), "-o", str(out), "--workers",
                            "1", "--quiet", *extra)
    assert code == 0, (stdout, err)
    doc = json.loads((out / "archive-report.json").read_text(encoding="utf-8"))
    assert validate_archive_report(doc) == []
    return doc


def _close(a: object, b: object) -> bool:
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(_close(a[k], b[k]) for k in a)
    if isinstance(a, float) and isinstance(b, float):
        return math.isclose(a, b, abs_tol=0.01)
    return a == b


@pytest.fixture(scope="module")
def demo_archive(demo_dir: Path, tmp_path_factory: pytest.TempPathFactory) -> Path:
    archive = tmp_path_factory.mktemp("archive") / "archive"
    code, out, err = cli("archive", "add", str(demo_dir), "--archive", str(archive),
                         "--settings", str(demo_dir / "settings.toml"))
    assert code == 0, (out, err)
    return archive


def test_archive_of_the_demo_reports_runs_days(demo_dir, demo_archive, tmp_path):
    # The acceptance rule of the archive: per-day figures equal those of 'run' on the same
    # inputs and settings (0.01 dB), every key of run's days.
    settings = str(demo_dir / "settings.toml")
    code, out, err = cli("run", str(demo_dir), "-o", str(tmp_path / "run"), "--settings",
                         settings, "--quiet", "--jobs", "1")
    assert code in (0, 1), (out, err)
    run_days = {}
    for path in (tmp_path / "run").glob("*.results.json"):
        doc = json.loads(path.read_text(encoding="utf-8"))
        run_days[doc["survey"]["position"]] = doc["days"]
    report = _report(demo_archive, tmp_path / "report", "--settings", settings)
    archive_days = {p["position"]: p["days"] for p in report["positions"]}
    assert archive_days.keys() == run_days.keys() == {"KL-1", "KL-2", "KL-3", "KL-4"}
    for position, days in run_days.items():
        assert [d["date"] for d in archive_days[position]] == [d["date"] for d in days]
        for mine, theirs in zip(archive_days[position], days, strict=True):
            assert _close(mine, theirs), (position, mine, theirs)


def test_report_workbook_has_every_sheet_and_the_cautions(demo_dir, demo_archive, tmp_path):
    _report(demo_archive, tmp_path, "--settings", str(demo_dir / "settings.toml"))
    book = openpyxl.load_workbook(tmp_path / "archive-report.xlsx")
    assert book.sheetnames == ["Summary", "Charts", "Years", "Months", "Days", "Levels",
                               "Criteria"]
    text = " ".join(str(c.value) for row in book["Summary"].iter_rows() for c in row
                    if c.value)
    assert "indicative" in text and "competent person" in text and "hearing" in text
    assert len(book["Charts"]._charts) == 8  # months and years of four positions
    # printed pages end between positions, never inside a chart (two positions a page; a
    # third-position page break fell inside the fourth position's charts before)
    assert [b.id for b in book["Charts"].row_breaks.brk] == [2 + 2 * 16]
    # the header row is tall enough for "Days with data" wrapped onto three lines in its
    # narrow column (a fixed two-line row cut "data" off, seen in LibreOffice's print)
    assert book["Years"].row_dimensions[1].height > 2 * 15.0
    days = list(book["Days"].iter_rows(values_only=True))
    assert days[0][:3] == ("Position", "Date", "Lday [dB]")
    # header + assessment days of KL-1 (8), KL-2 (8), KL-3 (1), KL-4 (22nd to 25th: 4)
    assert len(days) == 1 + 8 + 8 + 1 + 4


@pytest.fixture(scope="module")
def july_archive(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    """A month of 1-minute readings alternating 60.0 / 40.0 dB from 2026-07-01 07:00."""
    folder = tmp_path_factory.mktemp("july")
    levels = np.tile([60.0, 40.0], 31 * 1440 // 2)
    log = write_csv_log(folder / "mast.csv", "2026-07-01 07:00:00", 31, 60, levels)
    criteria = (
        '[[criteria]]\nname = "Night"\nindicator = "Lnight"\nlimit_db = 55.0\n'
        '[[criteria]]\nname = "Quarter hours"\nindicator = "LAeq"\nperiod = "day"\n'
        'limit_db = 57.0\n')
    settings = write_settings(folder / "settings.toml", "Mast", criteria)
    archive = folder / "archive"
    assert cli("archive", "add", str(log), "--archive", str(archive), "--settings",
               str(settings))[0] == 0
    return archive, settings


def test_month_and_year_figures_by_hand(july_archive, tmp_path):
    archive, settings = july_archive
    doc = _report(archive, tmp_path, "--settings", str(settings))
    (mast,) = doc["positions"]
    # Hand-evaluated: equal time at 60 and 40 dB in every period (whole minutes, even
    # counts from 07:00): L = 10 lg((10^6 + 10^4)/2) = 10 lg(505000) = 57.03 dB.
    # Lden (Directive 2002/49/EC Annex I, 12/4/8 h, +5/+10 dB):
    #   57.03 + 10 lg((12 + 4*10^0.5 + 8*10)/24) = 57.03 + 10 lg(4.36038) = 57.03 + 6.40
    #   = 63.43 dB; Ldn (15/9 h, +10 dB): 57.03 + 10 lg((15 + 90)/24) = 57.03 + 6.41 = 63.44.
    (july,) = mast["months"]
    assert july["month"] == "2026-07"
    for key in ("Lday", "Levening", "Lnight"):
        assert july[key] == pytest.approx(57.03, abs=0.005)
    assert july["Lden"] == pytest.approx(63.43, abs=0.01)
    assert july["Ldn"] == pytest.approx(63.44, abs=0.01)
    assert july["coverage"] == {"day": 1.0, "evening": 1.0, "night": 1.0}
    assert july["sufficient"] is True and july["days_with_data"] == 31
    (year,) = mast["years"]
    assert year["year"] == 2026 and year["Lden"] == pytest.approx(63.43, abs=0.01)
    # 31 of 365 assessment days of 2026 hold readings: coverage 31/365 = 0.0849
    assert year["coverage"]["night"] == pytest.approx(31 / 365, abs=1e-4)
    assert year["sufficient"] is False
    # LN (design §5): 50 % of the time strictly above 40 dB -> L50 = 40; L10 = 60; L90 = 40
    assert {k: mast["levels"]["night"][k] for k in ("LA10", "LA50", "LA90")} == {
        "LA10": 60.0, "LA50": 40.0, "LA90": 40.0}
    assert mast["levels"]["night"]["valid_s"] == 31 * 8 * 3600
    night, quarters = mast["criteria"]
    # every night (57.0 dB) is above 55 dB
    assert (night["applies_to"], night["checked"], night["above"]) == ("day", 31, 31)
    # Quarter hours of the day period alternate between 8 x 60 + 7 x 40 dB
    # (10 lg((8e6 + 7e4)/15) = 57.31 dB, above 57) and 7 x 60 + 8 x 40 dB (56.74 dB):
    # 48 quarter hours a day, half of them above, 31 days -> 744 of 1488.
    assert (quarters["applies_to"], quarters["checked"], quarters["above"]) == (
        "interval", 1488, 744)


def test_date_range_and_position_filter(july_archive, tmp_path):
    archive, settings = july_archive
    doc = _report(archive, tmp_path, "--settings", str(settings), "--from", "2026-07-10",
                  "--to", "2026-07-19", "--position", "Mast")
    (mast,) = doc["positions"]
    assert [d["date"] for d in mast["days"]] == [f"2026-07-{d}" for d in range(10, 20)]
    (july,) = mast["months"]
    assert (july["from"], july["to"], july["days_with_data"]) == ("2026-07-10", "2026-07-19", 10)
    assert july["coverage"]["day"] == 1.0
    # a stored position with no readings in the range: an empty report that says so
    code, stdout, err = cli("archive", "report", str(archive), "-o", str(tmp_path / "none"),
                            "--workers", "1", "--quiet", "--position", "Mast",
                            "--from", "2027-01-01")
    assert code == 0, err
    assert "note: position Mast: no stored readings in the date range" in stdout
    other = json.loads((tmp_path / "none" / "archive-report.json").read_text(encoding="utf-8"))
    assert other["positions"] == [] and any("Mast" in c for c in other["cautions"])
    # without criteria in the settings the Criteria sheet says why it is empty
    criteria = openpyxl.load_workbook(tmp_path / "none" / "archive-report.xlsx")["Criteria"]
    notes = [c.value for row in criteria.iter_rows(min_row=2) for c in row if c.value]
    assert any("No criteria were counted" in str(n) and "--settings" in str(n) for n in notes)
    # a position the archive never stored (a typing slip) is refused before any work
    code, stdout, err = cli("archive", "report", str(archive), "-o", str(tmp_path / "typo"),
                            "--workers", "1", "--quiet", "--position", "mast")
    assert code == 2 and not (tmp_path / "typo").exists()
    assert "--position mast: this archive has stored no readings" in err
    assert "positions stored: Mast" in err and "did you mean 'Mast'?" in err


def test_report_of_a_folder_without_an_archive_is_refused(tmp_path):
    code, _, err = cli("archive", "report", str(tmp_path), "-o", str(tmp_path / "o"))
    assert code == 2 and "no archive here" in err
    code, _, err = cli("archive", "report", str(tmp_path), "-o", str(tmp_path / "o"),
                       "--from", "July")
    assert code == 2 and "YYYY-MM-DD" in err


def test_a_damaged_partition_is_a_problem_and_the_rest_is_reported(tmp_path):
    settings = write_settings(tmp_path / "s.toml", "Mast")
    log = write_csv_log(tmp_path / "two_months.csv", "2026-07-25 07:00:00", 14, 600, 50.0)
    archive = tmp_path / "archive"
    assert cli("archive", "add", str(log), "--archive", str(archive), "--settings",
               str(settings))[0] == 0
    (july,) = (archive / "readings").rglob("month=2026-07/*.parquet")
    july.write_bytes(b"not parquet any more")
    code, out, _ = cli("archive", "report", str(archive), "-o", str(tmp_path / "out"),
                       "--settings", str(settings), "--workers", "1", "--quiet")
    assert code == 1
    assert "problem: position Mast, month 2026-07: could not be read" in out
    doc = json.loads((tmp_path / "out" / "archive-report.json").read_text(encoding="utf-8"))
    assert [m["month"] for m in doc["positions"][0]["months"]] == ["2026-07", "2026-08"]
    assert doc["positions"][0]["days"][0]["date"] == "2026-07-31"


def test_an_fsspec_url_reads_the_same_archive(july_archive, tmp_path):
    # fsspec's "file://" protocol stands in for a remote filesystem (s3:// needs s3fs).
    archive, settings = july_archive
    by_path = _report(archive, tmp_path / "path", "--settings", str(settings))
    by_url = _report(archive.as_uri(), tmp_path / "url", "--settings", str(settings))
    assert by_url["archive"]["location"].startswith("file:///")
    assert by_url["positions"] == by_path["positions"]


def test_partitions_are_grouped_per_position_up_to_the_task_size():
    # Pure grouping rule (own design, see TASK_BYTES): consecutive months of one position
    # share a task until the next would pass the size; a larger month is a task alone;
    # positions never share a task.
    from surveytools.archive.report import PartitionTask, group_tasks

    def part(position: str, month: str, size: int) -> PartitionTask:
        return PartitionTask(position, month, (f"{position}-{month}",), None, None, size)

    tasks = [part("A", "2026-01", 3), part("A", "2026-02", 3), part("A", "2026-03", 3),
             part("A", "2026-04", 20), part("A", "2026-05", 1), part("B", "2026-01", 1)]
    groups = group_tasks(tasks, task_bytes=8)
    assert [(g.position, [t.month for t in g.partitions]) for g in groups] == [
        ("A", ["2026-01", "2026-02"]), ("A", ["2026-03"]), ("A", ["2026-04"]),
        ("A", ["2026-05"]), ("B", ["2026-01"])]
    assert groups[0].months == "2026-01..2026-02" and groups[1].months == "2026-03"


def test_a_busy_status_port_is_not_a_warning(july_archive, tmp_path):
    # Dask's scheduler serves HTTP on port 8787 by default and, when another program holds
    # it (here: this test), warns and leaks a socket; ours asks for a free port instead,
    # so the report runs and says nothing about it (warnings are errors in this session).
    import socket

    archive, settings = july_archive
    holder = socket.socket(socket.AF_INET, socket.SOCK_STREAM)
    try:
        try:
            holder.bind(("127.0.0.1", 8787))
            holder.listen(1)
        except OSError:
            pass  # already busy: the same situation
        code, out, err = cli("archive", "report", str(archive), "-o", str(tmp_path / "o"),
                             "--settings", str(settings), "--workers", "1", "--quiet")
    finally:
        holder.close()
    assert code == 0, (out, err)
    assert "8787" not in out + err


def test_embedded_workers_start_with_our_memory_tuning():
    # Dask's own default returns freed memory at once (MALLOC_TRIM_THRESHOLD_ 65536); the
    # embedded workers take run's malloc tuning and pyarrow's allocations from the heap.
    from distributed import Client

    from surveytools.archive.report import LocalClusterStart
    from surveytools.batch import WORKER_MALLOC_ENV

    started = LocalClusterStart(1, "1GiB")
    try:
        with Client(started.cluster()) as client:
            seen = client.run(lambda: {k: os.environ.get(k) for k in
                                       (*WORKER_MALLOC_ENV, "ARROW_DEFAULT_MEMORY_POOL")})
    finally:
        started.close()
    (environ,) = seen.values()
    assert environ == {**WORKER_MALLOC_ENV, "ARROW_DEFAULT_MEMORY_POOL": "system"}


def test_local_cluster_stops_in_the_background_and_close_waits_for_it():
    # the report writes its outputs while the embedded cluster stops; close() then waits
    import threading

    from distributed.core import Status

    from surveytools.archive.report import LocalClusterStart

    started = LocalClusterStart(1, "1GiB")
    cluster = started.cluster()
    started.begin_close()
    started.close()
    assert cluster.status == Status.closed
    assert not [t for t in threading.enumerate() if t.name == "dask-cluster-close"]
    started.close()  # a second close is harmless


def test_interval_criteria_on_la90_count_what_run_judges(tmp_path):
    # Ten days of 1-minute readings at random 0.1 dB levels with quieter nights: an LA90
    # limit per 15-minute interval. Reference 1 (the "same numbers as run"): run
    # on the same log counts the same intervals above it; reference 3 below recounts them
    # with numpy.
    # Reference 2, hand-evaluated: an interval of 15 readings at 40.0 .. 41.4 dB in
    # 0.1 dB steps (one minute each) has LA90 = 40.1 dB: the lowest level whose
    # cumulative time from the bottom reaches 10 % (1.5 of 15 minutes) is the second one.
    rng = np.random.default_rng(3)
    n = 10 * 1440
    minute = np.arange(n)
    hour = (7 + minute // 60) % 24
    levels = np.round(np.where((hour >= 7) & (hour < 22), 52.0, 44.0)
                      + rng.normal(0, 3, n), 1)
    levels[15 * 60 // 1: 15 * 60 // 1 + 15] = 40.0 + np.arange(15) / 10  # 22:00-22:14
    log = write_csv_log(tmp_path / "yard.csv", "2026-07-01 07:00:00", 10, 60, levels)
    criteria = ('[[criteria]]\nname = "Quiet floor"\nindicator = "LA90"\nlimit_db = 48.0\n'
                '[[criteria]]\nname = "Night floor"\nindicator = "LA90"\nperiod = "night"\n'
                'limit_db = 41.0\n')
    settings = write_settings(tmp_path / "s.toml", "Yard", criteria)
    code, _, err = cli("run", str(log), "-o", str(tmp_path / "run"), "--settings",
                       str(settings), "--quiet")
    assert code in (0, 1), err
    run_doc = json.loads((tmp_path / "run" / "yard.results.json").read_text(encoding="utf-8"))
    hand = next(i for i in run_doc["intervals"] if i["start"].startswith("2026-07-01T22:00"))
    assert hand["LA90"] == pytest.approx(40.1, abs=1e-9)
    archive = tmp_path / "archive"
    assert cli("archive", "add", str(log), "--archive", str(archive), "--settings",
               str(settings))[0] == 0
    doc = _report(archive, tmp_path / "report", "--settings", str(settings))
    counted = {c["name"]: c for c in doc["positions"][0]["criteria"]}
    for judged in run_doc["criteria"]:
        mine = counted[judged["name"]]
        assert mine["checked"] == judged["checked"] > 0
        assert mine["above"] == judged["failed"] > 0
    # Reference 3, outside the project: each 15-minute interval's LA90 as numpy's
    # inverted_cdf quantile at 10 % (design §5), rounded half up to 0.1 dB with decimal
    # (the reported value), night = an interval starting 23:00-06:59 local time (the
    # log's clock; readings from 07:00, so interval k starts 7 h + 15k min after midnight).
    from decimal import ROUND_HALF_UP, Decimal

    la90 = [np.quantile(levels[15 * k: 15 * k + 15], 0.10, method="inverted_cdf")
            for k in range(n // 15)]
    shown = [float(Decimal(repr(float(v))).quantize(Decimal("0.1"), ROUND_HALF_UP))
             for v in la90]
    start_hour = [(7 + (15 * k) // 60) % 24 for k in range(n // 15)]
    assert counted["Quiet floor"]["checked"] == n // 15
    assert counted["Quiet floor"]["above"] == sum(v > 48.0 for v in shown)
    night = [v for v, h in zip(shown, start_hour, strict=True) if h >= 23 or h < 7]
    assert counted["Night floor"]["checked"] == len(night)
    assert counted["Night floor"]["above"] == sum(v > 41.0 for v in night)
