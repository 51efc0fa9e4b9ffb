"""build_survey end to end on RawWorkbooks built by hand: one faulty workbook per finding
code with the exact (sheet, row, column, code) list, exclusions, and the readings contract.

Rows: the header is spreadsheet row 1, so data position i is row i + 2.
"""

import numpy as np
import pandas as pd
import pytest
from validation_builders import (
    bool_col,
    build,
    canon,
    dt_col,
    located,
    minutes,
    num_col,
    readings,
    reasons,
    survey_with,
    table,
    text_col,
)

from surveytools.inputs.raw import RawTable, RawWorkbook
from surveytools.settings import Calibration, ExclusionRules, Settings
from surveytools.validation import build_survey

T0 = "2026-07-03 22:00"


def m(n: int, step_s: float = 60.0) -> list[str]:
    return minutes(T0, n, step_s)


def with_cells(t: RawTable, letter: str, **cells) -> RawTable:
    col = next(c for c in t.columns if c.letter == letter)
    for k, v in cells.items():
        setattr(col, k, v)
    return t


# (id, workbook factory, exact expected findings)
CASES = [
    ("level-not-a-number",
     lambda: build(with_cells(readings(m(3), [50.0, None, 52.0]), "B", text_cells={1: "n/a"})),
     [("Readings", 3, "B", "level-not-a-number")]),
    ("decimal-comma",
     lambda: build(with_cells(readings(m(3), [50.0, None, 52.0]), "B", text_cells={1: "55,2"})),
     [("Readings", 3, "B", "level-not-a-number")]),
    ("cell-error-value",
     lambda: build(with_cells(readings(m(3), [50.0, 51.0, None]), "B",
                              error_cells={2: "#DIV/0!"})),
     [("Readings", 4, "B", "cell-error-value")]),
    ("formula-without-value",
     lambda: build(readings(m(3), [50.0, 51.0, 52.0],
                            num_col("LAFmax", "C", [60.0, None, 61.0],
                                    formula_without_value={1}))),
     [("Readings", 3, "C", "formula-without-value")]),
    ("level-not-finite",
     lambda: build(readings(m(3), [50.0, np.inf, 52.0])),
     [("Readings", 3, "B", "level-not-finite")]),
    ("level-out-of-range",
     lambda: build(readings(m(3), [50.0, 51.0, 152.0])),
     [("Readings", 4, "B", "level-out-of-range")]),
    ("level-overload-marker",
     lambda: build(with_cells(readings(m(3), [50.0, None, 52.0]), "B", text_cells={1: "OVL"})),
     [("Readings", 3, "B", "level-overload-marker")]),
    ("level-missing",
     lambda: build(readings(m(3), [50.0, None, 52.0])),
     [("Readings", 3, "B", "level-missing")]),
    ("level-order",
     lambda: build(readings(m(3), [50.0, 51.0, 52.0], num_col("LAF90", "C", [45.0, 51.1, 52.3]))),
     # 51.1 vs 51.0: within 0.05? no (0.1 > 0.05) -> row 3; 52.3 > 52.0 -> row 4
     [("Readings", 3, "B", "level-order"), ("Readings", 4, "B", "level-order")]),
    ("level-order-tolerance",
     # 51.04 vs 51.0 is within the 0.05 dB rounding tolerance (common practice)
     lambda: build(readings(m(2), [50.0, 51.0], num_col("LAF90", "C", [45.0, 51.04]))),
     []),
    ("timestamp-duplicate",
     lambda: build(readings([*m(2), m(2)[1], *m(4)[2:]], [50.0] * 5)),
     [("Readings", 4, "A", "timestamp-duplicate")]),
    ("timestamp-out-of-order",
     lambda: build(readings([m(4)[0], m(4)[2], m(4)[1], m(4)[3]], [50.0] * 4)),
     [("Readings", 4, "A", "timestamp-out-of-order")]),
    ("interval-overlap",
     lambda: build(readings(m(3), [50.0] * 3, num_col("Duration (s)", "C", [120.0, 60.0, 60.0]))),
     # row 2 covers 22:00-22:02, row 3 starts 22:01
     [("Readings", 3, "A", "interval-overlap")]),
    ("gap",
     lambda: build(readings([*m(3), *minutes("2026-07-03 22:06", 2)], [50.0] * 5)),
     [("Readings", 5, "A", "gap")]),
    ("row-empty",
     lambda: build(readings([*m(2), None, *m(4)[2:]], [50.0, 50.0, None, 50.0, 50.0])),
     [("Readings", 4, None, "row-empty")]),
    ("timestamp-missing",
     lambda: build(readings([*m(3), None], [50.0] * 4)),
     [("Readings", 5, "A", "timestamp-missing")]),
    ("timestamp-invalid",
     lambda: build(with_cells(readings([*m(3), None], [50.0] * 4), "A",
                              text_cells={3: "03/07/2026 22:03"})),
     [("Readings", 5, "A", "timestamp-invalid")]),
    ("duration-invalid",
     lambda: build(readings(m(3), [50.0] * 3, num_col("Duration (s)", "C", [60.0, 0.0, -5.0]))),
     [("Readings", 3, "C", "duration-invalid"), ("Readings", 4, "C", "duration-invalid")]),
    ("flag-not-yes-no",
     lambda: build(readings(m(3), [50.0] * 3, text_col("Overload", "C", ["no", "Yes", "maybe"]))),
     [("Readings", 4, "C", "flag-not-yes-no")]),
    ("column-unknown",
     lambda: build(readings(m(2), [50.0] * 2, num_col("Battery (V)", "C", [3.6, 3.6]))),
     [("Readings", 1, "C", "column-unknown")]),
    ("column-duplicate",
     lambda: build(readings(m(2), [50.0] * 2, num_col("LAeq (dB)", "C", [50.0, 50.0]))),
     [("Readings", 1, "C", "column-duplicate")]),
    ("calibration-drift",
     lambda: build(readings(m(2), [50.0] * 2), survey_with(before=94.0, after=94.6)),
     [("Survey", 8, "B", "calibration-drift")]),
    ("calibration-missing",
     lambda: build(readings(m(2), [50.0] * 2), survey_with(after=None)),
     [("Survey", None, None, "calibration-missing")]),
    ("calibrator-level-unusual",
     lambda: build(readings(m(2), [50.0] * 2), survey_with(calibrator=97.0)),
     [("Survey", 9, "B", "calibrator-level-unusual")]),
]


