"""Tests of the header vocabulary (surveytools.inputs.columns)."""

from pathlib import Path

import pytest

from surveytools.inputs.columns import (
    EXCLUSION_COLUMNS,
    READINGS_COLUMNS,
    SURVEY_KEYS,
    WEATHER_COLUMNS,
    canonical_name,
    markdown_table,
    match_columns,
    normalise_header,
)

# Trade notation of IEC 61672-1 / ISO 1996-1 (LAeq,T; LAFmax; LAF90) and the spellings the
# project accepts for them (common practice: units in brackets, ",T" time-base suffix).
READINGS_CASES = [
    ("LAeq", "LAeq"),
    ("laeq", "LAeq"),
    ("LAeq,T", "LAeq"),
    ("LAeq, T (dB)", "LAeq"),
    ("LAeq (dB)", "LAeq"),
    ("LAeq dB(A)", "LAeq"),
    ("LAeq,1min", "LAeq"),
    ("LAeq,15min", "LAeq"),
    (" LAFmax ", "LAFmax"),
    ("LAFmin", "LAFmin"),
    ("LASmax", "LASmax"),
    ("LAF10", "LAF10"),
    ("LA10", "LAF10"),
    ("LA90", "LAF90"),
    ("LAF95 (dB)", "LAF95"),
    ("LCeq", "LCeq"),
    ("LCpeak dB(C)", "LCpeak"),
    ("Start", "Start"),
    ("Start time", "Start"),
    ("Interval start", "Start"),
    ("End", "End"),
    ("Date", "Date"),
    ("Time", "Time"),
    ("Duration (s)", "Duration"),
    ("Overload", "Overload"),
    ("Operating", "Operating"),
    ("Notes", "Note"),
    ("Comment", "Note"),
    # One-third-octave nominal frequencies: IEC 61672-1:2013 Table 3 (10 Hz ... 20 kHz).
    ("LZeq 1000 Hz", "LZeq_1000Hz"),
    ("1k", "LZeq_1000Hz"),
    ("1 kHz", "LZeq_1000Hz"),
    ("1000 Hz", "LZeq_1000Hz"),
    ("1000", "LZeq_1000Hz"),
    (1000.0, "LZeq_1000Hz"),
    ("1.25k", "LZeq_1250Hz"),
    ("31.5 Hz", "LZeq_31.5Hz"),
    ("LZeq_12.5Hz", "LZeq_12.5Hz"),
    ("20 kHz", "LZeq_20000Hz"),
]


@pytest.mark.parametrize(("header", "expected"), READINGS_CASES)
def test_readings_spellings(header: object, expected: str) -> None:
    assert canonical_name(header, READINGS_COLUMNS) == expected


@pytest.mark.parametrize("header", ["1001", "999 Hz", "Leq", "Level", "", None, "LAF", "Lden"])
def test_not_recognised(header: object) -> None:
    # 1001 Hz / 999 Hz are not nominal band frequencies (IEC 61672-1:2013 Table 3).
    assert canonical_name(header, READINGS_COLUMNS) is None


@pytest.mark.parametrize(
    ("header", "vocab", "expected"),
    [
        ("Wind speed (m/s)", WEATHER_COLUMNS, "Wind speed"),
        ("Rain (mm)", WEATHER_COLUMNS, "Rain"),
        ("Start", WEATHER_COLUMNS, "Start"),
        ("From", EXCLUSION_COLUMNS, "From"),
        ("To", EXCLUSION_COLUMNS, "To"),
        ("Reason", EXCLUSION_COLUMNS, "Reason"),
        ("Applies to", EXCLUSION_COLUMNS, "Applies to"),
        ("Position", SURVEY_KEYS, "position"),
        ("Time zone", SURVEY_KEYS, "time_zone"),
        ("Calibration before (dB)", SURVEY_KEYS, "calibration_before_db"),
        ("Calibration after (dB)", SURVEY_KEYS, "calibration_after_db"),
        ("Calibrator level (dB)", SURVEY_KEYS, "calibrator_level_db"),
        ("Meter class", SURVEY_KEYS, "meter_class"),
        ("Height (m)", SURVEY_KEYS, "height_m"),
        ("Microphone", SURVEY_KEYS, "microphone"),
    ],
)
def test_other_vocabularies(header: str, vocab: dict, expected: str) -> None:
    assert canonical_name(header, vocab) == expected


