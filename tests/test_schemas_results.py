"""The JSON Schemas in schemas/: valid draft 2020-12, documented, and the results contract."""

from __future__ import annotations

import copy
import json
from pathlib import Path
from typing import Any

import pytest
from jsonschema import Draft202012Validator

from surveytools.outputs.results_json import validate_overview, validate_results
from surveytools.settings import Settings

SCHEMAS = sorted((Path(__file__).resolve().parents[1] / "schemas").glob("*.json"))
MINE = ("settings.schema.json", "results.schema.json", "overview.schema.json",
        "alert.schema.json")


def load(name: str) -> dict[str, Any]:
    return json.loads((SCHEMAS[0].parent / name).read_text(encoding="utf-8"))


@pytest.mark.parametrize("path", SCHEMAS, ids=[p.name for p in SCHEMAS])
def test_every_schema_is_valid_draft_2020_12(path):
    schema = json.loads(path.read_text(encoding="utf-8"))
    # JSON Schema 2020-12 meta-schema, checked by python-jsonschema.
    Draft202012Validator.check_schema(schema)
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    assert schema.get("$id") and schema.get("title") and schema.get("description")


def _walk(node: Any, path: str = "#"):
    if isinstance(node, dict):
        yield path, node
        for k, v in node.items():
            yield from _walk(v, f"{path}/{k}")
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield from _walk(v, f"{path}/{i}")


@pytest.mark.parametrize("name", MINE)
def test_every_property_has_a_description(name):
    # style.md rule 8. Conditional constraints under allOf refine properties declared (and
    # described) above, so they are not declarations of their own.
    missing = [f"{p}/properties/{k}" for p, node in _walk(load(name))
               if isinstance(node.get("properties"), dict) and not p.endswith("/properties")
               and "/allOf/" not in p
               for k, sub in node["properties"].items()
               if not (isinstance(sub, dict) and sub.get("description"))]
    assert missing == []


def test_settings_schema_closes_every_table():
    open_tables = [p for p, node in _walk(load("settings.schema.json"))
                   if "properties" in node and not p.endswith("/properties")
                   and node.get("additionalProperties") is not False]
    assert open_tables == []


def finding(severity: str, code: str = "gap-in-readings") -> dict[str, Any]:
    return {"severity": severity, "code": code, "message": "expected a reading every 1 s, found "
            "a 10 min gap; check the meter's battery", "sheet": "Readings", "row": 14,
            "column": "B"}