@pytest.mark.parametrize(("factory", "expected"), [c[1:] for c in CASES],
                         ids=[c[0] for c in CASES])
def test_one_fault_one_exact_finding_list(factory, expected):
    s = factory()
    assert canon(located(s)) == canon(expected)
    for f in s.findings:
        assert f.message and f.severity.value in ("error", "warning", "info")


def test_clean_workbook_has_no_findings_and_contract_dtypes():
    s = build(readings(m(4), [50.0, 51.0, 52.0, 53.0], num_col("LAFmax", "C", [60.0] * 4),
                       bool_col("Operating", "D", [True, False, None, True]),
                       text_col("Note", "E", [None, "lorry", " ", None])))
    assert s.findings == [] and s.finding_counts == {}
    r = s.readings
    assert list(r.columns) == ["row", "start_ms", "duration_ms", "offset_s", "LAeq", "LAFmax",
                               "overload", "operating", "note"]
    assert {c: str(t) for c, t in r.dtypes.items()} == {
        "row": "int64", "start_ms": "int64", "duration_ms": "int64", "offset_s": "int32",
        "LAeq": "float64", "LAFmax": "float64", "overload": "bool", "operating": "boolean",
        "note": "object"}
    assert r["operating"].tolist()[:2] == [True, False] and r["operating"].isna().tolist()[2]
    assert r["note"].tolist() == [None, "lorry", None, None]
    assert s.level_columns == {"LAeq": "B", "LAFmax": "C"}
    assert s.metadata["position"] == "MP-1"


def test_unusable_levels_keep_their_row_with_a_reason():
    t = with_cells(readings(m(5), [50.0, None, None, 152.0, 54.0]), "B",
                   text_cells={1: "n/a"}, error_cells={2: "#N/A"})
    s = build(t)
    assert s.readings["row"].tolist() == [2, 3, 4, 5, 6]          # valid rows still present
    assert np.isnan(s.readings["LAeq"].to_numpy()[1:4]).all()
    assert reasons(s) == {"level-invalid": [3, 4], "level-out-of-range": [5]}
    assert s.valid_mask().tolist() == [True, False, False, False, True]


def test_overload_marker_and_flag_column_exclude():
    t = with_cells(readings(m(4), [50.0, None, 52.0, 53.0],
                            text_col("Overload", "C", ["no", "no", "x", "0"])),
                   "B", text_cells={1: "over"})
    s = build(t)
    assert s.readings["overload"].tolist() == [False, True, True, False]
    assert reasons(s) == {"overload": [3, 4]}
    kept = build(t, settings=Settings(exclusions=ExclusionRules(exclude_overloads=False)))
    assert reasons(kept) == {"level-invalid": [3]}   # the marker cell holds no level


