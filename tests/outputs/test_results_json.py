"""Results JSON: plain values, strict deterministic text, status and the unreadable document."""

from __future__ import annotations

import json
import math
from datetime import UTC, date, datetime, timedelta, timezone
from zoneinfo import ZoneInfo

import numpy as np
import pytest

from surveytools.outputs.results_json import (
    dumps_results,
    iso_timestamp,
    round_level,
    status_from_findings,
    to_json_value,
    unreadable_document,
    validate_results,
    write_results_json,
)
from surveytools.provenance import SourceInfo
from surveytools.settings import Settings, settings_from_mapping
from surveytools.validation.findings import Finding, Severity

SOURCE = SourceInfo(path="/data/drop/broken.xlsx", file="broken.xlsx",
                    sha256="0123456789abcdef" * 4, size_bytes=12)
FATAL = Finding("file-not-a-zip", Severity.ERROR,
                "expected an xlsx workbook (a zip archive), found plain text; re-export it")


@pytest.mark.parametrize(("x", "expected"), [
    # Python round() to 0.001 dB: correctly rounded decimal of the binary value (Python
    # docs, round()); 55.1235 is stored just below the half -> 55.123.
    (55.123456, 55.123), (55.1235, 55.123), (np.float64(60.0049), 60.005),
    (np.float32(42.5), 42.5), (-0.0001, 0.0), (None, None), (float("nan"), None),
    (float("inf"), None),
    (np.float64("-inf"), None), (45, 45.0),
])
def test_round_level(x, expected):
    out = round_level(x)
    assert out == expected
    if out is not None:
        assert type(out) is float
        assert math.copysign(1.0, out) == 1.0 or out < 0


def test_round_level_ndigits():
    assert round_level(55.16, 1) == 55.2


def test_to_json_value_plain_types():
    tz = timezone(timedelta(hours=2))
    value = {
        "a": np.int64(3), "b": np.float64(1.5), "c": np.bool_(True), "d": (1, 2),
        "e": np.array([1.0, np.nan]), "f": float("nan"), "g": datetime(2026, 6, 10, 12, tzinfo=tz),
        "h": date(2026, 6, 10), "i": Severity.WARNING, 7: "seven", "j": FATAL,
    }
    out = to_json_value(value)
    assert out == {
        "a": 3, "b": 1.5, "c": True, "d": [1, 2], "e": [1.0, None], "f": None,
        "g": "2026-06-10T12:00:00+02:00", "h": "2026-06-10", "i": "warning", "7": "seven",
        "j": FATAL.to_json(),
    }
    assert type(out["a"]) is int and type(out["b"]) is float and type(out["c"]) is bool
    with pytest.raises(TypeError, match="no JSON form for object"):
        to_json_value(object())


@pytest.mark.parametrize(("moment", "text"), [
    # Results contract: ISO 8601 with offset, milliseconds only when non-zero.
    (datetime(2026, 6, 10, 12, 0, tzinfo=timezone(timedelta(hours=2))),
     "2026-06-10T12:00:00+02:00"),
    (datetime(2026, 6, 10, 12, 0, 0, 100_000, tzinfo=timezone(timedelta(hours=2))),
     "2026-06-10T12:00:00.100+02:00"),
    # Europe/Berlin is UTC+01:00 in winter (IANA tz database).
    (datetime(2026, 1, 5, 0, 0, tzinfo=ZoneInfo("Europe/Berlin")), "2026-01-05T00:00:00+01:00"),
    (datetime(2026, 1, 5, 0, 0, tzinfo=UTC), "2026-01-05T00:00:00+00:00"),
])
def test_iso_timestamp(moment, text):
    assert iso_timestamp(moment) == text


def test_dumps_is_strict_sorted_and_deterministic():
    doc = {"b": [3, float("nan")], "a": {"y": np.float64(np.inf), "x": "K\u00f6ln"}}
    text = dumps_results(doc)
    assert text == dumps_results(json.loads(json.dumps(to_json_value(doc))))
    assert text.endswith("}\n")
    assert "NaN" not in text and "Infinity" not in text
    assert "K\u00f6ln" in text  # UTF-8, not \u escapes
    # RFC 8259: NaN is not JSON; a strict parser must accept the text.
    parsed = json.loads(text, parse_constant=lambda c: pytest.fail(f"non-JSON constant {c}"))
    assert parsed == {"a": {"x": "K\u00f6ln", "y": None}, "b": [3, None]}
    assert text.index('"a"') < text.index('"b"')


def test_dumps_same_doc_gives_identical_text_regardless_of_key_order():
    d1 = {"x": 1, "y": {"p": 1, "q": 2}}
    d2 = {"y": {"q": 2, "p": 1}, "x": 1}
    assert dumps_results(d1) == dumps_results(d2)


@pytest.mark.parametrize(("severities", "status"), [
    ([], "ok"), ([Severity.INFO], "ok"), ([Severity.INFO, Severity.WARNING], "warnings"),
    ([Severity.WARNING, Severity.ERROR], "errors"),
])
def test_status_from_findings(severities, status):
    findings = [Finding("some-code", s, "m") for s in severities]
    assert status_from_findings(findings) == status


def test_unreadable_document_validates_and_round_trips(tmp_path):
    doc = unreadable_document(SOURCE, [FATAL], Settings())
    assert doc["status"] == "unreadable"
    assert doc["findings"] == [FATAL.to_json()]
    assert doc["finding_counts"] == {"file-not-a-zip": 1}
    assert doc["survey"] == {}
    for key in ("overall", "coverage", "survey_average", "background", "intervals_basis"):
        assert doc[key] is None
    for key in ("intervals", "days", "assessments", "criteria", "exclusion_spans", "unplaced"):
        assert doc[key] == []
    assert validate_results(doc) == []
    assert validate_results(json.loads(dumps_results(doc))) == []
    # The recorded settings rebuild the run's settings (what verify does).
    assert settings_from_mapping(doc["settings"]) == Settings()
    path = tmp_path / "broken.results.json"
    write_results_json(path, doc)
    assert path.read_text(encoding="utf-8") == dumps_results(doc)
    assert [p.name for p in tmp_path.iterdir()] == ["broken.results.json"]


def test_unreadable_document_without_sha_and_with_partial_survey():
    src = SourceInfo("/x/y.xlsx", "y.xlsx", "", 0)
    doc = unreadable_document(src, [FATAL], Settings(), survey={"position": "NW-2"})
    assert doc["input"]["sha256"] is None
    assert doc["survey"] == {"position": "NW-2"}
    assert validate_results(doc) == []


def test_unreadable_document_needs_an_error():
    with pytest.raises(ValueError, match="at least one error finding"):
        unreadable_document(SOURCE, [Finding("x", Severity.WARNING, "m")], Settings())


def test_validate_results_reports_nan_and_schema_errors():
    doc = unreadable_document(SOURCE, [FATAL], Settings())
    doc["survey"] = {"height_m": float("nan")}
    del doc["days"]
    problems = validate_results(doc)
    assert any(p.startswith("$.survey.height_m: nan is not allowed") for p in problems)
    assert any("'days' is a required property" in p for p in problems)
