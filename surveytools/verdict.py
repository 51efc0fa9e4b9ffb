"""The verdict of one results document: criteria outcome and data quality, in words.

A manager reads two things first: whether the limits were met, and whether the data can
be trusted. They are kept apart on purpose: a position can meet every criterion on doubtful
data, or miss them on sound data. :func:`verdict_section` builds both from sections the
document already holds (criteria, findings, coverage, days), so it also works on a document
written by an earlier version (a rerun that keeps unchanged results).

Data quality starts from the document's ``status`` (from its findings) and is at least
``"warnings"`` when a condition that affects the figures holds (calibration drift, overloads,
too little valid time, failures judged on figures below the coverage threshold ...): each
such condition is listed by message under ``warnings_affecting_figures``.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from surveytools import constants

__all__ = ["FIGURE_AFFECTING_CODES", "batch_tally", "data_quality_words", "episode_counts",
           "outcome_words", "verdict_section"]

#: Finding codes whose presence makes the figures doubtful (listed on the Summary by message).
#: A code starting with one of :data:`FIGURE_AFFECTING_PREFIXES` counts too.
FIGURE_AFFECTING_CODES: frozenset[str] = frozenset({
    "calibration-drift",        # level offset of the whole log is uncertain
    "calibration-missing",      # no check that the meter read right
    "level-overload-marker",    # overloaded readings are left out
    "timestamp-ambiguous",      # a repeated autumn hour placed by row order
    "timestamp-out-of-order",   # rows re-sorted; intervals may be mis-assigned
    "interval-overlap",         # overlapping readings left out
    "column-duplicate",         # two columns for one quantity: the first was used
    "time-zone-assumed",        # periods and days rest on a time zone nobody gave
})

#: Code prefixes that affect the figures (a time zone nobody stated, clock problems).
FIGURE_AFFECTING_PREFIXES: tuple[str, ...] = ("survey-time-zone", "clock-")

_RANK = {"ok": 0, "warnings": 1, "errors": 2, "unreadable": 3}

#: The batch status of an input whose results could not be written (a full disk): it has
#: no results document and no verdict; the input itself is not to blame.
UNWRITTEN = "unwritten"


def episode_counts(doc: Mapping[str, Any]) -> dict[str, int]:
    """Count the episodes of every criterion of a results document by severity.

    Returns ``{"limit": n, "warning": m}``: episodes with a figure above the limit, and
    those above the warning level only (the overview and the Summary show these).
    """
    counts = {"limit": 0, "warning": 0}
    for criterion in doc.get("criteria") or []:
        for episode in criterion.get("episodes") or []:
            severity = episode.get("severity")
            if severity in counts:
                counts[severity] += 1
    return counts


def data_quality_words(quality: str) -> str:
    """Return the data quality as words: ``ok``, ``with warnings``, ``with errors`` ..."""
    return {"ok": "ok", "warnings": "with warnings", "errors": "with errors",
            "unreadable": "file could not be read",
            UNWRITTEN: "read, but results not written"}.get(quality, quality)


def batch_tally(inputs: Sequence[tuple[str, Mapping[str, Any] | None]]
                ) -> tuple[dict[str, int], int]:
    """Count a batch's inputs by the data quality their verdicts state.

    Parameters
    ----------
    inputs : sequence of (status, verdict or None)
        Each input's status (from its findings) and its ``verdict`` section; an input
        without a verdict (unreadable, or from an older version) counts by its status.

    Returns
    -------
    counts : dict
        Inputs per data quality: ``ok``, ``warnings``, ``errors``, ``unreadable``, and
        ``unwritten`` when some input's results could not be written.
    not_met : int
        Inputs with at least one criterion not met.
    """
    counts = {"ok": 0, "warnings": 0, "errors": 0, "unreadable": 0}
    not_met = 0
    for status, verdict in inputs:
        quality = str((verdict or {}).get("data_quality") or status)
        counts[quality] = counts.get(quality, 0) + 1
        not_met += bool((verdict or {}).get("criteria_not_met"))
    return counts, not_met


def outcome_words(not_met: int, checked: int, total: int) -> str:
    """Return the criteria outcome in words (``"4 of 4 criteria not met"``).

    Parameters
    ----------
    not_met : int
        Criteria with at least one figure above the limit.
    checked : int
        Criteria that had at least one figure to judge.
    total : int
        Criteria set for this position.
    """
    if total == 0:
        return "no criteria set"
    unchecked = total - checked
    tail = f"; {unchecked} not checked (no figures)" if unchecked else ""
    noun = "criterion" if total == 1 else "criteria"
    if not_met:
        return f"{not_met} of {total} {noun} not met{tail}"
    if checked == total:
        return f"all {total} criteria met" if total > 1 else "1 criterion met"
    if checked:
        return f"{checked} of {total} {noun} met{tail}"
    return f"{total} {noun} set, none could be checked (no figures)"


def _share(seconds: float, total: float) -> str:
    return f"{100.0 * seconds / total:.1f} %"


def _finding_warnings(findings: Sequence[Mapping[str, Any]],
                      counts: Mapping[str, Any]) -> list[dict[str, Any]]:
    out: dict[str, dict[str, Any]] = {}
    for f in findings:
        code = str(f.get("code") or "")
        if f.get("severity") not in ("warning", "error"):
            continue
        if code not in FIGURE_AFFECTING_CODES and not code.startswith(FIGURE_AFFECTING_PREFIXES):
            continue
        if code in out:
            continue
        n = counts.get(code)
        out[code] = {"code": code, "message": str(f.get("message") or code),
                     "count": int(n) if isinstance(n, int) and n > 0 else 1,
                     "sheet": f.get("sheet"), "row": f.get("row"), "column": f.get("column")}
    return list(out.values())


def _coverage_warnings(doc: Mapping[str, Any], threshold: float) -> list[dict[str, Any]]:
    out: list[dict[str, Any]] = []
    coverage = doc.get("coverage")
    if not isinstance(coverage, Mapping):
        return out
    measured = coverage.get("measured_s")
    valid = coverage.get("valid_s")
    if isinstance(measured, int | float) and isinstance(valid, int | float) and measured > 0:
        excluded = measured - valid
        if valid < threshold * measured:
            out.append({"code": "coverage-below-threshold", "count": 1, "message": (
                f"only {_share(valid, measured)} of the measured time is valid "
                f"(threshold {100 * threshold:.0f} %): the figures may not represent the "
                "survey period")})
        elif excluded > constants.EXCLUDED_SHARE_NOTICE * measured:
            reasons = coverage.get("excluded_s") or {}
            top = sorted(reasons.items(), key=lambda kv: -float(kv[1] or 0))[:4]
            listed = ", ".join(f"{k} {float(v) / 3600:.1f} h" for k, v in top)
            out.append({"code": "excluded-share-high", "count": 1, "message": (
                f"{_share(excluded, measured)} of the measured time was excluded "
                f"({listed}): check that the remaining time represents the survey period")})
    weak = [f for c in doc.get("criteria") or [] for f in c.get("failures") or []
            if f.get("sufficient") is False]
    if weak:
        out.append({"code": "failures-on-low-coverage", "count": len(weak), "message": (
            f"{len(weak)} figure(s) above a limit rest on less than {100 * threshold:.0f} % "
            "valid time of their period: indicative only (see the criteria)")})
    return out


def verdict_section(doc: Mapping[str, Any]) -> dict[str, Any]:
    """Return the ``verdict`` of a results document.

    Parameters
    ----------
    doc : dict
        A results document (or one written by an earlier version): ``status``,
        ``findings``, ``finding_counts``, ``coverage``, ``criteria``, ``settings``.

    Returns
    -------
    dict
        ``criteria_total``, ``criteria_checked``, ``criteria_not_met`` (criteria, not
        figures), ``figures_not_meeting`` (failing figures over all criteria),
        ``outcome`` (``"not met"``, ``"met"``, ``"not checked"`` or ``"none set"``),
        ``outcome_text``, ``data_quality`` (``ok``/``warnings``/``errors``/
        ``unreadable``), ``data_quality_text`` and ``warnings_affecting_figures``
        (``code``, ``message``, ``count``, and where known ``sheet``/``row``/``column``).
    """
    criteria = list(doc.get("criteria") or [])
    total = len(criteria)
    checked = sum(1 for c in criteria if c.get("passed") is not None)
    not_met = sum(1 for c in criteria if c.get("passed") is False)
    figures = sum(int(c.get("failed") or 0) for c in criteria)
    if total == 0:
        outcome = "none set"
    elif not_met:
        outcome = "not met"
    elif checked:
        outcome = "met"
    else:
        outcome = "not checked"
    settings = doc.get("settings") or {}
    threshold = settings.get("coverage_threshold") if isinstance(settings, Mapping) else None
    if not isinstance(threshold, int | float) or isinstance(threshold, bool):
        threshold = constants.COVERAGE_THRESHOLD
    warnings = _finding_warnings(doc.get("findings") or [], doc.get("finding_counts") or {})
    warnings += _coverage_warnings(doc, float(threshold))
    status = str(doc.get("status") or "ok")
    quality = status if status in _RANK else "errors"
    if warnings and _RANK[quality] < _RANK["warnings"]:
        quality = "warnings"
    outcome_text = outcome_words(not_met, checked, total)
    if status == "unreadable":
        outcome, outcome_text = "not checked", "not judged: the file could not be read"
    return {
        "criteria_total": total,
        "criteria_checked": checked,
        "criteria_not_met": not_met,
        "figures_not_meeting": figures,
        "outcome": outcome,
        "outcome_text": outcome_text,
        "data_quality": quality,
        "data_quality_text": data_quality_words(quality),
        "warnings_affecting_figures": warnings,
    }
