"""Coverage, exclusion spans, the survey metadata section and per-reading annotations."""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from surveytools.assessment._common import MS_PER_S, run_spans, seconds
from surveytools.assessment.context import Context
from surveytools.assessment.timegrid import format_local, site_tz
from surveytools.inputs.columns import is_band_column
from surveytools.survey import Survey

#: Survey metadata keys copied into the results (results_spec.md ``survey``).
SURVEY_KEYS = (
    "position", "site", "time_zone", "clock", "meter_class", "calibration_before_db",
    "calibration_after_db", "calibrator_level_db", "microphone", "height_m", "notes",
)


def _plain(value: Any) -> Any:
    """JSON-ready scalar: numpy scalars to Python, NaN to None."""
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not np.isfinite(value):
        return None
    return value


def survey_section(survey: Survey) -> dict[str, Any]:
    """Return the ``survey`` section: metadata, calibration drift, readings sheet, level columns."""
    meta = survey.metadata
    out: dict[str, Any] = {key: _plain(meta.get(key)) for key in SURVEY_KEYS}
    out["time_zone_assumed"] = bool(meta.get("time_zone_assumed", False))
    before, after = out["calibration_before_db"], out["calibration_after_db"]
    drift = None
    if isinstance(before, int | float) and isinstance(after, int | float):
        drift = round(float(after) - float(before), 2)
    out["calibration_drift_db"] = drift
    out["readings_sheet"] = survey.readings_sheet
    out["level_columns"] = dict(survey.level_columns)
    return out


def coverage_section(ctx: Context) -> dict[str, Any] | None:
    """Return the ``coverage`` section; None without readings.

    ``excluded_s`` counts a reading under every reason that excludes it (all scopes).
    """
    if ctx.n == 0:
        return None
    durations_s = ctx.duration_ms / MS_PER_S
    excluded: dict[str, float] = {}
    for ex in ctx.survey.exclusions:
        excluded[ex.reason] = excluded.get(ex.reason, 0.0) + float(np.sum(durations_s[ex.mask]))
    first, last = int(ctx.start_ms.min()), int(ctx.end_ms.max())
    first_text, last_text = format_local(np.array([first, last]), ctx.tz)
    return {
        "first": first_text,
        "last": last_text,
        "measured_s": seconds(np.sum(durations_s)),
        "valid_s": seconds(np.sum(durations_s[ctx.valid])),
        "excluded_s": {reason: seconds(v) for reason, v in sorted(excluded.items())},
        "unplaced_rows": len(ctx.survey.unplaced),
        "logging_interval_s": seconds(ctx.logging_interval_s),
    }


def exclusion_spans_section(ctx: Context) -> list[dict[str, Any]]:
    """Return runs of consecutive (in time) readings excluded for the same reason."""
    rows = ctx.survey.readings["row"].to_numpy(dtype=np.int64) if ctx.n else np.zeros(0, np.int64)
    collected: list[tuple[int, str, dict[str, Any]]] = []
    for ex in ctx.survey.exclusions:
        first, last = run_spans(ex.mask)
        if first.size == 0:
            continue
        # reduceat runs up to the next run's first reading: mask out the readings between.
        ends_masked = np.where(ex.mask, ctx.end_ms, np.iinfo(np.int64).min)
        run_end = np.maximum.reduceat(ends_masked, first)
        starts_text = format_local(ctx.start_ms[first], ctx.tz)
        ends_text = format_local(run_end, ctx.tz)
        for k in range(first.size):
            collected.append((int(ctx.start_ms[first[k]]), ex.reason, {
                "from": starts_text[k],
                "to": ends_text[k],
                "first_row": int(rows[first[k]]),
                "last_row": int(rows[last[k]]),
                "rows": int(last[k] - first[k] + 1),
                "reason": ex.reason,
                "scope": ex.scope,
                "label": ex.label,
            }))
    collected.sort(key=lambda item: (item[0], item[1]))
    return [item[2] for item in collected]


def unplaced_section(survey: Survey) -> list[dict[str, Any]]:
    """Rows that could not be placed in time."""
    table = survey.unplaced
    return [
        {"row": int(r), "reason": str(reason), "raw": None if raw is None else str(raw)}
        for r, reason, raw in zip(table["row"].tolist(), table["reason"].tolist(),
                                  table["raw"].tolist(), strict=True)
    ]


def reading_annotations(survey: Survey, with_levels: bool = True,
                        with_bands: bool = True) -> pd.DataFrame:
    """Per reading: ``row``, ``start`` (local ISO text), ``duration_s``, levels, ``reason``.

    The level columns are every level column read (``LAeq``, ``LAFmax``, ``LAF90``, band
    levels ..., in the order of :attr:`Survey.level_columns`; NaN where empty or unusable)
    when ``with_levels`` (band levels only when ``with_bands`` too); then ``overload`` /
    ``operating`` (``"yes"``/``"no"``/``""``) and ``note`` when the input gave them.
    ``reason`` is ``""`` for a valid reading, else the ``"; "``-joined reason codes
    (background-only reasons marked). Built vectorially, for the workbook writer.
    """
    readings = survey.readings
    tz = site_tz(survey.metadata)
    start = readings["start_ms"].to_numpy(dtype=np.int64)
    columns: dict[str, Any] = {
        "row": readings["row"].to_numpy(dtype=np.int64),
        "start": format_local(start, tz),
        "duration_s": readings["duration_ms"].to_numpy(dtype=np.int64) / MS_PER_S,
    }
    if with_levels:
        for name in survey.level_columns:
            if name in readings.columns and (with_bands or not is_band_column(name)):
                columns[name] = readings[name].to_numpy(dtype=np.float64)
        if "overload" in readings.columns and bool(readings["overload"].any()):
            columns["overload"] = np.where(readings["overload"].to_numpy(dtype=bool), "yes", "")
        if "operating" in readings.columns and bool(readings["operating"].notna().any()):
            flag = readings["operating"]
            columns["operating"] = np.where(flag.isna().to_numpy(), "",
                                            np.where(flag.fillna(False).to_numpy(dtype=bool),
                                                     "yes", "no"))
        if "note" in readings.columns and bool(readings["note"].notna().any()):
            columns["note"] = readings["note"].to_numpy(dtype=object)
    columns["reason"] = survey.reasons_per_row()
    return pd.DataFrame(columns)
