"""Unit tests of the vectorised checks in surveytools.validation.checks."""

import numpy as np
import pandas as pd
from hypothesis import given, settings
from hypothesis import strategies as st
from validation_builders import bool_col, num_col, text_col

from surveytools.settings import Calibration
from surveytools.validation import checks as ck
from surveytools.validation.findings import FindingCollector

WHERE = ck.Where("Readings", 2)

intervals = st.lists(st.tuples(st.integers(0, 1000), st.integers(1, 200)), max_size=30)


@settings(max_examples=200, deadline=None)
@given(readings=intervals, spans=intervals)
def test_overlaps_any_matches_brute_force(readings, spans):
    s = np.array([a for a, _ in readings], np.int64)
    e = np.array([a + d for a, d in readings], np.int64)
    fs = np.array([a for a, _ in spans], np.int64)
    fe = np.array([a + d for a, d in spans], np.int64)
    got = ck.overlaps_any(s, e, fs, fe)
    # reference: the half-open interval overlap definition, evaluated pairwise by broadcasting
    ref = ((s[:, None] < fe[None, :]) & (e[:, None] > fs[None, :])).any(axis=1) \
        if fs.size else np.zeros(s.size, bool)
    assert got.tolist() == ref.tolist()


def test_weather_masks_hand_evaluated():
    # weather intervals [0,10) [10,20) [20,30); readings [5,8) [12,15) [22,25) [31,33) [45,50)
    s = np.array([5, 12, 22, 31, 45], np.int64)
    e = np.array([8, 15, 25, 33, 50], np.int64)
    ws = np.array([0, 10, 20], np.int64)
    we = np.array([10, 20, 30], np.int64)
    wind, rain, settle = ck.weather_masks(s, e, ws, we, np.array([6.0, 1.0, np.nan]),
                                          np.array([0.0, 0.5, 0.0]), 5.0, 0.0, 0.015)
    # wind 6 > 5 in [0,10) -> reading 0; rain 0.5 > 0 in [10,20) -> reading 1;
    # settle 0.015 s = 15 ms after 20 -> [20, 35) -> readings 2 and 3
    assert wind.tolist() == [True, False, False, False, False]
    assert rain.tolist() == [False, True, False, False, False]
    assert settle.tolist() == [False, False, True, True, False]


def test_read_flags_spellings():
    c = FindingCollector()
    col = text_col("Overload", "F", ["yes", "No", "1", "0", "x", "TRUE", "false", "", None, "?"])
    out = ck.read_flags(col, 10, WHERE, c)
    assert out.tolist()[:7] == [True, False, True, False, True, True, False]
    assert out.isna().tolist()[7:] == [True, True, True]
    assert [(f.row, f.column, f.code) for f in c.findings()] == [(11, "F", "flag-not-yes-no")]
    b = ck.read_flags(bool_col("Operating", "G", [True, None, False]), 3, WHERE, c)
    assert b.tolist()[0] is True and b.isna().tolist() == [False, True, False]
    n = ck.read_flags(num_col("Operating", "G", [1.0, 0.0, 2.0]), 3, WHERE, c)
    assert n.tolist()[:2] == [True, False] and bool(pd.isna(n.iloc[2]))


def test_read_numbers_decimal_comma_message():
    c = FindingCollector()
    col = num_col("LAeq", "B", [50.0, None], text_cells={1: "55,2"})
    ck.read_numbers(col, 2, WHERE, c, what="a level", unit="dB", code_prefix="level")
    (f,) = c.findings()
    assert (f.row, f.column, f.code) == (3, "B", "level-not-a-number")
    assert "'55,2' is not a level in dB" in f.message and "decimal comma" in f.message
    assert "write 55.2" in f.message


def test_calibration_checks():
    rules = Calibration()
    loc = {"calibration_after_db": ("Survey", 8, "B"), "calibrator_level_db": ("Survey", 9, "B")}
    c = FindingCollector()
    # ISO 1996-2 (from memory): drift limit 0.5 dB; 0.6 dB exceeds it
    assert ck.check_calibration({"calibration_before_db": 114.0, "calibration_after_db": 113.4,
                                 "calibrator_level_db": 114.0}, loc, rules, c)
    assert [(f.row, f.code) for f in c.findings()] == [(8, "calibration-drift")]
    c = FindingCollector()
    assert not ck.check_calibration({"calibration_before_db": 94.0, "calibration_after_db": 94.4,
                                     "calibrator_level_db": 100.0}, loc, rules, c)
    # 100 dB is 4 dB from 104 and 6 dB from 94: beyond the 0.5 dB tolerance (common practice)
    assert [(f.row, f.code) for f in c.findings()] == [(9, "calibrator-level-unusual")]


def test_messages_are_built_only_for_the_findings_that_are_kept():
    # Many text cells (under half of the column, so not one column-wide finding): every
    # cell is counted, only the first max_per_code are listed, and the per-row messages
    # handed over need cover only those.
    from surveytools.validation.findings import FindingCollector

    c = FindingCollector(max_per_code=3)
    col = text_col("LAeq", "B", ["n/a", "50", "51"] * 333 + ["52"])
    ck.read_numbers(col, 1000, WHERE, c, what="a level", unit="dB", code_prefix="level")
    assert c.counts["level-not-a-number"] == 333
    assert c.room("level-not-a-number") == 0
    kept = [f for f in c.findings() if f.code == "level-not-a-number"]
    assert [f.row for f in kept] == [WHERE.first_row, WHERE.first_row + 3, WHERE.first_row + 6]
