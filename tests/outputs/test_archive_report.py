"""The archive report's schema and workbook: documented, strict, levels shown once rounded."""

from __future__ import annotations

import json
from pathlib import Path

import openpyxl

from surveytools.outputs.archive_report import validate_archive_report, write_archive_workbook

SCHEMA = Path(__file__).resolve().parents[2] / "schemas" / "archive-report.schema.json"


def _walk(node, path="#"):
    if isinstance(node, dict):
        yield path, node
        for key, value in node.items():
            yield from _walk(value, f"{path}/{key}")
    elif isinstance(node, list):
        for i, value in enumerate(node):
            yield from _walk(value, f"{path}/{i}")


def test_every_property_of_the_schema_has_a_description():
    # style.md rule 8: title and description on every property.
    schema = json.loads(SCHEMA.read_text(encoding="utf-8"))
    missing = [f"{p}/{k}" for p, node in _walk(schema)
               if isinstance(node.get("properties"), dict) and not p.endswith("/properties")
               for k, sub in node["properties"].items()
               if not (isinstance(sub, dict) and sub.get("description"))]
    assert missing == []


def _doc() -> dict:
    """A small report written by hand from the contract (an invented position)."""
    span = {"Lday": 55.05, "Levening": 50.0, "Lnight": 45.04, "Lden": 56.9, "Ldn": 57.0,
            "coverage": {"day": 1.0, "evening": 1.0, "night": 0.5},
            "valid_s": {"day": 43200.0, "evening": 14400.0, "night": 14400.0},
            "sufficient": False, "days_with_data": 1, "from": "2026-07-01", "to": "2026-07-31"}
    return {
        "schema_version": "1.0", "tool": {"name": "surveytools", "version": "0.1.0"},
        "archive": {"location": "/data/archive", "inputs_stored": 1, "inputs_recorded": 1,
                    "rows_stored": 1440},
        "window": {"from": None, "to": None},
        "engine": {"name": "dask", "scheduler": "local", "workers": 2, "partitions": 1},
        "settings": {},
        "positions": [{
            "position": "Mast", "rows": 1440, "first": "2026-07-01T07:00:00+02:00",
            "last": "2026-07-02T07:00:00+02:00", "clock": "local", "time_zone": "Europe/Berlin",
            "years": [{"year": 2026, **span}], "months": [{"month": "2026-07", **span}],
            "days": [{"date": "2026-07-01", "Lday": 55.05, "Levening": 50.0, "Lnight": 45.04,
                      "Lden": 56.9, "Ldn": 57.0, "CNEL": 57.1, "LAeq_16h": 54.2,
                      "LAeq_8h": 45.04, "coverage": {"day": 1.0}, "sufficient": {"Lden": True},
                      "night_events": {"count": 0}}],
            "levels": {"basis": "samples", "step_db": 0.1,
                       "day": {"LA90": 40.0, "valid_s": 43200.0},
                       "evening": {"LA90": None, "valid_s": 0.0},
                       "night": {"LA90": 35.5, "valid_s": 14400.0}},
            "criteria": [{"name": "Night", "indicator": "Lnight", "period": "any",
                          "limit_db": 45.0, "applies_to": "day", "checked": 1, "above": 0,
                          "above_with_sufficient_coverage": 0, "first_above": None,
                          "last_above": None}],
        }],
        "problems": [], "cautions": ["These results are indicative."],
    }


def test_a_hand_written_report_is_valid_and_a_broken_one_is_not():
    assert validate_archive_report(_doc()) == []
    broken = _doc()
    broken["positions"][0]["months"][0]["month"] = "July"
    del broken["positions"][0]["years"][0]["Lden"]
    problems = validate_archive_report(broken)
    assert len(problems) == 2
    assert any("months/0/month" in p for p in problems)


def test_workbook_shows_levels_rounded_once_half_up(tmp_path):
    path = tmp_path / "r.xlsx"
    write_archive_workbook(path, _doc())
    sheet = openpyxl.load_workbook(path)["Days"]
    header = [c.value for c in sheet[1]]
    row = dict(zip(header, [c.value for c in sheet[2]], strict=True))
    # reported_level: 55.05 -> 55.1 (half up), 45.04 -> 45.0
    assert row["Lday [dB]"] == 55.1 and row["Lnight [dB]"] == 45.0
    assert row["Position"] == "Mast" and row["Date"] == "2026-07-01"
