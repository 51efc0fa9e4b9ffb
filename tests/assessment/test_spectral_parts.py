"""Spectral parts that merge: a long log with band levels assessed in parts (design §10).

The reference is the whole-log path (``assess`` on the whole Survey, checked against
published values in test_spectral.py); here the property is that cutting a log with
one-third-octave band columns into batches and merging the spectral parts changes no
figure of the ``spectral`` section, plus hand-evaluated energy averages. The log is
invented: 10 s readings over three days and a bit in UTC, fifteen band columns, a tone at
100 Hz at night, an exact two-level evening at 1000 Hz, a few incomplete spectra and
implausible LAeq values (excluded).
"""

from __future__ import annotations

import math
from datetime import datetime, timedelta

import numpy as np
import pandas as pd
import pytest

import surveytools.long_log as long_log
from surveytools.assessment.spectral_parts import SpectralParts
from surveytools.indicators.weighting import band_total
from surveytools.pipeline import build_document, read_input
from surveytools.settings import load_settings
from tests.closeness import assert_close

START = datetime(2026, 3, 9, 16, 0, 0)  # UTC, a Monday afternoon
STEP_S = 10
N = (3 * 86400 + 5 * 3600) // STEP_S  # three days and five hours of 10 s readings
#: One-third-octave mid-band frequencies 50 Hz .. 1250 Hz (IEC 61260-1 nominal values).
BANDS_HZ = [50, 63, 80, 100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000, 1250]


