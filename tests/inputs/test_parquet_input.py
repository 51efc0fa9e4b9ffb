"""Parquet readings logs: read like a CSV log, refused with a clear code when unusable."""

from __future__ import annotations

import json
from datetime import UTC, datetime
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from surveytools.errors import WorkbookError
from surveytools.inputs import parquet_input
from surveytools.inputs.parquet_input import read_parquet_table
from surveytools.pipeline import build_document
from surveytools.settings import settings_from_mapping

SETTINGS = settings_from_mapping({"survey": {"position": "Yard", "time_zone": "Europe/Berlin"}})


def _log(n: int = 2880) -> dict[str, np.ndarray]:
    start = np.datetime64("2026-07-01T07:00:00", "ms") + np.arange(n) * np.timedelta64(60, "s")
    rng = np.random.default_rng(7)
    laeq = np.round(rng.uniform(40.0, 70.0, n), 1)
    return {"Start": start, "Duration (s)": np.full(n, 60.0), "LAeq": laeq,
            "LAFmax": laeq + 8.0}


def _write_parquet(path: Path, data: dict[str, object]) -> Path:
    pq.write_table(pa.table(data), path)
    return path


def _write_csv(path: Path, data: dict[str, np.ndarray]) -> Path:
    lines = ["Start,Duration (s),LAeq,LAFmax"]
    stamps = np.char.replace(data["Start"].astype("datetime64[s]").astype(str), "T", " ")
    for t, d, a, m in zip(stamps.tolist(), data["Duration (s)"].tolist(),
                          data["LAeq"].tolist(), data["LAFmax"].tolist(), strict=True):
        lines.append(f"{t},{d:g},{a:.1f},{m:.1f}")
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def _figures(doc: dict) -> dict:
    return {k: doc[k] for k in ("overall", "days", "survey_average", "intervals", "coverage")}


def test_parquet_log_gives_the_figures_of_the_same_log_as_csv(tmp_path):
    # The CSV reader is the reference: the same readings in both formats.
    data = _log()
    from_parquet, _ = build_document(_write_parquet(tmp_path / "yard.parquet", data), SETTINGS)
    from_csv, _ = build_document(_write_csv(tmp_path / "yard.csv", data), SETTINGS)
    # both warn only that calibration and survey facts come from the settings
    assert from_parquet["status"] == from_csv["status"] == "warnings"
    assert from_parquet["findings"] == from_csv["findings"]
    assert _figures(from_parquet) == _figures(from_csv)
    assert from_parquet["survey"]["position"] == "Yard"


def test_constant_log_by_hand(tmp_path):
    # Hand-evaluated: a constant 52.0 dB has LAeq = L10 = L90 = 52.0 dB.
    data = _log(600)
    data["LAeq"] = np.full(600, 52.0)
    doc, _ = build_document(_write_parquet(tmp_path / "flat.parquet", data), SETTINGS)
    assert doc["overall"]["LAeq"] == 52.0
    assert doc["overall"]["LA90"] == 52.0


def test_text_time_stamps_and_findings_are_located(tmp_path):
    data = _log(10)
    stamps = np.char.replace(data["Start"].astype("datetime64[s]").astype(str), "T", " ")
    text = stamps.astype(object)
    text[3] = "yesterday"
    raw = read_parquet_table(_write_parquet(tmp_path / "t.parquet",
                                            {**data, "Start": pa.array(text.tolist())}),
                             SETTINGS)
    assert raw.readings is not None and raw.readings.sheet == "t"
    start = raw.readings.columns[0]
    assert (start.header, start.letter, start.kind) == ("Start", "A", "datetime")
    assert start.text_cells == {3: "yesterday"}
    doc, _ = build_document(tmp_path / "t.parquet", SETTINGS)
    located = [(f["sheet"], f["row"], f["column"]) for f in doc["findings"]
               if f["severity"] == "error"]
    assert ("t", 5, "A") in located  # row 2 is the first reading, as in a CSV file


@pytest.mark.parametrize("zone", ["UTC", "Asia/Tokyo"])
@pytest.mark.parametrize("clock", ["local", "UTC", "UTC+05:00"])
def test_zoned_time_stamps_are_instants_whatever_the_clock(tmp_path, monkeypatch, zone,
                                                            clock):
    # A timestamp with a time zone names instants (Apache Parquet logical type TIMESTAMP,
    # isAdjustedToUTC = true): 07:00 UTC stays 07:00 UTC whichever clock the settings give
    # (as ISO text with an offset does) and whichever zone the column is labelled with.
    from surveytools import long_log

    data = _log(120)
    zoned = pa.array(data["Start"]).cast(pa.timestamp("ms", tz=zone))
    path = _write_parquet(tmp_path / "z.parquet", {**data, "Start": zoned})
    settings = settings_from_mapping({"survey": {"position": "Yard", "clock": clock,
                                                 "time_zone": "Europe/Berlin"}})
    doc, _ = build_document(path, settings)
    first = datetime.fromisoformat(doc["coverage"]["first"])
    assert first == datetime(2026, 7, 1, 7, 0, tzinfo=UTC)
    # and the same through the batch reader of long logs
    monkeypatch.setattr(long_log, "STREAM_PARQUET_ROWS", 50)
    monkeypatch.setattr(long_log, "BATCH_ROWS", 60)
    batched, _ = build_document(path, settings)
    assert datetime.fromisoformat(batched["coverage"]["first"]) == first
    assert batched["overall"]["LAeq"] == doc["overall"]["LAeq"]


def test_unusable_files_are_refused_with_a_code(tmp_path, monkeypatch):
    damaged = tmp_path / "damaged.parquet"
    damaged.write_bytes(b"PAR1" + b"\0" * 64)
    with pytest.raises(WorkbookError) as info:
        read_parquet_table(damaged, SETTINGS)
    assert info.value.code == "parquet-unreadable"
    path = _write_parquet(tmp_path / "big.parquet", _log(100))
    monkeypatch.setattr(parquet_input, "MAX_PARQUET_ROWS", 99)
    with pytest.raises(WorkbookError) as info:
        read_parquet_table(path, SETTINGS)
    assert "declares 100 rows" in info.value.message
    monkeypatch.setattr(parquet_input, "MAX_PARQUET_ROWS", 10**9)
    monkeypatch.setattr(parquet_input, "MAX_PARQUET_UNCOMPRESSED_BYTES", 100)
    with pytest.raises(WorkbookError) as info:
        read_parquet_table(path, SETTINGS)
    assert "once read" in info.value.message
    nothing = _write_parquet(tmp_path / "other.parquet", {"speed": [1.0, 2.0]})
    raw = read_parquet_table(nothing, SETTINGS)
    assert raw.readings is None and raw.findings[0].code == "header-missing"


def test_run_accepts_parquet_logs(tmp_path):
    import subprocess
    import sys

    _write_parquet(tmp_path / "yard.parquet", _log(1440))
    settings = tmp_path / "s.toml"
    settings.write_text('[survey]\nposition = "Yard"\ntime_zone = "Europe/Berlin"\n',
                        encoding="utf-8")
    proc = subprocess.run([sys.executable, "-m", "surveytools", "run",
                           str(tmp_path / "yard.parquet"), "-o", str(tmp_path / "out"),
                           "--settings", str(settings), "--quiet"],
                          capture_output=True, text=True, timeout=300, check=False)
    assert proc.returncode == 0, proc.stderr
    doc = json.loads((tmp_path / "out" / "yard.results.json").read_text(encoding="utf-8"))
    assert doc["status"] == "warnings" and len(doc["days"]) == 1