def results_doc() -> dict[str, Any]:
    """A small document written by hand from the results contract (invented position)."""
    t0, t1 = "2026-06-10T12:00:00+02:00", "2026-06-10T12:15:00+02:00"
    return {
        "schema_version": "1.0",
        "tool": {"name": "surveytools", "version": "0.1.0"},
        "input": {"file": "north.xlsx", "path": "/data/north.xlsx", "sha256": "ab" * 32,
                  "size_bytes": 9000},
        "settings": json.loads(json.dumps(Settings().to_dict())),
        "survey": {"position": "North fence", "site": "Invented Yard", "time_zone": "Europe/Berlin",
                   "clock": "local", "meter_class": 1, "calibration_before_db": 94.0,
                   "calibration_after_db": 94.1, "calibrator_level_db": 94.0,
                   "calibration_drift_db": 0.1, "microphone": None, "height_m": 1.5,
                   "notes": None, "readings_sheet": "Readings",
                   "level_columns": {"LAeq": "B", "LAFmax": "C"}},
        "status": "warnings",
        "findings": [finding("warning"), finding("info", "policy-applied")],
        "finding_counts": {"gap-in-readings": 1, "policy-applied": 1},
        "coverage": {"first": t0, "last": t1, "measured_s": 900.0, "valid_s": 840.0,
                     "excluded_s": {"wind": 60.0}, "unplaced_rows": 0, "logging_interval_s": 1.0},
        "overall": {"LAeq": 55.12, "LAFmax": 78.3, "LAFmin": 40.1, "LA10": 58.0, "LA50": 54.2,
                    "LA90": 48.9, "basis": {"LA10": "samples", "LA50": "samples",
                                            "LA90": "logged"}, "valid_s": 840.0},
        "intervals": [{"start": t0, "end": t1, "LAeq": 55.12, "LAFmax": 78.3, "LA10": 58.0,
                       "LA50": 54.2, "LA90": 48.9, "valid_s": 840.0,
                       "valid_fraction": 0.9333, "sufficient": True, "period": "day",
                       "excluded": ["wind"]}],
        "intervals_basis": {"LA10": "samples", "LA50": "samples", "LA90": "logged",
                            "method": "median"},
        "days": [{"date": "2026-06-10", "Lday": 55.1, "Levening": None, "Lnight": None,
                  "Lden": None, "Ldn": None, "CNEL": None, "LAeq_16h": 55.1, "LAeq_8h": None,
                  "coverage": {"day": 0.02, "evening": 0.0, "night": 0.0},
                  "period_hours": {"day": 12.0, "evening": 4.0, "night": 8.0},
                  "sufficient": {"Lden": False, "Lday": False},
                  "night_events": {"threshold_db": 60.0, "count": 0,
                                   "nth_highest_LAFmax": None, "n": 10}}],
        "survey_average": {"Lday": 55.1, "Levening": None, "Lnight": None, "Lden": None,
                           "Ldn": None, "CNEL": None, "LAeq_16h": 55.1, "LAeq_8h": None,
                           "valid_s": {"day": 840.0, "evening": 0.0, "night": 0.0}},
        "background": {"basis": "logged LAF90", "method": "mode",
                       "reference_intervals": [{"start": t0, "end": t1, "period": "day",
                                                "LA90": 48.9, "valid_s": 840.0}],
                       "day": {"LA90": 49.0, "n_intervals": 1, "distribution": [[49, 1]]},
                       "night": None},
        "assessments": [{"name": "Plant", "position": "North fence",
                         "source_on": [["2026-06-10 12:00", "2026-06-10 12:10"]],
                         "residual": [["2026-06-10 12:10", "2026-06-10 12:15"]],
                         "selection": "windows", "valid_s_total": 600.0,
                         "valid_s_residual": 240.0, "LAeq_total": 56.0,
                         "LAeq_residual": 50.0, "level_difference": 6.0,
                         "specific_level": 54.74, "specific_basis": "corrected",
                         "corrections_db": {"tonal": 2.0, "impulsive": 0.0,
                                            "intermittency": 0.0, "other": 0.0},
                         "rating_level": 56.74, "background_period": "day",
                         "background_LA90": 49.0, "background_basis": "source-free period",
                         "excess_over_background": 7.74,
                         "impact_indication": "adverse impact likely", "note": None}],
        "criteria": [{"name": "Day limit", "indicator": "Lday", "period": "any",
                      "limit_db": 55.0, "applies_to": "day", "checked": 1, "failed": 1,
                      "passed": False,
                      "failures": [{"when": "2026-06-10", "value": 55.1, "reported": 55.1,
                                    "sufficient": True}],
                      "highest": {"when": "2026-06-10", "value": 55.1, "reported": 55.1,
                                  "sufficient": True},
                      "warning_db": 50.0, "outside_schedule": 0,
                      "schedule": [{"days": "Mon-Fri", "from": "07:00", "to": "19:00"}],
                      "episodes": [{"start": "2026-06-10T07:00:00+02:00",
                                    "end": "2026-06-10T19:00:00+02:00", "intervals": 1,
                                    "max_db": 55.1, "severity": "limit"}]}],
        "exclusion_spans": [{"from": t0, "to": "2026-06-10T12:01:00+02:00", "first_row": 2,
                             "last_row": 61, "rows": 60, "reason": "wind", "scope": "all",
                             "label": None}],
        "unplaced": [],
        "spectral": {
            "bands_hz": [80.0, 100.0, 125.0],
            "periods": {"day": None, "evening": None, "night": {
                "valid_s": 3600.0, "LZeq": [40.0, 58.0, 41.0], "LAeq_from_bands": 39.1,
                "LCeq_from_bands": 58.2, "LC_minus_LA": 19.1, "low_frequency": True,
                "tonal_bands_hz": [100.0], "tone_difference_db": [None, 17.0, None]}},
            "band_check": {"intervals": 4, "median_difference_db": 0.1,
                           "median_absolute_difference_db": 0.1,
                           "max_absolute_difference_db": 0.2, "tolerance_db": 1.0,
                           "mismatch": False},
            "tones": [{"band_hz": 100.0, "period": "night", "in_period_average": True,
                       "time_fraction": 1.0, "max_difference_db": 17.2,
                       "threshold_db": 15.0}],
            "intervals": [{"start": t0, "end": "2026-06-10T12:15:00+02:00", "valid_s": 900.0,
                           "LAeq_from_bands": 39.1, "difference_db": 0.1,
                           "tonal_bands_hz": [100.0]}],
        },
    }


def test_hand_built_document_validates():
    assert validate_results(results_doc()) == []


def _set(doc: dict[str, Any], path: str, value: Any) -> None:
    *parents, last = path.split(".")
    node: Any = doc
    for p in parents:
        node = node[int(p)] if p.isdigit() else node[p]
    if value is DELETE:
        del node[last]
    else:
        node[int(last) if last.isdigit() else last] = value


DELETE = object()

