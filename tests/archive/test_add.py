"""``archive add``: inputs read and cleaned as ``run`` does, stored once, corrected in place."""

from __future__ import annotations

import json
from pathlib import Path

import pyarrow.parquet as pq
import pytest

from tests.archive.archive_inputs import cli, demo_folder, write_csv_log, write_settings


@pytest.fixture(scope="module")
def demo_dir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return demo_folder(tmp_path_factory)

def _records(archive: Path) -> list[dict]:
    return json.loads((archive / "ingest.json").read_text(encoding="utf-8"))["inputs"]


def _stored_rows(archive: Path) -> int:
    return sum(pq.read_metadata(p).num_rows for p in (archive / "readings").rglob("*.parquet"))


def _snapshot(archive: Path) -> dict[str, bytes]:
    return {str(p.relative_to(archive)): p.read_bytes() for p in archive.rglob("*")
            if p.is_file() and p.name != ".archive.lock"}


def test_demo_is_stored_by_position_and_month_and_adding_again_changes_nothing(
        demo_dir, tmp_path):
    archive = tmp_path / "archive"
    args = ["archive", "add", str(demo_dir), "--archive", str(archive), "--settings",
            str(demo_dir / "settings.toml")]
    assert cli(*args)[0] == 0
    records = _records(archive)
    assert [(r["file"], r["status"], r["position"]) for r in records] == [
        ("kl1_north_boundary.xlsx", "stored", "KL-1"), ("kl2_garden.xlsx", "stored", "KL-2"),
        ("kl3_lane_end.xlsx", "stored", "KL-3"), ("kl4_pump_house.xlsx", "stored", "KL-4")]
    for record in records:
        assert len(record["sha256"]) == 64 and len(record["settings_sha256"]) == 64
        assert record["rows"] > 0 and record["first"] < record["last"]
        assert set(record["findings"]) == {"error", "warning", "info"}
        assert all(f.startswith(f"readings/position={record['position']}/month=2026-10/")
                   for f in record["files"])
    table = pq.read_table(archive / records[0]["files"][0])
    assert {"start_ms", "duration_ms", "row", "LAeq", "exclusion", "valid",
            "valid_background"} <= set(table.column_names)
    assert table.schema.field("start_ms").type == "int64"
    assert _stored_rows(archive) == sum(r["rows"] for r in records)
    before = _snapshot(archive)
    code, out, _ = cli(*args)
    assert code == 0 and "unchanged" in out
    assert _snapshot(archive) == before


def test_a_corrected_file_replaces_the_rows_of_its_span(tmp_path):
    archive = tmp_path / "archive"
    settings = write_settings(tmp_path / "s.toml", "Gate")
    first = write_csv_log(tmp_path / "gate_v1.csv", "2026-07-01 07:00:00", 2, 60, 50.0)
    assert cli("archive", "add", str(first), "--archive", str(archive), "--settings",
                 str(settings))[0] == 0
    corrected = tmp_path / "corrected"
    corrected.mkdir()
    second = write_csv_log(corrected / "gate_v2.csv", "2026-07-01 07:00:00", 2, 60, 55.0)
    assert cli("archive", "add", str(second), "--archive", str(archive), "--settings",
                 str(settings))[0] == 0
    records = _records(archive)
    assert [r["status"] for r in records] == ["replaced", "stored"]
    assert records[0]["rows_replaced"] == 2 * 1440 and records[0]["files"] == []
    assert _stored_rows(archive) == 2 * 1440  # never duplicated
    levels = {v for p in (archive / "readings").rglob("*.parquet")
              for v in pq.read_table(p).column("LAeq").to_pylist()}
    assert levels == {55.0}


def test_a_longer_log_replaces_only_the_overlap(tmp_path):
    archive = tmp_path / "archive"
    settings = write_settings(tmp_path / "s.toml", "Gate")
    a = write_csv_log(tmp_path / "a.csv", "2026-07-01 07:00:00", 2, 60, 50.0)
    b = write_csv_log(tmp_path / "b.csv", "2026-07-02 07:00:00", 2, 60, 52.0)
    assert cli("archive", "add", str(a), str(b), "--archive", str(archive), "--settings",
                 str(settings))[0] == 0
    records = _records(archive)
    assert [r["status"] for r in records] == ["stored", "stored"]
    assert records[0]["rows"] == 1440 and records[0]["rows_replaced"] == 1440
    assert _stored_rows(archive) == 3 * 1440