def _frame(laeq_offset_db: float, seed: int = 3) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    t = np.arange(N) * STEP_S
    hour = ((t // 3600) + START.hour) % 24
    night = (hour >= 23) | (hour < 7)
    evening = (hour >= 19) & (hour < 23)
    levels = np.round(40.0 + rng.normal(0, 3, (N, len(BANDS_HZ))), 1)
    levels[night, BANDS_HZ.index(100)] += 25.0  # a tone at 100 Hz at night
    # evening: every band at 30.0 dB, 1000 Hz at 50.0 and 60.0 dB in turn (equal times)
    levels[evening] = 30.0
    k1000 = BANDS_HZ.index(1000)
    levels[evening, k1000] = np.where(np.arange(N)[evening] % 2 == 0, 50.0, 60.0)
    a_total = np.asarray(band_total(levels, np.array(BANDS_HZ, float), "A"))
    laeq = np.round(a_total + laeq_offset_db, 1)
    start = [START + timedelta(seconds=int(s)) for s in t]
    frame = pd.DataFrame({"Start": start, "LAeq": laeq})
    for k, hz in enumerate(BANDS_HZ):
        frame[f"LZeq_{hz}Hz"] = levels[:, k]
    day = ~night & ~evening
    frame.loc[np.flatnonzero(day)[[10, 2_000, 9_000]], "LZeq_400Hz"] = np.nan  # incomplete
    frame.loc[np.flatnonzero(night)[[500, 501, 7_000]], "LAeq"] = 150.0  # excluded
    return frame


@pytest.fixture(scope="module")
def case(tmp_path_factory):
    folder = tmp_path_factory.mktemp("bands")
    paths = {}
    for offset in (0.0, 3.0):  # 3 dB: an LAeq that the band levels do not add up to
        paths[offset] = folder / f"mast_s{offset:g}.parquet"
        _frame(offset).to_parquet(paths[offset], index=False)
    settings = folder / "settings.toml"
    settings.write_text('[survey]\nposition = "Mast S"\ntime_zone = "UTC"\nclock = "UTC"\n',
                        encoding="utf-8")
    return paths, load_settings(settings)


def _both(path, settings, monkeypatch, batch_rows):
    whole, _ = build_document(path, settings, read=read_input(path, settings))
    monkeypatch.setattr(long_log, "STREAM_PARQUET_ROWS", 1000)
    monkeypatch.setattr(long_log, "BATCH_ROWS", batch_rows)
    read = read_input(path, settings, long_logs=True)
    assert isinstance(read.raw, long_log.LongLog)
    batches = []
    assess_batch = long_log._assess_batch
    monkeypatch.setattr(long_log, "_assess_batch",
                        lambda *args: batches.append(1) or assess_batch(*args))
    long_log.long_log_sections(read.raw, settings)  # in parts: no fallback to a whole read
    assert len(batches) >= N // batch_rows
    parts, annotations = build_document(path, settings, read=read)
    assert annotations is None
    return whole, parts



@pytest.mark.parametrize(("batch_rows", "offset"), [(2_500, 0.0), (7_000, 3.0)])
def test_band_levels_in_parts_give_the_whole_logs_spectral_section(case, monkeypatch,
                                                                   batch_rows, offset):
    paths, settings = case
    whole, parts = _both(paths[offset], settings, monkeypatch, batch_rows)
    spectral = whole["spectral"]
    assert spectral is not None and spectral["tones"]  # something to compare
    assert spectral["band_check"]["mismatch"] == (offset > 0)
    assert spectral["incomplete_readings"] == 3
    # every reported (rounded) figure is the same; the unrounded energy sums differ at
    # most in the last bits (parts on another reference level are rescaled), far below
    # the 0.05 dB a reported value could move by
    assert parts["spectral"] == spectral
    for key in ("intervals", "days", "overall", "background", "coverage"):
        assert_close(parts[key], whole[key], 1e-9)
    assert parts["finding_counts"] == whole["finding_counts"]
    assert ([(f["code"], f["message"]) for f in parts["findings"]]
            == [(f["code"], f["message"]) for f in whole["findings"]])

    # hand-evaluated: in the evening every band is 30.0 dB and 1000 Hz is 50.0 and 60.0 dB
    # for equal times, so the evening LZeq at 1000 Hz is
    # 10 lg((10^5 + 10^6) / 2) = 10 lg 550000 = 57.4036 dB (JSON: 3 decimals) and 30.0 dB
    # in the other bands
    evening = parts["spectral"]["periods"]["evening"]
    assert evening["LZeq"][BANDS_HZ.index(1000)] == 57.404
    assert evening["LZeq"][BANDS_HZ.index(500)] == 30.0
    assert evening["valid_s"] == (3 * 4 + 2) * 3600.0  # three evenings and 19-21 h
    # the night tone at 100 Hz: 25 dB over its neighbours, above the 15 dB low-band
    # threshold (BS 4142:2014+A1:2019 one-third-octave method)
    assert {"band_hz": 100.0, "period": "night"}.items() <= next(
        t for t in parts["spectral"]["tones"] if t["band_hz"] == 100.0).items()


def _parts(start_ms: int, energy: float, reference_db: float, tonal: bool) -> SpectralParts:
    """One interval's parts: a single band, all time in the day period."""
    return SpectralParts(
        nominal_hz=np.array([1000.0]), reference_db=reference_db,
        period_energy=np.array([[energy], [0.0], [0.0]]),
        period_ms=np.array([1000.0, 0.0, 0.0]),
        tonal_ms=np.array([[1000.0 if tonal else 0.0], [0.0], [0.0]]),
        largest_difference_db=np.array([[6.0 if tonal else 1.0], [-np.inf], [-np.inf]]),
        interval_start_ms=np.array([start_ms]), interval_end_ms=np.array([start_ms + 1000]),
        interval_ms=np.array([1000.0]), interval_la_db=np.array([50.0]),
        interval_difference_db=np.array([0.1]), interval_tonal=np.array([[tonal]]),
        incomplete_readings=1)


def test_parts_add_energies_on_the_higher_reference_and_keep_intervals_in_order():
    # hand-evaluated: 1 s at 60 dB relative to 60 dB is 1000 ms of energy; 1 s at 50 dB
    # relative to 50 dB is 1000 ms, which is 100 ms relative to 60 dB (10^-1); together
    # 1100 ms over 2 s: 60 + 10 lg(1100 / 2000) = 57.40 dB, as 10 lg((10^6 + 10^5) / 2)
    later = _parts(5000, 1000.0, 60.0, tonal=True)
    earlier = _parts(0, 1000.0, 50.0, tonal=False)
    merged = later + earlier
    assert merged.reference_db == 60.0
    assert merged.period_energy[0, 0] == pytest.approx(1100.0, rel=1e-15)
    level = 60.0 + 10 * math.log10(merged.period_energy[0, 0] / merged.period_ms[0])
    assert level == pytest.approx(10 * math.log10((1e6 + 1e5) / 2), abs=1e-12)
    assert merged.interval_start_ms.tolist() == [0, 5000]
    assert merged.interval_tonal[:, 0].tolist() == [False, True]
    assert merged.tonal_ms[0, 0] == 1000.0 and merged.largest_difference_db[0, 0] == 6.0
    assert merged.incomplete_readings == 2
    with pytest.raises(ValueError):
        later + later  # the same interval twice: not disjoint readings


def test_run_of_a_long_log_with_band_levels_writes_a_valid_document_and_spectra_sheet(
        case, tmp_path, monkeypatch):
    from openpyxl import load_workbook

    from surveytools.outputs.results_json import validate_results
    from surveytools.pipeline import run_file

    paths, settings = case
    monkeypatch.setattr(long_log, "STREAM_PARQUET_ROWS", 1000)
    monkeypatch.setattr(long_log, "BATCH_ROWS", 5_000)
    done = []
    sections = long_log.long_log_sections

    def in_parts(*args):
        result = sections(*args)
        done.append(1)  # returned: not fallen back to a whole read
        return result

    monkeypatch.setattr(long_log, "long_log_sections", in_parts)
    run_file(paths[3.0], tmp_path, "mast_s", settings)
    assert done == [1]
    doc = __import__("json").loads((tmp_path / "mast_s.results.json").read_text("utf-8"))
    assert validate_results(doc) == []
    assert doc["spectral"]["band_check"]["mismatch"] is True
    assert "band-total-mismatch" in doc["finding_counts"]
    book = load_workbook(tmp_path / "mast_s.results.xlsx", read_only=True)
    assert "Spectra" in book.sheetnames