def test_duplicate_and_overlap_are_excluded_later_row():
    dup = build(readings([*m(2), m(2)[1], *m(4)[2:]], [50.0] * 5))
    assert reasons(dup) == {"duplicate": [4]}
    assert "row 4 has the same start" in dup.findings[0].message and "row 3" in \
        dup.findings[0].message
    ov = build(readings(m(3), [50.0] * 3, num_col("Duration (s)", "C", [120.0, 60.0, 60.0])))
    assert reasons(ov) == {"overlap": [3]}


def test_out_of_order_rows_are_sorted():
    s = build(readings([m(4)[0], m(4)[2], m(4)[1], m(4)[3]], [50.0, 52.0, 51.0, 53.0]))
    assert s.readings["row"].tolist() == [2, 4, 3, 5]
    assert s.readings["LAeq"].tolist() == [50.0, 51.0, 52.0, 53.0]
    assert np.all(np.diff(s.readings["start_ms"]) > 0)


def test_gap_message_gives_span():
    s = build(readings([*m(3), *minutes("2026-07-03 22:06", 2)], [50.0] * 5))
    # hand-evaluated: last reading before the gap ends 22:03, next starts 22:06 -> 3 min
    assert s.findings[0].message == ("no readings from 2026-07-03 22:03:00+00:00 to "
                                     "2026-07-03 22:06:00+00:00 (3 min without data)")


def test_calibration_drift_limit_and_exclude_policy():
    # ISO 1996-2 drift limit 0.5 dB (from memory): 94.6 - 94.0 = 0.6 dB exceeds it
    warn = build(readings(m(2), [50.0] * 2), survey_with(before=94.0, after=94.6))
    assert "+0.60 dB" in warn.findings[0].message and "0.5 dB" in warn.findings[0].message
    assert reasons(warn) == {}
    # 94.5 - 94.0 = 0.5 dB is at the limit, not above it (hand-evaluated)
    edge = build(readings(m(2), [50.0] * 2), survey_with(before=94.0, after=94.5))
    assert located(edge) == []
    excl = build(readings(m(2), [50.0] * 2), survey_with(before=94.0, after=94.6),
                 Settings(calibration=Calibration(on_excess_drift="exclude")))
    assert reasons(excl) == {"calibration-drift": [2, 3]}


def weather_table(wind, rain, start="2026-07-03 00:00", **cells) -> RawTable:
    n = len(wind)
    return table("Weather", [dt_col("Start", "A", minutes(start, n, 3600)),
                             num_col("Wind speed (m/s)", "B", wind, **cells),
                             num_col("Rain (mm)", "C", rain)])


def test_weather_wind_rain_and_settle():
    # readings every 10 min 00:00-05:50; weather hourly from 00:00
    r = readings(minutes("2026-07-03 00:00", 36, 600), [50.0] * 36)
    w = weather_table([2.0, 7.0, 2.0, 2.0], [0.0, 0.0, 1.2, 0.0])
    s = build(r, weather=w)
    # hand-evaluated: wind 7 > 5 m/s in 01:00-02:00 -> rows 8-13; rain 1.2 > 0 mm in
    # 02:00-03:00 -> rows 14-19; settle 3600 s after 03:00 -> rows 20-25 (03:00-03:50)
    assert reasons(s) == {"wind": list(range(8, 14)), "rain": list(range(14, 20)),
                          "rain-settle": list(range(20, 26))}
    assert located(s) == []
    assert s.weather["duration_ms"].tolist() == [3_600_000] * 4
    shorter = build(r, weather=w, settings=Settings(exclusions=ExclusionRules(rain_settle_s=900)))
    # 900 s settle: 03:00 and 03:10 readings overlap [03:00, 03:15) -> rows 20, 21
    assert reasons(shorter)["rain-settle"] == [20, 21]


def test_weather_straddling_reading_is_excluded():
    # a 15-min reading 00:50-01:05 overlaps the windy hour from 01:00
    r = readings(minutes("2026-07-03 00:50", 2, 900), [50.0] * 2)
    s = build(r, weather=weather_table([2.0, 7.0], [0.0, 0.0]))
    assert reasons(s) == {"wind": [2, 3]}


def test_bad_weather_cells_are_located_on_weather_sheet():
    w = weather_table([2.0, None, -1.0], [0.0, 0.0, 0.0], text_cells={1: "calm"})
    s = build(readings(minutes("2026-07-03 00:00", 3, 3600), [50.0] * 3), weather=w)
    assert canon(located(s)) == canon([("Weather", 3, "B", "weather-not-a-number"),
                                       ("Weather", 4, "B", "weather-out-of-range")])
    assert reasons(s) == {}