def test_a_failed_input_is_recorded_and_the_others_go_on(tmp_path):
    archive = tmp_path / "archive"
    inputs = tmp_path / "in"
    inputs.mkdir()
    settings = write_settings(tmp_path / "s.toml", "Gate")
    (inputs / "broken.xlsx").write_bytes(b"this is not a workbook")
    write_csv_log(inputs / "good.csv", "2026-07-01 07:00:00", 1, 60, 50.0)
    code, out, _ = cli("archive", "add", str(inputs), "--archive", str(archive), "--settings",
                       str(settings), "--jobs", "2")
    assert code == 1
    assert "broken.xlsx: not stored (unreadable)" in out
    records = {r["file"]: r for r in _records(archive)}
    assert records["broken.xlsx"]["status"] == "unreadable"
    assert records["broken.xlsx"]["message"]
    assert records["good.csv"]["status"] == "stored" and records["good.csv"]["rows"] == 1440


def test_an_input_without_a_position_is_not_stored(tmp_path):
    archive = tmp_path / "archive"
    log = write_csv_log(tmp_path / "anon.csv", "2026-07-01 07:00:00", 1, 600, 50.0)
    code, out, _ = cli("archive", "add", str(log), "--archive", str(archive))
    assert code == 1 and "names no monitoring position" in out
    assert _records(archive)[0]["status"] == "failed"


def test_a_folder_that_is_not_an_archive_is_refused(tmp_path):
    archive = tmp_path / "archive"
    archive.mkdir()
    (archive / "ingest.json").write_text("{}", encoding="utf-8")
    log = write_csv_log(tmp_path / "a.csv", "2026-07-01 07:00:00", 1, 600, 50.0)
    code, _, err = cli("archive", "add", str(log), "--archive", str(archive))
    assert code == 2 and "not an archive record file" in err


def test_any_position_name_is_a_safe_partition_folder(tmp_path):
    archive = tmp_path / "archive"
    settings = write_settings(tmp_path / "s.toml", "North/Gate 2 ..")
    log = write_csv_log(tmp_path / "n.csv", "2026-07-01 07:00:00", 1, 600, 50.0)
    assert cli("archive", "add", str(log), "--archive", str(archive), "--settings",
               str(settings))[0] == 0
    (record,) = _records(archive)
    assert record["files"][0].startswith("readings/position=North%2FGate%202%20../month=")
    parts = list((archive / "readings").iterdir())
    assert [p.name for p in parts] == ["position=North%2FGate%202%20.."]
    code, _, err = cli("archive", "report", str(archive), "-o", str(tmp_path / "out"),
                       "--settings", str(settings), "--workers", "1", "--quiet")
    assert code == 0, err
    doc = json.loads((tmp_path / "out" / "archive-report.json").read_text(encoding="utf-8"))
    assert [p["position"] for p in doc["positions"]] == ["North/Gate 2 .."]


def test_the_same_content_under_two_names_is_stored_once(tmp_path):
    archive = tmp_path / "archive"
    inputs = tmp_path / "in"
    inputs.mkdir()
    settings = write_settings(tmp_path / "s.toml", "Gate")
    log = write_csv_log(inputs / "a.csv", "2026-07-01 07:00:00", 1, 600, 50.0)
    (inputs / "b.csv").write_bytes(log.read_bytes())
    code, out, _ = cli("archive", "add", str(inputs), "--archive", str(archive), "--settings",
                       str(settings), "--jobs", "2")
    assert code == 0 and "b.csv: already in the archive" in out
    assert [r["file"] for r in _records(archive)] == ["a.csv"]
    assert _stored_rows(archive) == 144
    assert not (archive / ".staging").exists()


def test_a_worker_that_dies_fails_its_input_and_the_run_goes_on(tmp_path, monkeypatch):
    from surveytools.archive import add
    from tests.archive.archive_inputs import dying_prepare

    monkeypatch.setattr(add, "_safe_prepare", dying_prepare)
    archive = tmp_path / "archive"
    inputs = tmp_path / "in"
    inputs.mkdir()
    settings = write_settings(tmp_path / "s.toml", "Gate")
    write_csv_log(inputs / "die.csv", "2026-07-01 07:00:00", 1, 600, 50.0)
    write_csv_log(inputs / "fine.csv", "2026-07-03 07:00:00", 1, 600, 50.0)
    code, out, _ = cli("archive", "add", str(inputs), "--archive", str(archive), "--settings",
                       str(settings), "--jobs", "2")
    assert code == 1
    assert "die.csv: not stored (failed): the process reading it ended unexpectedly" in out
    records = {r["file"]: r["status"] for r in _records(archive)}
    assert records["die.csv"] == "failed"
    # the other input was read by the pool before it broke, or is recorded as failed too
    assert records["fine.csv"] in ("stored", "failed")
    later = write_csv_log(tmp_path / "later.csv", "2026-07-02 07:00:00", 1, 600, 50.0)
    assert cli("archive", "add", str(later), "--archive", str(archive), "--settings",
               str(settings))[0] == 0


