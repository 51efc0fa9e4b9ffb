"""A long CSV or Parquet log assessed in parts gives the whole-log results (design §10).

The reference is the whole-log path (``assess`` on the whole Survey), checked against
published values in its own tests; here the property is that cutting the log into
batches and merging the partial results changes no figure: days, survey average,
overall LAeq, reporting intervals and the findings' rows. The log is invented: 1 s
readings over the October 2026 change from summer time in Europe/London (the clocks go
back at 02:00 BST on Sunday 25 October 2026, from memory: the last Sunday of October),
with a gap, level exclusions, a duplicate and an overlapping row near batch boundaries.
"""

from __future__ import annotations

from datetime import datetime, timedelta

import numpy as np
import pandas as pd
import pytest

import surveytools.long_log as long_log
from surveytools.pipeline import build_document, check_file, read_input
from surveytools.settings import load_settings
from tests.closeness import assert_close

START = datetime(2026, 10, 23, 21, 0, 0)  # UTC
N = 4 * 86400 + 3600  # a little over four days of 1 s readings


def _log(n: int = N, seed: int = 7) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    t = np.arange(n)
    hour = ((t // 3600) + 21) % 24
    base = np.where((hour >= 7) & (hour < 23), 55.0, 42.0)
    laeq = np.round(base + rng.normal(0, 4, n), 1)
    lafmax = np.round(laeq + rng.uniform(1, 12, n), 1)
    lafmin = np.round(laeq - rng.uniform(0.5, 5, n), 1)
    start = [START + timedelta(seconds=int(s)) for s in t]
    frame = pd.DataFrame({"Start": start, "LAeq": laeq, "LAFmax": lafmax, "LAFmin": lafmin})
    frame = frame.drop(index=np.arange(100_000, 103_600))  # an hour's gap
    frame.loc[[5_000, 5_001, 60_123], "LAeq"] = 150.0  # implausible: excluded
    frame = frame.reset_index(drop=True)
    # a duplicate and an out-of-order row right at batch boundaries of 50,000 rows
    dup = frame.iloc[[49_999]]
    late = frame.iloc[[99_990]]
    frame = pd.concat([frame.iloc[:50_000], dup, frame.iloc[50_000:99_989],
                       frame.iloc[99_991:100_003], late, frame.iloc[100_003:]],
                      ignore_index=True)
    return frame


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    folder = tmp_path_factory.mktemp("long")
    frame = _log()
    csv = folder / "mast_b.csv"
    text = frame.assign(Start=frame["Start"].dt.strftime("%Y-%m-%d %H:%M:%S"))
    text.to_csv(csv, index=False)
    parquet = folder / "mast_b.parquet"
    frame.to_parquet(parquet, index=False)
    settings = folder / "settings.toml"
    settings.write_text('[survey]\nposition = "Mast B"\ntime_zone = "Europe/London"\n'
                        'clock = "UTC"\n\n'
                        '[[criteria]]\nname = "Night"\nindicator = "Lnight"\nlimit_db = 42.0\n\n'
                        '[[criteria]]\nname = "Hourly"\nindicator = "LAeq"\ninterval = "1h"\n'
                        'limit_db = 56.0\n\n'
                        '[[criteria]]\nname = "Quiet"\nindicator = "LA90"\nperiod = "night"\n'
                        'limit_db = 40.0\n', encoding="utf-8")
    return csv, parquet, load_settings(settings)


def _both(path, settings, monkeypatch, batch_rows=50_000):
    whole, _ = build_document(path, settings, read=read_input(path, settings))
    monkeypatch.setattr(long_log, "STREAM_CSV_BYTES", 1000)
    monkeypatch.setattr(long_log, "STREAM_PARQUET_ROWS", 1000)
    monkeypatch.setattr(long_log, "BATCH_ROWS", batch_rows)
    read = read_input(path, settings, long_logs=True)
    assert isinstance(read.raw, long_log.LongLog)
    long_log.stream_log(read.raw, settings, assess=False)  # no fallback to the whole read
    parts, annotations = build_document(path, settings, read=read)
    assert annotations is None
    return whole, parts


@pytest.mark.parametrize("which", [0, 1])
def test_parts_give_the_whole_log_results(files, monkeypatch, which):
    path, settings = files[which], files[2]
    whole, parts = _both(path, settings, monkeypatch)
    assert [c["failed"] for c in whole["criteria"]] != [0, 0, 0]  # something to compare
    for key in ("days", "survey_average", "intervals", "coverage", "exclusion_spans",
                "unplaced", "criteria", "background", "assessments"):
        # unrounded levels differ only in the last bits (energy sums on another
        # reference level); every reported (rounded) value is the same
        assert_close(parts[key], whole[key], 1e-9)
    assert_close(parts["overall"], whole["overall"], 0.011)  # LN from 0.1 dB steps
    assert parts["finding_counts"] == whole["finding_counts"]
    assert ([(f["code"], f["row"]) for f in parts["findings"]]
            == [(f["code"], f["row"]) for f in whole["findings"]])


def test_check_in_batches_gives_the_whole_logs_findings(files, monkeypatch):
    path, settings = files[1], files[2]
    whole = check_file(path, settings, read=read_input(path, settings))
    monkeypatch.setattr(long_log, "STREAM_PARQUET_ROWS", 1000)
    monkeypatch.setattr(long_log, "BATCH_ROWS", 50_000)
    read = read_input(path, settings, long_logs=True)
    assert isinstance(read.raw, long_log.LongLog)
    got = check_file(path, settings, read=read)
    assert got.status == whole.status
    assert got.findings == whole.findings


def _late_row_log(path):
    """Three days at 1 s with one row 15,000 s (over 4 h) late in the file: it lands in
    the next batch of 50,000 rows, beyond CUT_LOOKBACK_MS before the first batch's last
    reading."""
    frame = _log(3 * 86400)
    frame = pd.concat([frame.iloc[:40_000], frame.iloc[40_001:55_000], frame.iloc[[40_000]],
                       frame.iloc[55_000:]], ignore_index=True)
    frame.to_parquet(path, index=False)
    return path


def test_rows_far_out_of_order_fall_back_to_the_whole_read(tmp_path, files, monkeypatch):
    settings = files[2]
    path = _late_row_log(tmp_path / "mast_c.parquet")
    monkeypatch.setattr(long_log, "BATCH_ROWS", 50_000)
    read = read_input(path, settings)
    with pytest.raises(long_log.NotStreamable):
        long_log.stream_log(long_log.LongLog(path, read.source), settings)
    whole, _ = build_document(path, settings, read=read)
    monkeypatch.setattr(long_log, "STREAM_PARQUET_ROWS", 1000)
    fallback, _ = build_document(path, settings)  # streamed first, then read whole
    for key in ("days", "intervals", "overall", "exclusion_spans", "findings"):
        assert fallback[key] == whole[key], key


def test_a_reading_straddling_a_boundary_is_never_cut_apart():
    # hand-evaluated: boundaries 0, 10, 20, 30 s; readings [0, 12) and [12, 25) straddle
    # 10 and 20; the latest free boundary at least CUT_LOOKBACK_MS before the last start
    # is none here (starts end at 12 s), so nothing is cut.
    grid = np.array([0, 10_000, 20_000, 30_000], dtype=np.int64)
    start = np.array([0, 12_000], dtype=np.int64)
    end = np.array([12_000, 25_000], dtype=np.int64)
    assert long_log._choose_cut(grid, start, end) is None
    hour = long_log.CUT_LOOKBACK_MS
    grid = np.arange(0, 4 * hour + 1, 600_000, dtype=np.int64)  # 10 min steps
    start = np.array([0, 590_000, 1_300_000, 3 * hour], dtype=np.int64)
    end = start + np.array([1000, 20_000, 1000, 1000])  # the second straddles 600,000
    # free boundaries above the first start and at most 3 h - 1 h = 2 h: 1.2e6 ... 7.2e6
    assert long_log._choose_cut(grid, start, end) == 2 * hour
    # with the last start at 1 h 10 min the only boundary allowed is 600,000: straddled
    start[3] = hour + 600_000
    assert long_log._choose_cut(grid, start, start + 1000 + (start == 590_000) * 19_000) is None


def test_csv_blank_lines_and_a_semicolon_delimiter_as_the_whole_read(tmp_path, files,
                                                                      monkeypatch):
    settings = files[2]
    frame = _log(2 * 86400)
    text = frame.assign(Start=frame["Start"].dt.strftime("%Y-%m-%d %H:%M:%S"))
    body = text.to_csv(index=False, sep=";").splitlines()
    body.insert(70_000, ";;;")  # a blank row between readings: reported, as whole
    path = tmp_path / "mast_d.csv"
    path.write_text("Logger export\n" + "\n".join(body) + "\n\n\n", encoding="utf-8")
    whole, parts = _both(path, settings, monkeypatch)
    assert parts["finding_counts"] == whole["finding_counts"]
    assert "row-empty" in whole["finding_counts"]
    assert ([(f["code"], f["row"]) for f in parts["findings"]]
            == [(f["code"], f["row"]) for f in whole["findings"]])
    assert_close(parts["days"], whole["days"], 1e-9)
    assert_close(parts["intervals"], whole["intervals"], 1e-9)


def test_findings_beyond_the_cap_are_counted_once_across_batches(tmp_path, files,
                                                                 monkeypatch):
    from surveytools.validation.findings import DEFAULT_MAX_PER_CODE

    settings = files[2]
    frame = _log(2 * 86400)
    bad = np.arange(1000, 168_000, 557)  # implausible levels spread over every batch
    assert bad.size > DEFAULT_MAX_PER_CODE
    frame.loc[bad, "LAeq"] = 151.0
    path = tmp_path / "mast_e.parquet"
    frame.to_parquet(path, index=False)
    whole, parts = _both(path, settings, monkeypatch, batch_rows=20_000)
    assert parts["finding_counts"] == whole["finding_counts"]
    assert whole["finding_counts"]["level-out-of-range"] == bad.size + 3  # 3 in _log
    assert ([(f["code"], f["row"], f["message"]) for f in parts["findings"]]
            == [(f["code"], f["row"], f["message"]) for f in whole["findings"]])
    assert_close(parts["exclusion_spans"], whole["exclusion_spans"], 1e-9)
    assert_close(parts["coverage"], whole["coverage"], 1e-9)


def test_run_of_a_long_log_writes_a_valid_document_and_workbook(tmp_path, files,
                                                                monkeypatch):
    from openpyxl import load_workbook

    from surveytools.outputs.results_json import validate_results
    from surveytools.pipeline import run_file

    path, settings = files[1], files[2]
    monkeypatch.setattr(long_log, "STREAM_PARQUET_ROWS", 1000)
    monkeypatch.setattr(long_log, "BATCH_ROWS", 100_000)
    outcome = run_file(path, tmp_path, "mast_b", settings)
    assert outcome.status == "errors"  # the duplicated row is an error finding
    doc = __import__("json").loads((tmp_path / "mast_b.results.json").read_text("utf-8"))
    assert validate_results(doc) == []
    assert doc["background"]["night"]["LA90"] is not None
    book = load_workbook(tmp_path / "mast_b.results.xlsx", read_only=True)
    assert {"Days", "Intervals", "Background", "Exclusions"} <= set(book.sheetnames)
    assert book["Intervals"].max_row > len(doc["intervals"])  # one row each, plus headers


def test_a_log_too_long_to_read_whole_and_out_of_order_is_refused(tmp_path, files,
                                                                  monkeypatch):
    # The same far-out-of-order log as above, now above the whole-read limit: instead of
    # reading it whole (unbounded memory), the input is refused, naming the late row
    # (40,000 + 14,999 data rows come before it, the header is row 1: row 55,001) and
    # the fix; run and check say the same.
    settings = files[2]
    path = _late_row_log(tmp_path / "mast_d.parquet")
    monkeypatch.setattr(long_log, "BATCH_ROWS", 50_000)
    monkeypatch.setattr(long_log, "STREAM_PARQUET_ROWS", 1000)
    monkeypatch.setattr(long_log, "WHOLE_READ_MAX_ROWS", 100_000)
    doc, _ = build_document(path, settings)
    assert doc["status"] == "unreadable"
    (finding,) = doc["findings"]
    assert finding["code"] == "log-too-long-to-read-whole"
    assert "row 55001 " in finding["message"] and "sort the rows" in finding["message"]
    checked = check_file(path, settings, read=read_input(path, settings, long_logs=True))
    assert checked.status == "unreadable"
    assert [f["code"] for f in checked.findings] == ["log-too-long-to-read-whole"]


@pytest.mark.parametrize("batch_rows", [3_000, 6_250, 9_000, 10_800, 12_000])
def test_a_batch_cut_in_the_repeated_autumn_hour_gives_the_whole_log_results(
        tmp_path, monkeypatch, batch_rows):
    # A meter on local time (Europe/Berlin) at 1 s across 25 Oct 2026, when the clocks go
    # back at 03:00 CEST to 02:00 CET (Directive 2000/84/EC: 01:00 UTC): the hour 02:00-
    # 02:59 is written twice, and the row order says which pass a reading is in. A batch
    # that ends in the first pass leaves its readings unresolved, beyond the 200 findings
    # stored per code (they were still counted as timestamp-ambiguous: 1,000 or 3,400
    # warnings the whole log does not have); a batch that starts in the second pass saw
    # no first pass, placed its readings an hour early and refused the log as out of time
    # order (3,000, 6,250, 9,000 rows) — a long log was then refused outright.
    utc = np.datetime64("2026-10-24T22:00:00", "s") + np.arange(6 * 3600)
    switch = np.datetime64("2026-10-25T01:00:00", "s")
    local = np.where(utc < switch, utc + np.timedelta64(2, "h"), utc + np.timedelta64(1, "h"))
    levels = np.round(45 + np.random.default_rng(2).normal(0, 3, utc.size), 1)
    path = tmp_path / "autumn.csv"
    pd.DataFrame({"Start": pd.Series(local).dt.strftime("%Y-%m-%d %H:%M:%S"),
                  "Duration (s)": 1, "LAeq": levels}).to_csv(path, index=False)
    settings_path = tmp_path / "settings.toml"
    settings_path.write_text('[survey]\nposition = "Mast"\ntime_zone = "Europe/Berlin"\n',
                             encoding="utf-8")
    settings = load_settings(settings_path)
    whole, parts = _both(path, settings, monkeypatch, batch_rows=batch_rows)
    # hand-evaluated: 6 h of readings from 00:00 CEST (22:00 UTC) to 06:00 UTC = 07:00 CET
    assert whole["coverage"]["first"] == "2026-10-25T00:00:00+02:00"
    assert whole["coverage"]["measured_s"] == 6 * 3600.0
    assert "timestamp-ambiguous" not in whole["finding_counts"]
    assert parts["finding_counts"] == whole["finding_counts"]
    assert parts["coverage"] == whole["coverage"]
    assert_close(parts["intervals"], whole["intervals"], 1e-9)