def exclusion_table(rows) -> RawTable:
    f, t, why, scope = zip(*rows, strict=True)
    return table("Exclusions", [dt_col("From", "A", f), dt_col("To", "B", t),
                                text_col("Reason", "C", why), text_col("Applies to", "D", scope)])


def test_technician_exclusions_all_and_background():
    r = readings(minutes("2026-07-03 00:00", 18, 600), [50.0] * 18)
    x = exclusion_table([
        ("2026-07-03 00:30", "2026-07-03 01:00", "road works", "all"),          # row 2
        ("2026-07-03 02:00", "2026-07-03 02:20", "dog barking", "Background"),  # row 3
        ("2026-07-03 02:50", "2026-07-03 02:40", "typo", "all"),                # row 4: To < From
        ("2026-07-03 01:00", "2026-07-03 01:10", "bird", "night"),              # row 5: scope
        ("2026-07-03 01:30", "2026-07-03 01:40", None, None),                   # row 6: defaults
    ])
    s = build(r, exclusions=x)
    assert canon(located(s)) == canon([("Exclusions", 4, "B", "exclusion-span-invalid"),
                                       ("Exclusions", 5, "D", "exclusion-scope-unknown")])
    got = {(e.reason, e.label, e.scope): s.readings["row"].to_numpy()[e.mask].tolist()
           for e in s.exclusions}
    # hand-evaluated: [00:30, 01:00) holds the 00:30, 00:40, 00:50 readings (rows 5-7)
    assert got == {("technician", "road works", "all"): [5, 6, 7],
                   ("technician", "dog barking", "background"): [14, 15],
                   ("technician", "marked by technician", "all"): [11]}
    assert s.valid_mask("all")[[12, 13]].tolist() == [True, True]
    assert s.valid_mask("background")[[12, 13]].tolist() == [False, False]


def test_a_header_without_readings_is_an_error_not_ok():
    # a header row and nothing below it (an export cut short, a blank template) gave status
    # ok with no figures at all; it is readings-missing, located at the header row
    s = build(readings([], [], header_row=3))
    (found,) = [f for f in s.findings if f.code == "readings-missing"]
    assert (found.severity.value, found.sheet, found.row) == ("error", "Readings", 3)
    assert "no readings below it" in found.message
    assert s.readings.empty


def test_no_readings_table():
    from validation_builders import SOURCE
    s = build_survey(RawWorkbook(SOURCE, None), Settings())
    assert canon(located(s)) == canon([(None, None, None, "readings-missing"),
                                       (None, None, None, "survey-required"),
                                       # clock and timestamps from the settings; no time
                                       # zone anywhere: assumed, with a warning
                                       (None, None, None, "survey-default-used"),
                                       (None, None, None, "time-zone-assumed"),
                                       (None, None, None, "calibration-missing")])
    assert s.readings.empty and "LAeq" in s.readings.columns


def test_no_laeq_column():
    t = table("Readings", [dt_col("Start", "A", m(2)), num_col("LAFmax", "B", [60.0, 61.0])])
    s = build(t)
    assert located(s) == [("Readings", 1, None, "column-missing")]
    assert "'LAeq'" in s.findings[0].message and "Readings sheet" in s.findings[0].message
    assert s.readings.empty


def test_export_style_level_header_says_how_to_map_it():
    # "Leq A" is not built in (trade notation is LAeq): a column-unknown note on its cell,
    # and the missing LAeq names that column and the [columns] line that maps it.
    t = table("Readings", [dt_col("Start", "A", m(2)), num_col("Leq A", "B", [50.0, 51.0])])
    s = build(t)
    assert sorted(located(s), key=str) == [("Readings", 1, "B", "column-unknown"),
                                           ("Readings", 1, None, "column-missing")]
    by_code = {f.code: f for f in s.findings}
    unknown, missing = by_code["column-unknown"], by_code["column-missing"]
    assert "[columns]" in unknown.message and "column_map" not in unknown.message
    assert "'Leq A' (B)" in missing.message
    assert '"Leq A" = "LAeq"' in missing.message


def test_export_style_header_mapped_in_settings_is_used():
    t = table("Readings", [dt_col("Start", "A", m(2)), num_col("Leq A", "B", [50.0, 51.0])])
    s = build(t, settings=Settings(column_map={"Leq A": "LAeq"}))
    assert located(s) == []
    assert s.readings["LAeq"].tolist() == [50.0, 51.0]