def test_normalise_header_examples() -> None:
    # hand-evaluated: case, spaces, punctuation and a trailing unit are dropped
    assert normalise_header("  Wind Speed (m/s) ") == "windspeed"
    assert normalise_header("LAeq,T (dB)") == "laeq"
    assert normalise_header("Duration [s]") == "duration"
    assert normalise_header(None) == ""


def test_match_columns_any_order_unknown_and_duplicates() -> None:
    headers = ["Note", "LAeq (dB)", "Start time", "Wind", "LAeq,T", None, "Level X"]
    matched, unknown, dups = match_columns(headers, READINGS_COLUMNS)
    assert matched == {"Note": 0, "LAeq": 1, "Start": 2}
    assert unknown == [3, 6]
    assert dups == [("LAeq", [1, 4])]


def test_column_map_extends_vocabulary() -> None:
    matched, unknown, _ = match_columns(["Leq", "Zeit"], READINGS_COLUMNS,
                                        {"Leq": "LAeq", "zeit": "Start"})
    assert matched == {"LAeq": 0, "Start": 1}
    assert unknown == []


# Spellings that read like particular export files' labels rather than trade notation
# (IEC 61672-1 / ISO 1996-1 symbols) or plain English: not built in, mapped in [columns].
NOT_BUILT_IN = ["LAF10.0", "LA10.0", "LAF90.0", "LA90.0", "LAF1.0", "LA95.0", "Leq A", "LeqA",
                "Lmax A", "LmaxA", "Lmin A", "LminA", "Lpeak C", "LpeakC", "Leq C", "LeqC",
                "Leq Z", "LeqZ", "Over range"]


@pytest.mark.parametrize("header", NOT_BUILT_IN)
def test_export_style_spellings_are_not_built_in(header: str) -> None:
    assert canonical_name(header, READINGS_COLUMNS) is None


def test_columns_table_reaches_export_style_spellings() -> None:
    column_map = {"Leq A": "LAeq", "Lmax A": "LAFmax", "LAF90.0": "LAF90", "Over range": "Overload"}
    matched, unknown, _ = match_columns(["Leq A", "Lmax A", "LAF90.0", "Over range"],
                                        READINGS_COLUMNS, column_map)
    assert matched == {"LAeq": 0, "LAFmax": 1, "LAF90": 2, "Overload": 3}
    assert unknown == []


def test_every_spelling_maps_back_to_its_canonical_name() -> None:
    # Guards against one spelling silently claimed by two canonical names.
    for vocab in (READINGS_COLUMNS, WEATHER_COLUMNS, EXCLUSION_COLUMNS, SURVEY_KEYS):
        for canonical, spellings in vocab.items():
            for s in spellings:
                assert canonical_name(s, vocab) == canonical, (s, canonical)


def test_markdown_table_lists_every_spelling() -> None:
    table = markdown_table()
    assert table.startswith("| sheet | canonical name |")
    for canonical, spellings in READINGS_COLUMNS.items():
        assert f"`{canonical}`" in table
        for s in spellings:
            assert f"`{s}`" in table


def test_readme_contains_columns_table() -> None:
    readme = Path(__file__).resolve().parents[2] / "README.md"
    text = readme.read_text(encoding="utf-8") if readme.exists() else ""
    if "<!-- columns-table -->" not in text:
        pytest.skip("README has no <!-- columns-table --> marker yet")
    between = text.split("<!-- columns-table -->", 1)[1].split("<!-- /columns-table -->", 1)[0]
    if between.strip().startswith("(table inserted from"):
        pytest.skip("README holds the placeholder; insert markdown_table() between the markers")
    assert markdown_table().strip() == between.strip()