BROKEN = [
    ("status", "ok"),                       # a warning finding, yet "ok"
    ("status", "errors"),                   # no error finding, yet "errors"
    ("status", "fine"),
    ("overall", None),                      # readable files have overall figures
    ("intervals", DELETE),                  # required section
    ("intervals.0.start", "2026-06-10 12:00"),        # RFC 3339: needs T and offset
    ("intervals.0.start", "2026-06-10T12:00:00"),     # no UTC offset
    ("intervals.0.start", "2026-06-10T12:00:00.1+02:00"),  # contract: milliseconds, 3 digits
    ("intervals.0.period", "morning"),
    ("intervals.0.valid_fraction", 1.2),
    ("intervals.0.LAeq", "55.1"),
    ("overall.LA90", float("nan")),         # RFC 8259: no NaN in JSON
    ("overall.basis.LA90", "meter"),
    ("findings.0.severity", "fatal"),
    ("findings.0.code", "Gap In Readings"),
    ("findings.0.row", 0),                  # spreadsheet rows start at 1
    ("findings.0.column", "b"),
    ("finding_counts.gap-in-readings", -1),
    ("input.sha256", "xyz"),
    ("input.sha256", None),                 # only unreadable files may lack a hash
    ("tool.name", "other"),
    ("days.0.date", "10/06/2026"),
    ("days.0.coverage.day", 1.5),
    ("background.method", "average"),
    ("background.day.distribution", [[49.5, 1]]),
    ("assessments.0.specific_basis", "guess"),
    ("criteria.0.indicator", "Lmax"),
    ("criteria.0.applies_to", "week"),
    ("criteria.0.episodes.0.severity", "alarm"),
    ("exclusion_spans.0.scope", "some"),
    ("schema_version", "2.0"),
]


@pytest.mark.parametrize(("path", "value"), BROKEN, ids=[f"{p}={v!r}" for p, v in BROKEN])
def test_contract_breaks_are_caught(path, value):
    doc = copy.deepcopy(results_doc())
    _set(doc, path, value)
    assert validate_results(doc) != []


def test_unreadable_variant_must_have_empty_sections():
    doc = results_doc()
    doc["status"] = "unreadable"
    doc["findings"] = [finding("error", "file-not-a-zip")]
    problems = validate_results(doc)
    for key in ("coverage", "overall", "survey_average", "background", "intervals_basis"):
        assert any(p.startswith(f"$.{key}:") for p in problems), key
    assert any(p.startswith("$.intervals:") for p in problems)


def test_unreadable_variant_needs_an_error_finding():
    doc = {**results_doc(), "status": "unreadable", "findings": [], "coverage": None,
           "overall": None, "intervals": [], "intervals_basis": None, "days": [],
           "survey_average": None, "background": None, "assessments": [], "criteria": [],
           "exclusion_spans": [], "unplaced": [], "spectral": None}
    assert validate_results(doc) != []
    doc["findings"] = [finding("error", "file-not-a-zip")]
    assert validate_results(doc) == []


def overview_doc() -> dict[str, Any]:
    return {
        "schema_version": "1.0", "tool": {"name": "surveytools", "version": "0.1.0"},
        "settings_sha256": "cd" * 32,
        "inputs": [
            {"file": "north.xlsx", "path": "/data/north.xlsx",
             "results_json": "north.results.json", "results_xlsx": "north.results.xlsx",
             "status": "warnings", "position": "North fence", "site": "Invented Yard",
             "coverage": {"first": "2026-06-10T12:00:00+02:00",
                          "last": "2026-06-10T12:15:00+02:00", "valid_fraction": 0.9333},
             "survey_average": {"Lden": None}, "background": {"day": 49.0, "night": None},
             "worst_excess_over_background": 7.74, "criteria_failed": 1,
             "findings": {"error": 0, "warning": 1, "info": 1}, "reason": None},
            {"file": "broken.xlsx", "results_json": "broken.results.json",
             "results_xlsx": None, "status": "unreadable",
             "findings": {"error": 1, "warning": 0, "info": 0},
             "reason": "expected an xlsx workbook, found plain text"},
        ],
        "counts": {"ok": 0, "warnings": 1, "errors": 0, "unreadable": 1, "skipped": 1,
                   "deferred": 0},
        "skipped": [{"path": "/data/notes.txt", "code": "not-a-workbook",
                     "reason": "not an .xlsx, .xlsm or .csv file", "status": "skipped"}],
    }


def test_overview_validates_and_breaks_are_caught():
    assert validate_overview(overview_doc()) == []
    for path, value in [("inputs.0.status", "done"), ("counts.ok", -1),
                        ("inputs.1.file", DELETE), ("counts.skipped", DELETE),
                        ("settings_sha256", "nothex"), ("skipped.0.reason", DELETE)]:
        doc = copy.deepcopy(overview_doc())
        _set(doc, path, value)
        assert validate_overview(doc) != [], path