def test_no_timestamp_column():
    t = table("Readings", [num_col("LAeq", "A", [50.0, 51.0])])
    s = build(t)
    assert located(s) == [("Readings", 1, None, "column-missing")]
    assert "'Start'" in s.findings[0].message


def test_many_faults_in_one_file_valid_rows_kept():
    # reliability.md §7 V1 in spirit: several faults, the valid rows are still processed
    t = with_cells(readings([*m(6), None], [50.0, None, 160.0, None, 54.0, 55.0, 56.0],
                            num_col("LAFmax", "C", [60.0, 60.0, 60.0, 60.0, 50.0, 65.0, 66.0])),
                   "B", text_cells={1: "n/a"}, error_cells={3: "#REF!"})
    s = build(t)
    assert canon(located(s)) == canon([
        ("Readings", 3, "B", "level-not-a-number"),
        ("Readings", 4, "B", "level-out-of-range"),
        ("Readings", 5, "B", "cell-error-value"),
        ("Readings", 6, "C", "level-order"),
        ("Readings", 8, "A", "timestamp-missing"),
    ])
    assert s.readings["row"].tolist() == [2, 3, 4, 5, 6, 7]
    assert s.valid_mask().tolist() == [True, False, False, False, True, True]
    assert s.unplaced["row"].tolist() == [8]


def test_finding_cap_keeps_counts():
    # 250 scattered text cells in 1000 readings (under half the column, so they stay
    # per-cell findings rather than one column-wide finding).
    n = 1000
    t = with_cells(readings(m(n), [50.0] * n), "B",
                   text_cells={i: "n/a" for i in range(0, n, 4)})
    s = build(t)
    assert s.finding_counts["level-not-a-number"] == n // 4
    assert sum(f.code == "level-not-a-number" for f in s.findings) == 200
    assert any(f.code == "findings-truncated" for f in s.findings)


def test_reader_findings_are_kept():
    from validation_builders import GOOD_SURVEY, SOURCE, survey_sheet

    from surveytools.validation.findings import Finding, Severity
    reader = Finding("sheet-hidden", Severity.WARNING, "hidden", "Readings")
    wb = RawWorkbook(SOURCE, readings(m(2), [50.0, 51.0]), survey_sheet(GOOD_SURVEY),
                     findings=[reader])
    s = build_survey(wb, Settings())
    assert s.findings == [reader] and s.finding_counts == {"sheet-hidden": 1}


def test_text_level_column_with_plain_numbers():
    t = readings(m(3), [None] * 3)
    t.columns[1] = text_col("LAeq", "B", ["50.5", "51", "x"])
    s = build(t)
    assert s.readings["LAeq"].tolist()[:2] == [50.5, 51.0]
    assert located(s) == [("Readings", 4, "B", "level-not-a-number")]
    assert isinstance(s.readings, pd.DataFrame)


def test_operating_readings_are_left_out_of_background_only():
    # BS 4142:2014 3.4: the background level is the LA90 of the residual sound, so readings
    # taken while the assessed source runs are excluded from background figures (scope
    # "background") but stay in every other figure.
    s = build(readings(m(4), [50.0, 51.0, 52.0, 53.0],
                       bool_col("Operating", "C", [True, False, None, True])))
    (ex,) = [e for e in s.exclusions if e.reason == "source-operating"]
    assert ex.scope == "background"
    assert ex.mask.tolist() == [True, False, False, True]
    assert s.valid_mask("all").tolist() == [True, True, True, True]
    assert s.valid_mask("background").tolist() == [False, True, True, False]


def test_band_levels_have_their_own_lower_bound():
    # Own choice (constants.PLAUSIBLE_BAND_LEVEL_MIN_DB, -20 dB): a quiet high-frequency
    # one-third-octave band below the 10 dB broadband floor is a real level, a -99 sentinel
    # is not. The broadband floor still applies to LAeq.
    t = readings(m(3), [50.0, 51.0, 52.0], num_col("LZeq 16 kHz", "C", [5.0, -99.0, 12.0]))
    s = build(t)
    assert located(s) == [("Readings", 3, "C", "level-out-of-range")]
    assert np.isnan(s.readings["LZeq_16000Hz"].to_numpy()[1])
    assert s.readings["LZeq_16000Hz"].to_numpy()[0] == 5.0
    settings = Settings(exclusions=ExclusionRules(level_min_db=-100.0))  # a lower floor wins
    assert located(build(t, settings=settings)) == []
