"""Logged LN parts that merge: a long log with a logged LAF90 assessed in parts (design §10).

The reference is the whole-log path (``assess`` on the whole Survey, checked against
published values in test_intervals.py and test_background.py); here the property is that
cutting a log with a logged LAF90 column into batches and merging the parts changes no
interval, overall or background figure, plus hand-evaluated and numpy-evaluated values of
the whole-survey LA90. The log is invented: 10 s readings over three days and a bit in
UTC, LAF90 logged to 0.1 dB with 40 % of the readings at exactly 41.2 dB, and implausible
LAeq values (excluded).
"""

from __future__ import annotations

import math
from datetime import datetime, timedelta

import numpy as np
import pandas as pd
import pytest

import surveytools.long_log as long_log
from surveytools.assessment.logged_parts import LoggedValues
from surveytools.pipeline import build_document, read_input
from surveytools.settings import load_settings
from tests.closeness import assert_close

START = datetime(2026, 5, 4, 9, 0, 0)  # UTC
STEP_S = 10
N = (3 * 86400 + 7 * 3600) // STEP_S  # three days and seven hours of 10 s readings
EXCLUDED = [100, 101, 15_000]  # rows with an implausible LAeq


def _frame(seed: int = 11) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    t = np.arange(N) * STEP_S
    hour = ((t // 3600) + START.hour) % 24
    base = np.where((hour >= 7) & (hour < 23), 58.0, 50.0)
    laeq = np.round(base + rng.normal(0, 2, N), 1)
    laf90 = np.round(38.0 + rng.normal(0, 3, N), 1)
    laf90[rng.random(N) < 0.4] = 41.2
    start = [START + timedelta(seconds=int(s)) for s in t]
    frame = pd.DataFrame({"Start": start, "LAeq": laeq, "LAF90": laf90})
    frame.loc[EXCLUDED, "LAeq"] = 150.0
    return frame


def _settings(folder, method: str):
    path = folder / f"settings_{method}.toml"
    path.write_text('[survey]\nposition = "Mast L"\ntime_zone = "UTC"\nclock = "UTC"\n\n'
                    f'[background]\nmethod = "{method}"\n', encoding="utf-8")
    return load_settings(path)


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    folder = tmp_path_factory.mktemp("logged")
    _frame().to_parquet(folder / "mast_l.parquet", index=False)
    return folder


def _whole(path, settings):
    return build_document(path, settings, read=read_input(path, settings))[0]


def _in_parts(path, settings, monkeypatch, batch_rows):
    monkeypatch.setattr(long_log, "STREAM_PARQUET_ROWS", 1000)
    monkeypatch.setattr(long_log, "BATCH_ROWS", batch_rows)
    read = read_input(path, settings, long_logs=True)
    assert isinstance(read.raw, long_log.LongLog)
    return read



@pytest.mark.parametrize(("method", "batch_rows"), [("mode", 3_000), ("median", 8_000)])
def test_logged_laf90_in_parts_gives_the_whole_logs_figures(folder, monkeypatch, method,
                                                            batch_rows):
    path = folder / "mast_l.parquet"
    settings = _settings(folder, method)
    whole = _whole(path, settings)
    read = _in_parts(path, settings, monkeypatch, batch_rows)
    long_log.long_log_sections(read.raw, settings)  # in parts: no fallback to a whole read
    parts, _ = build_document(path, settings, read=read)
    assert whole["intervals_basis"] == {"LA10": "samples", "LA50": "samples", "LA90": "logged",
                                       "method": method}
    assert whole["background"]["basis"] == "logged LAF90"
    # logged values are combined per interval whole within one batch and over the survey
    # from counts per value: the same values; LAeq / LA10 from energy sums and 0.1 dB
    # steps differ only in the last bits of the unrounded values
    assert parts["intervals_basis"] == whole["intervals_basis"]
    assert parts["overall"] == whole["overall"]
    assert parts["background"] == whole["background"]
    assert_close(parts["intervals"], whole["intervals"], 1e-9)
    assert_close(parts["days"], whole["days"], 1e-9)

    valid = np.setdiff1d(np.arange(N), EXCLUDED)
    laf90 = _frame()["LAF90"].to_numpy()[valid]
    if method == "mode":
        # hand-evaluated: 40 % of the readings log 41.2 dB (41 dB to the whole decibel);
        # the others spread as 38 +- 3 dB over some fifteen whole decibels, none near 40 %
        assert parts["overall"]["LA90"] == 41.0
    else:
        assert parts["overall"]["LA90"] == float(np.median(laf90))  # numpy reference


def _assert_read_whole(path, settings, monkeypatch):
    """The log cannot be cut into parts, and run's fallback gives the whole-log figures."""
    whole = _whole(path, settings)
    read = _in_parts(path, settings, monkeypatch, 3_000)
    with pytest.raises(long_log.NotStreamable):
        long_log.long_log_sections(read.raw, settings)
    fallback, _ = build_document(path, settings, read=read)
    for key in ("overall", "intervals", "background"):
        assert fallback[key] == whole[key], key


def test_the_mean_of_logged_values_is_read_whole(folder, monkeypatch):
    path = folder / "mast_l.parquet"
    settings = _settings(folder, "mean")
    _assert_read_whole(path, settings, monkeypatch)


def test_the_mean_of_a_log_too_long_to_read_whole_is_refused_with_the_fix(folder,
                                                                          monkeypatch):
    # Above the whole-read limit the fallback would hold the whole log: the input is
    # refused instead, saying which setting prevents the parts and what to do.
    path = folder / "mast_l.parquet"
    settings = _settings(folder, "mean")
    read = _in_parts(path, settings, monkeypatch, 3_000)
    monkeypatch.setattr(long_log, "WHOLE_READ_MAX_ROWS", 10_000)
    doc, _ = build_document(path, settings, read=read)
    assert doc["status"] == "unreadable"
    (finding,) = doc["findings"]
    assert finding["code"] == "log-too-long-to-read-whole"
    assert 'method = "mean"' in finding["message"]
    assert 'choose method "median" or "mode"' in finding["message"]


def test_a_batch_without_logged_values_is_read_whole(folder, monkeypatch):
    # a day without LAF90 values: its batches would give LN from the samples, the whole
    # log gives no LN there (its LAF90 column is logged); the log is read whole
    frame = _frame()
    frame.loc[10_000:19_000, "LAF90"] = np.nan
    path = folder / "mast_m.parquet"
    frame.to_parquet(path, index=False)
    settings = _settings(folder, "median")
    _assert_read_whole(path, settings, monkeypatch)


def test_counts_per_value_merge_and_combine_as_the_values_themselves():
    # hand-evaluated: {40.1, 40.1, 40.4} + {40.4, 41.6} = 40.1 40.1 40.4 40.4 41.6:
    # median (3rd of 5) 40.4; whole decibels (half up) 40 40 40 40 42: mode 40
    a = LoggedValues(np.array([40.1, 40.4]), np.array([2, 1]))
    b = LoggedValues(np.array([40.4, 41.6]), np.array([1, 1]))
    merged = a + b
    assert merged.values_db.tolist() == [40.1, 40.4, 41.6]
    assert merged.counts.tolist() == [2, 2, 1]
    assert merged.combined("median") == 40.4
    assert merged.combined("mode") == 40.0
    # + 41.5 and 41.6 (both 42 dB to the whole decibel): 7 values, median (4th) 40.4;
    # 40 dB four times, 42 dB three times: mode 40
    more = merged + LoggedValues(np.array([41.5, 41.6]), np.array([1, 1]))
    assert more.combined("median") == 40.4
    assert more.combined("mode") == 40.0
    # + 42.0: 8 values, median of the 4th and 5th (40.4 + 41.5) / 2 = 40.95; 40 dB and
    # 42 dB four times each: the lower, 40 (the lowest of equally frequent values)
    tie = more + LoggedValues(np.array([42.0]), np.array([1]))
    assert tie.combined("median") == pytest.approx(40.95, abs=1e-12)
    assert tie.combined("mode") == 40.0
    assert math.isnan(LoggedValues(np.zeros(0), np.zeros(0, np.int64)).combined("mode"))
    with pytest.raises(ValueError):
        merged.combined("mean")
