"""Background-corrected source assessments (``settings.assessments`` of this position).

Source-on and residual time come from local-clock windows (split at the window edges, a
reading piece belongs to a window when it lies inside it) or, with
``use_operating_column``, from the Readings ``Operating`` column (True = source on,
False = residual; not stated = neither). LAeq of the total and of the residual average
the valid time only; the specific level follows ISO 1996-2 residual correction, the
rating level adds the corrections (BS 4142), and the excess is over the representative
background LA90 of the period (day or night) holding most of the source-on time.

With the Operating column, source-on and residual readings are both taken from that same
period only: day and night are assessed separately (BS 4142:2014 reference intervals), and
a residual taken from the louder day would not be comparable with a night-time total.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from surveytools.assessment._common import IntArray, db, run_spans, seconds, split
from surveytools.assessment.background import (
    BACKGROUND_PERIODS,
    background_periods_of,
    majority_period,
)
from surveytools.assessment.context import Context
from surveytools.assessment.timegrid import format_local, local_text_to_utc_ms
from surveytools.errors import SettingsError
from surveytools.indicators.levels import energy_average
from surveytools.settings import Assessment

#: Correction names, in the order ``rating_level`` takes them (BS 4142:2014 9.2).
CORRECTION_NAMES = ("tonal", "impulsive", "intermittency", "other")

NOTE_UPPER_BOUND = (
    "the residual is within {limit:g} dB of the total: the specific level cannot be "
    "separated; the total is reported as an upper bound"
)


def window_ms(ctx: Context, windows: tuple[tuple[str, str], ...]) -> IntArray:
    """Windows as an ``(n, 2)`` array of UTC instants [ms].

    Raises
    ------
    SettingsError
        If a window text is not a date-time or a window ends before it starts.
    """
    out = np.zeros((len(windows), 2), dtype=np.int64)
    for k, (begin, end) in enumerate(windows):
        out[k] = (local_text_to_utc_ms(begin, ctx.tz), local_text_to_utc_ms(end, ctx.tz))
        if out[k, 1] <= out[k, 0]:
            raise SettingsError(
                f"assessment window {begin!r} to {end!r} ends before it starts; give "
                "[from, to] with to after from"
            )
    return out


def _windowed_level(ctx: Context, windows: IntArray) -> tuple[float, float]:
    """LAeq and valid time [s] of the valid reading pieces inside the windows."""
    if windows.size == 0 or ctx.n == 0:
        return float("nan"), 0.0
    edges = np.unique(windows.ravel())
    pieces = split(ctx.start_ms, ctx.duration_ms, edges)
    middle = pieces.start_ms + pieces.duration_ms / 2.0
    inside = np.zeros(pieces.index.size, dtype=bool)
    for begin, end in windows:  # a handful of windows
        inside |= (middle >= begin) & (middle < end)
    chosen = inside & ctx.valid[pieces.index] & (pieces.duration_ms > 0)
    laeq = ctx.level("LAeq")
    assert laeq is not None
    levels = laeq[pieces.index][chosen]
    durations = pieces.duration_s[chosen]
    return energy_average(levels, durations), float(np.sum(durations))


def _selected_level(ctx: Context, selected: np.ndarray) -> tuple[float, float]:
    """LAeq and valid time [s] of whole valid readings where ``selected``."""
    chosen = selected & ctx.valid
    laeq = ctx.level("LAeq")
    assert laeq is not None
    durations = ctx.duration_ms[chosen] / 1000.0
    return energy_average(laeq[chosen], durations), float(np.sum(durations))


def _span_texts(ctx: Context, spans: IntArray) -> list[list[str]]:
    starts = format_local(spans[:, 0], ctx.tz)
    ends = format_local(spans[:, 1], ctx.tz)
    return [[a, b] for a, b in zip(starts, ends, strict=True)]


def _operating_spans(ctx: Context, selected: np.ndarray) -> IntArray:
    first, last = run_spans(selected)
    return np.stack([ctx.start_ms[first], ctx.end_ms[last]], axis=1) if first.size else (
        np.zeros((0, 2), dtype=np.int64)
    )


def assess_one(ctx: Context, assessment: Assessment, background: dict[str, Any] | None
               ) -> dict[str, Any]:
    """One entry of the ``assessments`` section."""
    from surveytools.indicators.background import residual_correction
    from surveytools.indicators.rating import (
        excess_over_background,
        impact_indication,
        rating_level,
    )

    residual_settings = ctx.settings.residual
    period_note: str | None = None
    if assessment.use_operating_column:
        selection = "operating column"
        operating = (
            ctx.survey.readings["operating"] if "operating" in ctx.survey.readings.columns
            else None
        )
        on = (operating == True).fillna(False).to_numpy(dtype=bool) if operating is not None \
            else np.zeros(ctx.n, dtype=bool)  # noqa: E712 (nullable boolean comparison)
        off = (operating == False).fillna(False).to_numpy(dtype=bool) if operating is not None \
            else np.zeros(ctx.n, dtype=bool)  # noqa: E712
        period = majority_period(ctx, _operating_spans(ctx, on & ctx.valid))
        if period is not None:
            same = background_periods_of(ctx, ctx.start_ms) == BACKGROUND_PERIODS.index(period)
            if np.any(off & same & ctx.valid):
                on, off = on & same, off & same
                period_note = (f"source-on and residual readings taken from {period}-time "
                               "only, the period holding most of the operating time")
            else:
                period_note = (f"no valid residual readings in the {period}-time, where most "
                               "of the operating time lies: the residual comes from the other "
                               "period and may not be comparable")
        on_spans, off_spans = _operating_spans(ctx, on), _operating_spans(ctx, off)
        total, valid_total = _selected_level(ctx, on)
        residual, valid_residual = _selected_level(ctx, off)
    else:
        selection = "windows"
        on_spans = window_ms(ctx, assessment.source_on)
        off_spans = window_ms(ctx, assessment.residual)
        total, valid_total = _windowed_level(ctx, on_spans)
        residual, valid_residual = _windowed_level(ctx, off_spans)
        period = majority_period(ctx, on_spans)

    try:
        specific_arr, difference_arr, basis_arr = residual_correction(
            total, residual, residual_settings.no_correction_above_db,
            residual_settings.upper_bound_at_or_below_db,
        )
    except ValueError as exc:
        raise SettingsError(f"residual settings: {exc}") from exc
    specific, difference = float(specific_arr), float(difference_arr)
    basis = str(basis_arr.item())
    corrections = {name: float(assessment.corrections_db.get(name, 0.0))
                   for name in CORRECTION_NAMES}
    rating = float(rating_level(specific, *(corrections[name] for name in CORRECTION_NAMES)))
    bg = background[period]["LA90"] if (background and period) else None
    excess = float(excess_over_background(rating, bg if bg is not None else float("nan")))
    impact = impact_indication(excess)

    notes: list[str] = []
    if not valid_total > 0:
        notes.append("no valid readings in the source-on time")
    if not valid_residual > 0:
        notes.append("no valid readings in the residual time")
    if basis == "upper bound":
        notes.append(NOTE_UPPER_BOUND.format(limit=residual_settings.upper_bound_at_or_below_db))
    if period_note:
        notes.append(period_note)
    if period is not None and bg is None:
        notes.append(f"no representative {period} background LA90")
    return {
        "name": assessment.name,
        "position": assessment.position,
        "selection": selection,
        "source_on": _span_texts(ctx, on_spans),
        "residual": _span_texts(ctx, off_spans),
        "valid_s_total": seconds(valid_total),
        "valid_s_residual": seconds(valid_residual),
        "LAeq_total": db(total),
        "LAeq_residual": db(residual),
        "level_difference": db(difference),
        "specific_level": db(specific),
        "specific_basis": basis,
        "corrections_db": corrections,
        "rating_level": db(rating),
        "background_period": period,
        "background_LA90": bg,
        "excess_over_background": db(excess),
        "impact_indication": impact,
        "note": "; ".join(notes) if notes else None,
    }


def assessments_section(ctx: Context, background: dict[str, Any] | None) -> list[dict[str, Any]]:
    """Assessments of this survey's position, in settings order."""
    position = ctx.survey.metadata.get("position")
    return [assess_one(ctx, a, background) for a in ctx.settings.assessments
            if a.position == position]