def _wind_station(path: Path) -> Path:
    # Hourly station rows (the settings' clock, as any CSV) from 07:00 for a day; wind
    # 8 m/s, above the default 5 m/s limit, in the rows of 10:00 and 11:00.
    path.write_text("Start,Wind speed (m/s),Rain (mm)\n" + "".join(
        f"2026-07-01 {h:02d}:00,{8.0 if h in (10, 11) else 2.0},0\n" for h in range(7, 24)
    ) + "".join(f"2026-07-02 {h:02d}:00,2.0,0\n" for h in range(0, 8)), encoding="utf-8")
    return path


def _wind_rows(archive: Path) -> list[int]:
    rows = []
    for path in sorted((archive / "readings").rglob("*.parquet")):
        table = pq.read_table(path).to_pydict()
        rows += [row for row, why, valid in zip(table["row"], table["exclusion"],
                                                 table["valid"], strict=True)
                 if why and "wind" in why and not valid]
    return sorted(rows)


def test_a_shared_weather_file_cleans_the_stored_readings_as_run_does(tmp_path, monkeypatch):
    import surveytools.long_log as long_log

    settings = write_settings(tmp_path / "s.toml", "Gate")
    log = write_csv_log(tmp_path / "gate.csv", "2026-07-01 07:00:00", 1, 60, 50.0)
    station = _wind_station(tmp_path / "station.csv")
    # hand count: one-minute readings from 07:00 in rows 2.. (row 1 is the header), so
    # 10:00-11:59 are readings 180-299, rows 182-301: 120 readings excluded for wind
    expected = list(range(182, 302))

    archive = tmp_path / "archive"
    args = ["archive", "add", str(log), "--archive", str(archive), "--settings", str(settings),
            "--weather", str(station)]
    assert cli(*args)[0] == 0
    (record,) = _records(archive)
    assert record["weather_file"] == "station.csv" and len(record["weather_sha256"]) == 64
    assert _wind_rows(archive) == expected
    # run --weather on the same input excludes the same rows
    out = tmp_path / "out"
    code, _, err = cli("run", str(log), "-o", str(out), "--settings", str(settings),
                       "--weather", str(station), "--quiet")
    assert code in (0, 1), err
    doc = json.loads((out / "gate.results.json").read_text(encoding="utf-8"))
    assert [(s["first_row"], s["last_row"]) for s in doc["exclusion_spans"]
            if s["reason"] == "wind"] == [(182, 301)]

    # the same input and weather again: unchanged; without the weather file: stored anew,
    # replacing the rows cleaned with it
    code, text, _ = cli(*args)
    assert code == 0 and "and this weather file (unchanged)" in text
    assert cli(*args[:-2])[0] == 0
    assert [r["status"] for r in _records(archive)] == ["replaced", "stored"]
    assert _wind_rows(archive) == [] and _stored_rows(archive) == 1440

    # a long log stored batch by batch applies it too (batches forced small)
    monkeypatch.setattr(long_log, "STREAM_CSV_BYTES", 1000)
    monkeypatch.setattr(long_log, "BATCH_ROWS", 200)
    streamed = tmp_path / "streamed"
    assert cli("archive", "add", str(log), "--archive", str(streamed), "--settings",
               str(settings), "--weather", str(station))[0] == 0
    assert _wind_rows(streamed) == expected


def test_a_missing_weather_file_is_refused_before_anything_is_stored(tmp_path):
    settings = write_settings(tmp_path / "s.toml", "Gate")
    log = write_csv_log(tmp_path / "gate.csv", "2026-07-01 07:00:00", 1, 60, 50.0)
    code, _, err = cli("archive", "add", str(log), "--archive", str(tmp_path / "archive"),
                       "--settings", str(settings), "--weather", str(tmp_path / "nope.csv"))
    assert code == 2 and "--weather" in err and "no such file" in err
    assert not (tmp_path / "archive" / "ingest.json").exists()
