"""Survey sheet schema: loading, the format-checker self-test, errors mapped to cells."""

import math

import pytest
from jsonschema import FormatChecker
from validation_builders import build, canon, readings, survey_sheet, survey_with

from surveytools.errors import SurveyToolsError
from surveytools.schema_files import assert_format_checker, load_schema
from surveytools.settings import Settings, SurveyDefaults

STARTS = ["2026-07-03 22:00", "2026-07-03 22:01"]


def test_every_property_has_title_and_description():
    schema = load_schema("survey.schema.json")
    assert schema["$id"]
    for name, prop in schema["properties"].items():
        assert prop.get("title") and prop.get("description"), name


def test_format_checker_without_date_time_is_refused():
    # reference/reliability.md §7: without rfc3339-validator "date-time" is silently unchecked
    with pytest.raises(SurveyToolsError, match="rfc3339-validator"):
        assert_format_checker(FormatChecker(formats=()))


def test_format_checker_with_date_time_passes():
    checker = FormatChecker()
    assert assert_format_checker(checker) is checker


def test_schema_errors_are_mapped_to_value_cells():
    sheet = survey_sheet([
        ("Site", 12),                           # row 2: type; Position is missing
        ("Meter class", "one"),                 # row 3: enum
        ("Microphone", "wall"),                 # row 4: enum
        ("Calibration before (dB)", 20.0),      # row 5: below 80
        ("Calibration after (dB)", 150.0),      # row 6: above 130
        ("Height (m)", math.nan),               # row 7: NaN (jsonschema accepts it)
        ("Clock", "summer time"),               # row 8: pattern
        ("Time zone", "Mars/Olympus_Mons"),     # row 9: not an IANA zone
        ("Calibrator level (dB)", 94.0),
    ])
    s = build(readings(STARTS, [50.0, 51.0]), sheet)
    got = canon([(f.sheet, f.row, f.column, f.code) for f in s.findings
                 if f.code.startswith("survey-")])
    assert got == canon([
        ("Survey", None, None, "survey-required"),
        ("Survey", 2, "B", "survey-type"),
        ("Survey", 3, "B", "survey-enum"),
        ("Survey", 4, "B", "survey-enum"),
        ("Survey", 5, "B", "survey-minimum"),
        ("Survey", 6, "B", "survey-maximum"),
        ("Survey", 7, "B", "survey-not-finite"),
        ("Survey", 8, "B", "survey-pattern"),
        ("Survey", 9, "B", "survey-time-zone-unknown"),
        # the rejected Clock falls back to the settings default; the settings give no
        # time zone, so the rejected one is assumed (time-zone-assumed, not survey-*)
        ("Survey", None, None, "survey-default-used"),
    ])
    assert "time-zone-assumed" in {f.code for f in s.findings}
    by_code = {f.code: f.message for f in s.findings}
    messages = [f.message for f in s.findings]
    assert "Microphone: expected one of 'free-field', 'facade', found text 'wall'" in "|".join(
        messages)
    assert "Meter class: expected one of 1, 2, found text 'one'" in "|".join(messages)
    assert "Site: expected text, found 12" in by_code["survey-type"]
    assert "'Position' is required" in by_code["survey-required"]
    for key in ("site", "meter_class", "microphone", "calibration_before_db", "height_m",
                "position"):
        assert key not in s.metadata
    assert s.metadata["clock"] == "local" and s.metadata["time_zone"] == "UTC"
    # valid rows are still there
    assert s.readings["LAeq"].tolist() == [50.0, 51.0]


def test_defaults_fill_missing_keys_with_info():
    settings = Settings(survey=SurveyDefaults(position="MP-7", time_zone="Europe/Berlin",
                                              clock="local"))
    s = build(readings(STARTS, [50.0, 51.0]), survey_sheet([("Calibration before (dB)", 94.0),
                                                            ("Calibration after (dB)", 94.1)]),
              settings)
    assert s.metadata["position"] == "MP-7"
    assert s.metadata["time_zone"] == "Europe/Berlin"
    got = canon([(f.sheet, f.row, f.code) for f in s.findings])
    assert got == [("Survey", None, "survey-default-used")] * 3
    # Europe/Berlin in July is UTC+02:00 (CEST; IANA tz database)
    assert s.readings["offset_s"].tolist() == [7200, 7200]


def test_repeated_key_is_reported_and_first_value_kept():
    sheet = survey_sheet([("Position", "MP-1"), ("Clock", "UTC"), ("Time zone", "UTC"),
                          ("Calibration before (dB)", 94.0), ("Calibration after (dB)", 94.0),
                          ("Position", "MP-2")])
    s = build(readings(STARTS, [50.0, 51.0]), sheet)
    assert [(f.sheet, f.row, f.column, f.code) for f in s.findings] == [
        ("Survey", 7, "A", "survey-key-duplicate")]
    assert s.metadata["position"] == "MP-1"


def test_case_tolerant_enumerations():
    s = build(readings(STARTS, [50.0, 51.0]), survey_with(clock="Local", time_zone="utc+01:00",
                                                          microphone="Facade"))
    assert s.findings == []
    assert (s.metadata["clock"], s.metadata["time_zone"], s.metadata["microphone"]) == (
        "local", "UTC+01:00", "facade")


def test_a_log_without_survey_sheet_is_told_to_use_the_settings():
    # a CSV or Parquet log has no Survey sheet: the fix named is the settings' [survey]
    # table, never a row of a sheet the input does not have
    from validation_builders import SOURCE

    from surveytools.inputs.raw import RawWorkbook
    from surveytools.validation import build_survey

    wb = RawWorkbook(SOURCE, readings(STARTS, [50.0, 51.0]), None)
    s = build_survey(wb, Settings())
    (message,) = [f.message for f in s.findings if f.code == "survey-required"]
    assert "no Survey sheet" in message and "[survey] table of the settings file" in message
    assert "row to the Survey sheet" not in message
    by_code = {f.code: f.message for f in s.findings}
    assert "calibration_before_db" in by_code["calibration-missing"]
    assert "[survey] table of the settings file" in by_code["time-zone-assumed"]
    # the facts that do come from the settings are told once, not one finding each
    given = Settings(survey=SurveyDefaults(position="MP-7", time_zone="Europe/Berlin"))
    told = [f.message for f in build_survey(wb, given).findings
            if f.code == "survey-default-used"]
    assert told == ["this input has no Survey sheet; its survey facts come from the "
                    "settings: Position 'MP-7', Time zone 'Europe/Berlin', Clock 'local'"]
