"""``archive add`` of a long log: batch by batch, the same stored rows as the whole read.

The reference is the whole-log path of ``archive add`` (``build_survey`` on the whole
log, the path ``run`` validates with); the property is that storing a long log batch by
batch (:func:`surveytools.long_log.stream_log`, batches forced small here) stores exactly
the same rows, columns and records, and that ``archive report`` on it is the same. The
log is invented: 10 s readings over the end of June 2026 (UTC, so that the month boundary
falls inside a batch), with an hour's gap, implausible levels, empty cells, overloads,
the assessed source running, a duplicate and a row out of time order.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyarrow.parquet as pq
import pytest

import surveytools.long_log as long_log
from surveytools.archive import add
from tests.archive.archive_inputs import cli

FIRST = np.datetime64("2026-06-28T22:00:00", "s")  # UTC
STEP_S = 10
N = 4 * 8640  # four days of 10 s readings
BATCH_ROWS = 5_000  # about 14 h of readings a batch: a cut every half day or so


def _frame(seed: int = 3) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    start = FIRST + np.arange(N) * np.timedelta64(STEP_S, "s")
    laeq = np.round(50.0 + rng.normal(0, 4, N), 1)
    frame = pd.DataFrame({"Start": start, "LAeq": laeq,
                          "LAFmax": np.round(laeq + rng.uniform(1, 9, N), 1),
                          "Overload": np.zeros(N, dtype=bool),
                          "Operating": np.zeros(N, dtype=bool)})
    frame.loc[[700, 16_001], "LAeq"] = 150.0  # implausible: excluded
    frame.loc[[900, 18_001], "LAeq"] = np.nan  # empty cells: excluded
    frame.loc[3_000:3_010, "Overload"] = True
    frame.loc[17_950:18_050, "Operating"] = True  # across 2026-07-01 00:00 UTC (row 18,000)
    frame.loc[18_010, "Overload"] = True  # both: two reasons on one reading
    frame = frame.drop(index=np.arange(20_000, 20_360))  # an hour's gap
    frame = frame.reset_index(drop=True)
    # a duplicate and a row out of time order
    frame = pd.concat([frame.iloc[:9_000], frame.iloc[[8_999]], frame.iloc[9_000:12_000],
                       frame.iloc[12_001:12_005], frame.iloc[[12_000]], frame.iloc[12_005:]],
                      ignore_index=True)
    return frame


@pytest.fixture(scope="module")
def logs(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path, Path]:
    folder = tmp_path_factory.mktemp("long")
    frame = _frame()
    text = frame.assign(Start=pd.Series(frame["Start"]).dt.strftime("%Y-%m-%d %H:%M:%S"),
                        Overload=np.where(frame["Overload"], "yes", "no"),
                        Operating=np.where(frame["Operating"], "yes", "no"))
    csv = folder / "mast_c.csv"
    text.to_csv(csv, index=False, na_rep="")
    parquet = folder / "mast_c.parquet"
    frame.to_parquet(parquet, index=False)
    settings = folder / "settings.toml"
    settings.write_text('[survey]\nposition = "Mast C"\ntime_zone = "Europe/Berlin"\n'
                        'clock = "UTC"\n', encoding="utf-8")
    return csv, parquet, settings


def _add(archive: Path, settings: Path, *paths: Path) -> tuple[int, str]:
    code, out, err = cli("archive", "add", *map(str, paths), "--archive", str(archive),
                         "--settings", str(settings))
    assert not err, err
    return code, out


def _streamed(monkeypatch: pytest.MonkeyPatch) -> dict[str, Any]:
    """Force the batch path with small batches; spy on what each batch writes."""
    monkeypatch.setattr(long_log, "STREAM_CSV_BYTES", 1000)
    monkeypatch.setattr(long_log, "STREAM_PARQUET_ROWS", 1000)
    monkeypatch.setattr(long_log, "BATCH_ROWS", BATCH_ROWS)
    seen: dict[str, Any] = {"batches": [], "streamed": 0}
    write = add._MonthWriters.add
    prepare = add._prepare_streamed

    def spy_write(self: Any, survey: Any) -> None:
        months = add._month_keys(survey.readings["start_ms"].to_numpy(dtype=np.int64))
        seen["batches"].append(sorted(set(months.tolist())))
        write(self, survey)

    def spy_prepare(*args: Any) -> Any:
        prepared = prepare(*args)  # raises NotStreamable when it falls back to the whole read
        seen["streamed"] += 1
        return prepared

    monkeypatch.setattr(add._MonthWriters, "add", spy_write)
    monkeypatch.setattr(add, "_prepare_streamed", spy_prepare)
    return seen


def _stored(archive: Path) -> dict[str, Any]:
    """Every readings file (relative path -> table) and the records without their times."""
    files = {str(p.relative_to(archive)): pq.read_table(p)
             for p in sorted((archive / "readings").rglob("*.parquet"))}
    records = json.loads((archive / "ingest.json").read_text(encoding="utf-8"))["inputs"]
    for record in records:
        record.pop("ingested_at")
    return {"files": files, "records": records}


@pytest.mark.parametrize("which", [0, 1], ids=["csv", "parquet"])
def test_a_long_log_stored_in_batches_is_the_whole_log_stored(logs, tmp_path, monkeypatch,
                                                                which):
    log, settings = logs[which], logs[2]
    assert _add(tmp_path / "whole", settings, log)[0] == 0
    whole = _stored(tmp_path / "whole")
    seen = _streamed(monkeypatch)
    code, out = _add(tmp_path / "parts", settings, log)
    assert code == 0, out
    parts = _stored(tmp_path / "parts")
    assert seen["streamed"] == 1  # stored batch by batch, not read whole after all
    batches = seen["batches"]
    assert len(batches) >= 6
    assert ["2026-06", "2026-07"] in batches  # a month boundary inside a batch
    assert sum(b == ["2026-06"] for b in batches) >= 2  # batch boundaries inside a month
    assert sum(b == ["2026-07"] for b in batches) >= 2
    assert parts["records"] == whole["records"]
    assert parts["files"].keys() == whole["files"].keys()
    for rel, table in whole["files"].items():
        assert parts["files"][rel].equals(table), rel
    # hand-counted: 34,560 readings, an hour (360) left out, a duplicate added; June holds
    # 2026-06-28 22:00 to 2026-07-01 00:00 UTC, 50 h = 18,000 readings, plus the duplicate
    (record,) = parts["records"]
    assert record["rows"] == 34_560 - 360 + 1
    assert record["first"] == "2026-06-28T22:00:00.000Z"
    assert record["last"] == "2026-07-02T22:00:00.000Z"
    june, july = (parts["files"][rel] for rel in sorted(parts["files"]))
    assert june.num_rows == 18_001 and july.num_rows == 34_201 - 18_001
    # the reading at 2026-07-01 00:01:40 (row 18,010 of the invented frame, 180,100 s after
    # the first): overloaded while the source ran, so used for nothing
    at = int(np.datetime64("2026-07-01T00:01:40", "ms").astype(np.int64))
    both = july.filter(july.column("start_ms").to_numpy() == at).to_pylist()
    assert [(r["exclusion"], r["valid"], r["valid_background"]) for r in both] == [
        ("overload; source-operating (background only)", False, False)]
    report_whole = _report(tmp_path / "whole", tmp_path / "out_whole", settings)
    report_parts = _report(tmp_path / "parts", tmp_path / "out_parts", settings)
    assert report_parts == report_whole


def _report(archive: Path, out: Path, settings: Path) -> dict[str, Any]:
    code, stdout, err = cli("archive", "report", str(archive), "-o", str(out), "--settings",
                            str(settings), "--workers", "1", "--quiet")
    assert code == 0, (stdout, err)
    doc = json.loads((out / "archive-report.json").read_text(encoding="utf-8"))
    doc["archive"].pop("location")  # the archive folder's path
    doc.pop("engine")  # how the report ran (memory of its worker)
    assert doc["positions"][0]["days"] and doc["archive"]["rows_stored"] == 34_201
    return doc


def test_a_long_log_that_fails_mid_write_leaves_nothing_and_the_others_go_on(
        logs, tmp_path, monkeypatch):
    csv, parquet, settings = logs
    seen = _streamed(monkeypatch)
    spy_write = add._MonthWriters.add
    calls: dict[int, int] = {}

    def failing(self: Any, survey: Any) -> None:
        spy_write(self, survey)
        calls[id(self)] = calls.get(id(self), 0) + 1
        if len(calls) == 1 and calls[id(self)] == 4:  # the first input's fourth batch:
            assert self.done and self.open  # June is complete and closed, July is open
            raise OSError("no space left on device")

    monkeypatch.setattr(add._MonthWriters, "add", failing)
    archive = tmp_path / "archive"
    code, out = _add(archive, settings, csv, parquet)
    assert code == 1
    assert "mast_c.csv: not stored (failed)" in out
    records = {r["file"]: r for r in
               json.loads((archive / "ingest.json").read_text(encoding="utf-8"))["inputs"]}
    assert records["mast_c.csv"]["status"] == "failed"
    assert records["mast_c.csv"]["files"] == [] and records["mast_c.csv"]["rows"] == 0
    assert records["mast_c.parquet"]["status"] == "stored"
    files = sorted(str(p.relative_to(archive)) for p in archive.rglob("*.parquet"))
    assert files == sorted(records["mast_c.parquet"]["files"])  # nothing of the failed one
    assert not (archive / ".staging").exists()
    assert seen["streamed"] == 1


def test_a_long_log_that_cannot_be_cut_is_stored_whole(logs, tmp_path, monkeypatch):
    # a reading of the first hour logged again at the end: more than an hour out of time
    # order across batches, so the batches cannot be cut exactly (NotStreamable)
    frame = _frame()
    frame = pd.concat([frame, frame.iloc[[10]]], ignore_index=True)
    log = tmp_path / "late.parquet"
    frame.to_parquet(log, index=False)
    settings = logs[2]
    assert _add(tmp_path / "whole", settings, log)[0] == 0
    whole = _stored(tmp_path / "whole")
    seen = _streamed(monkeypatch)
    assert _add(tmp_path / "parts", settings, log)[0] == 0
    parts = _stored(tmp_path / "parts")
    assert seen["streamed"] == 0 and len(seen["batches"]) >= 2  # began, then read whole
    assert parts["records"] == whole["records"]
    assert parts["files"].keys() == whole["files"].keys()
    for rel, table in whole["files"].items():
        assert parts["files"][rel].equals(table), rel
    assert whole["records"][0]["rows"] == 34_560 - 360 + 2


def test_a_long_log_stored_in_batches_is_replaced_by_its_correction(logs, tmp_path,
                                                                    monkeypatch):
    # the Parquet log holds the CSV log's readings: added after it, it replaces every row
    csv, parquet, settings = logs
    seen = _streamed(monkeypatch)
    archive = tmp_path / "archive"
    assert _add(archive, settings, csv, parquet)[0] == 0
    assert seen["streamed"] == 2
    records = _stored(archive)["records"]
    assert [(r["file"], r["status"], r["rows"], r["rows_replaced"]) for r in records] == [
        ("mast_c.csv", "replaced", 0, 34_201), ("mast_c.parquet", "stored", 34_201, 0)]
    files = _stored(archive)["files"]
    assert sorted(files) == sorted(records[1]["files"])
    assert sum(t.num_rows for t in files.values()) == 34_201  # never duplicated


def test_a_long_log_too_long_to_read_whole_is_recorded_with_the_fix(logs, tmp_path,
                                                                      monkeypatch):
    # The same late reading, with the whole-read limit below the log's length: the input
    # is not stored (nothing held whole), its record says why and what to do, as run does.
    frame = _frame()
    frame = pd.concat([frame, frame.iloc[[10]]], ignore_index=True)
    log = tmp_path / "late.parquet"
    frame.to_parquet(log, index=False)
    _streamed(monkeypatch)
    monkeypatch.setattr(long_log, "WHOLE_READ_MAX_ROWS", 10_000)
    code, _ = _add(tmp_path / "parts", logs[2], log)
    assert code == 1
    (record,) = json.loads((tmp_path / "parts" / "ingest.json").read_text(
        encoding="utf-8"))["inputs"]
    assert record["status"] == "unreadable" and record["files"] == []
    assert "[log-too-long-to-read-whole]" in record["message"]
    assert "sort the rows by their time stamps" in record["message"]
