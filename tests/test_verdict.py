"""The verdict counts criteria (not figures) and names the data quality separately.

References are hand-built documents below; each expected count is evaluated by hand.
"""

from __future__ import annotations

from typing import Any

from surveytools.verdict import outcome_words, verdict_section


def doc(criteria: list[dict[str, Any]], findings: list[dict[str, Any]] | None = None,
        status: str = "ok", valid_s: float = 600.0, measured_s: float = 600.0,
        excluded: dict[str, float] | None = None) -> dict[str, Any]:
    return {"status": status, "findings": findings or [], "finding_counts": {},
            "criteria": criteria, "settings": {"coverage_threshold": 0.75},
            "coverage": {"valid_s": valid_s, "measured_s": measured_s,
                         "excluded_s": excluded or {}}}


def crit(passed: bool | None, failed: int, weak: int = 0) -> dict[str, Any]:
    failures = [{"when": "2026-10-25", "value": 45.1, "reported": 45.1,
                 "sufficient": i >= weak} for i in range(failed)]
    return {"passed": passed, "failed": failed, "failures": failures}


def test_counts_criteria_not_figures() -> None:
    # hand-evaluated: 2 criteria with 2 and 7 failing figures, 1 passing -> 2 of 3 not met,
    # 9 figures above their limits
    v = verdict_section(doc([crit(False, 2), crit(False, 7), crit(True, 0)]))
    assert (v["criteria_not_met"], v["criteria_total"], v["figures_not_meeting"]) == (2, 3, 9)
    assert v["outcome"] == "not met" and v["outcome_text"] == "2 of 3 criteria not met"
    assert v["data_quality"] == "ok" and v["warnings_affecting_figures"] == []


def test_no_criteria_set_and_unchecked() -> None:
    assert verdict_section(doc([]))["outcome_text"] == "no criteria set"
    assert outcome_words(0, 2, 3) == "2 of 3 criteria met; 1 not checked (no figures)"
    assert outcome_words(0, 0, 1) == "1 criterion set, none could be checked (no figures)"


def test_assumed_time_zone_affects_the_figures() -> None:
    assumed = {"severity": "warning", "code": "time-zone-assumed", "sheet": "Survey",
               "row": None, "column": None, "message": "no time zone given: UTC assumed"}
    v = verdict_section(doc([], [assumed], status="warnings"))
    assert [w["code"] for w in v["warnings_affecting_figures"]] == ["time-zone-assumed"]


def test_calibration_drift_is_listed_by_message_and_raises_quality() -> None:
    drift = {"severity": "warning", "code": "calibration-drift", "sheet": "Survey", "row": 9,
             "column": "B", "message": "calibration drift -0.60 dB exceeds the limit"}
    note = {"severity": "info", "code": "gap", "sheet": None, "row": None, "column": None,
            "message": "a gap"}
    v = verdict_section(doc([], [drift, note], status="warnings"))
    assert v["data_quality"] == "warnings" and v["data_quality_text"] == "with warnings"
    assert [w["message"] for w in v["warnings_affecting_figures"]] == [drift["message"]]


def test_low_coverage_and_weak_failures_make_the_data_doubtful() -> None:
    # hand-evaluated: 400 s valid of 600 s = 66.7 % < 75 % threshold
    v = verdict_section(doc([crit(False, 2, weak=1)], valid_s=400.0))
    codes = [w["code"] for w in v["warnings_affecting_figures"]]
    assert codes == ["coverage-below-threshold", "failures-on-low-coverage"]
    assert "66.7 %" in v["warnings_affecting_figures"][0]["message"]
    assert v["data_quality"] == "warnings"  # status was ok


def test_excluded_share_above_the_notice_threshold() -> None:
    # hand-evaluated: 540 s valid of 600 s -> 10 % excluded is not above 10 %; 530 s -> 11.7 %
    assert verdict_section(doc([], valid_s=540.0))["warnings_affecting_figures"] == []
    v = verdict_section(doc([], valid_s=530.0, excluded={"wind": 70.0}))
    assert v["warnings_affecting_figures"][0]["code"] == "excluded-share-high"
    assert "11.7 %" in v["warnings_affecting_figures"][0]["message"]


def test_unreadable_file_is_not_judged() -> None:
    v = verdict_section(doc([], status="unreadable"))
    assert v["outcome"] == "not checked"
    assert v["outcome_text"] == "not judged: the file could not be read"
    assert v["data_quality"] == "unreadable"


def test_batch_tally_counts_data_quality_from_verdicts() -> None:
    # Hand-made batch: an input whose findings are clean but whose verdict states warnings
    # (a condition that affects the figures) counts as "warnings"; an unreadable input has
    # no verdict and counts by its status.
    from surveytools.verdict import batch_tally

    counts, not_met = batch_tally([
        ("ok", {"data_quality": "warnings", "criteria_not_met": 4}),
        ("ok", {"data_quality": "ok", "criteria_not_met": 0}),
        ("unreadable", None),
    ])
    assert counts == {"ok": 1, "warnings": 1, "errors": 0, "unreadable": 1}
    assert not_met == 1
