"""Background-corrected source assessments (``settings.assessments`` of this position).

Source-on and residual time come from local-clock windows (split at the window edges, a
reading piece belongs to a window when it lies inside it) or, with
``use_operating_column``, from the Readings ``Operating`` column (True = source on,
False = residual; not stated = neither). LAeq of the total and of the residual average
the valid time only; the specific level follows ISO 1996-2 residual correction, the
rating level adds the corrections (BS 4142), and the excess is over the representative
background LA90 of the period (day or night) holding most of the source-on time.

The background is source-free (design.md §9; BS 4142:2014 8.1, from memory: the
background sound level is that of the place *without* the specific sound): readings
overlapping the assessment's ``source_on`` windows are left out of its background exactly
as ``Operating = yes`` readings are for every background. Where the period then has no
sufficient reference interval, the LA90 of the assessment's residual time is used
instead; without that either, no background is reported and the note says why.
``background_basis`` says which (``"source-free period"``, ``"residual time"``,
``"not available"``).

With the Operating column, readings are split at the background period bounds (07:00 /
23:00 by default) as every other period figure is, and source-on and residual time are
both taken from the period holding most of the operating time: day and night are
assessed separately (BS 4142:2014 reference intervals), and a residual taken from the
louder day would not be comparable with a night-time total.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from surveytools.assessment._common import (
    FloatArray,
    IntArray,
    Pieces,
    db,
    run_spans,
    seconds,
    split,
)
from surveytools.assessment.background import (
    BACKGROUND_PERIODS,
    ReferenceLA90,
    majority_period,
    reference_la90,
)
from surveytools.assessment.context import Context
from surveytools.assessment.spectral import assessment_spectra
from surveytools.assessment.timegrid import (
    day_offset_boundaries,
    format_local,
    local_text_to_utc_ms,
)
from surveytools.constants import BACKGROUND_PERCENT
from surveytools.errors import SettingsError
from surveytools.indicators.levels import energy_average
from surveytools.indicators.percentiles import combine_logged_levels, exceedance_level
from surveytools.settings import Assessment

#: How the background an assessment is compared with was found (results contract).
BACKGROUND_BASES = ("source-free period", "residual time", "not available")

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


def _window_pieces(ctx: Context, windows: IntArray) -> tuple[Pieces, np.ndarray]:
    """Split the readings at the window edges; mark the pieces inside a window."""
    edges = np.unique(windows.ravel())
    pieces = split(ctx.start_ms, ctx.duration_ms, edges)
    middle = pieces.start_ms + pieces.duration_ms / 2.0
    inside = np.zeros(pieces.index.size, dtype=bool)
    for begin, end in windows:  # a handful of windows
        inside |= (middle >= begin) & (middle < end)
    return pieces, inside & (pieces.duration_ms > 0)


#: A selection of valid time: reading of each piece and its duration [s].
Selection = tuple[IntArray, FloatArray]
#: No valid time at all.
_NO_SELECTION: Selection = (np.zeros(0, dtype=np.int64), np.zeros(0))


def _piece_selection(ctx: Context, pieces: Pieces, chosen: np.ndarray) -> Selection:
    """Return the reading and duration [s] of each valid piece where ``chosen``."""
    chosen = chosen & ctx.valid[pieces.index] & (pieces.duration_ms > 0)
    return pieces.index[chosen], pieces.duration_s[chosen]


def _selection_level(ctx: Context, selection: Selection) -> tuple[float, float]:
    """LAeq and valid time [s] of a selection."""
    laeq = ctx.level("LAeq")
    assert laeq is not None
    index, durations = selection
    return energy_average(laeq[index], durations), float(np.sum(durations))


def _period_pieces(ctx: Context) -> tuple[Pieces, IntArray]:
    """Split the readings at the background period bounds; give each piece its period.

    A 15-min reading from 06:52 gives 8 min to the night and 7 to the day (design.md §5).
    """
    settings = ctx.settings.background
    bounds = day_offset_boundaries(ctx.candidate_days, [settings.day_start,
                                                        settings.night_start], ctx.tz)
    pieces = split(ctx.start_ms, ctx.duration_ms, bounds)
    return pieces, (pieces.segment - 1) % len(BACKGROUND_PERIODS)


def _span_texts(ctx: Context, spans: IntArray) -> list[list[str]]:
    starts = format_local(spans[:, 0], ctx.tz)
    ends = format_local(spans[:, 1], ctx.tz)
    return [[a, b] for a, b in zip(starts, ends, strict=True)]


def _piece_spans(pieces: Pieces, selected: np.ndarray) -> IntArray:
    first, last = run_spans(selected)
    if not first.size:
        return np.zeros((0, 2), dtype=np.int64)
    return np.stack([pieces.start_ms[first],
                     pieces.start_ms[last] + pieces.duration_ms[last]], axis=1)


def _overlapping(ctx: Context, spans: IntArray) -> np.ndarray:
    """Mark the readings overlapping any ``[from, to)`` span (a handful of spans)."""
    out = np.zeros(ctx.n, dtype=bool)
    for begin, end in spans:
        out |= (ctx.start_ms < end) & (ctx.end_ms > begin)
    return out


def _residual_la90(ctx: Context, pieces: Pieces, chosen: np.ndarray) -> float:
    """LA90 of the residual time: the pieces ``chosen`` of readings valid for background.

    From the logged LAF90 of those readings (combined with the background method) where
    the log has it, else from their LAeq samples (ISO 1996-1 LN, durations as weights).
    """
    chosen = chosen & ctx.valid_background[pieces.index] & (pieces.duration_ms > 0)
    logged = ctx.logged("LAF90")
    if logged is not None:
        readings = np.unique(pieces.index[chosen])
        return combine_logged_levels(logged[readings], ctx.settings.background.method)
    laeq = ctx.level("LAeq")
    assert laeq is not None
    return exceedance_level(laeq[pieces.index][chosen], BACKGROUND_PERCENT,
                            pieces.weights_ms[chosen])


def _source_free_background(
    ctx: Context, period: str | None, source_readings: np.ndarray,
    reference: ReferenceLA90 | None, residual: tuple[Pieces, np.ndarray] | None,
) -> tuple[float, str, str | None]:
    """Return the unrounded background LA90 an assessment is compared with, basis, note.

    ``source_readings`` are left out of the background (on top of the background
    exclusions, ``Operating = yes`` among them); ``reference`` is the survey's own
    reference-interval LA90 (used when there is nothing more to leave out). NaN when
    there is no background. [dB]
    """
    if period is None or ctx.n == 0:
        return float("nan"), "not available", None
    method = ctx.settings.background.method
    if np.any(source_readings & ctx.valid_background) or reference is None:
        reference = reference_la90(ctx, ctx.valid_background & ~source_readings)
    value = reference.representative(period, method)
    if np.isfinite(value):
        return value, "source-free period", None
    if residual is not None:
        value = _residual_la90(ctx, *residual)
        if np.isfinite(value):
            return value, "residual time", (
                f"no sufficient {period}-time background without the source: the LA90 of "
                "the residual time is used")
    return float("nan"), "not available", (
        f"no representative {period} background LA90 without the source, and no valid "
        "residual time to take it from")


def assess_one(ctx: Context, assessment: Assessment, reference: ReferenceLA90 | None
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
    residual_pieces: tuple[Pieces, np.ndarray] | None = None
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
        pieces, piece_period = _period_pieces(ctx)
        on_p, off_p = on[pieces.index], off[pieces.index]
        good = ctx.valid[pieces.index] & (pieces.duration_ms > 0)
        on_time = np.bincount(piece_period[on_p & good], weights=pieces.duration_ms[on_p & good],
                              minlength=len(BACKGROUND_PERIODS))
        period = BACKGROUND_PERIODS[int(np.argmax(on_time))] if on_time.sum() > 0 else None
        if period is not None:
            same = piece_period == BACKGROUND_PERIODS.index(period)
            if np.any(off_p & same & good):
                on_p, off_p = on_p & same, off_p & same
                period_note = (f"source-on and residual time taken from {period}-time "
                               "only, the period holding most of the operating time")
            else:
                period_note = (f"no valid residual readings in the {period}-time, where most "
                               "of the operating time lies: the residual comes from the other "
                               "period and may not be comparable")
        on_spans, off_spans = _piece_spans(pieces, on_p), _piece_spans(pieces, off_p)
        on_selection = _piece_selection(ctx, pieces, on_p)
        off_selection = _piece_selection(ctx, pieces, off_p)
        source_readings = on  # already out of every background (Operating = yes)
        residual_pieces = (pieces, off_p)
    else:
        selection = "windows"
        on_spans = window_ms(ctx, assessment.source_on)
        off_spans = window_ms(ctx, assessment.residual)
        on_selection = (_piece_selection(ctx, *_window_pieces(ctx, on_spans))
                        if on_spans.size and ctx.n else _NO_SELECTION)
        period = majority_period(ctx, on_spans)
        source_readings = _overlapping(ctx, on_spans)
        off_selection = _NO_SELECTION
        if off_spans.size and ctx.n:
            residual_pieces = _window_pieces(ctx, off_spans)
            off_selection = _piece_selection(ctx, *residual_pieces)
    total, valid_total = _selection_level(ctx, on_selection)
    residual, valid_residual = _selection_level(ctx, off_selection)

    try:
        specific_arr, difference_arr, basis_arr = residual_correction(
            total, residual, residual_settings.no_correction_above_db,
            residual_settings.upper_bound_at_or_below_db,
        )
    except ValueError as exc:
        raise SettingsError(f"residual settings: {exc}") from exc
    specific, difference = float(specific_arr), float(difference_arr)
    basis = str(basis_arr.item())
    corrections = {name: assessment.given_correction_db(name) for name in CORRECTION_NAMES}
    spectra = assessment_spectra(ctx, on_selection, off_selection, assessment.tonal_method)
    if spectra.tonal_correction_db is not None:
        corrections["tonal"] = spectra.tonal_correction_db
    rating = float(rating_level(specific, *(corrections[name] for name in CORRECTION_NAMES)))
    bg, background_basis, background_note = _source_free_background(
        ctx, period, source_readings, reference, residual_pieces)
    # from the unrounded background: every figure is rounded once (design.md §9)
    excess = float(excess_over_background(rating, bg))
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
    if background_note:
        notes.append(background_note)
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
        "tonal_basis": spectra.tonal_basis,
        "rating_level": db(rating),
        "background_period": period,
        "background_LA90": db(bg),
        "background_basis": background_basis,
        "excess_over_background": db(excess),
        "impact_indication": impact,
        "note": "; ".join(notes) if notes else None,
        **spectra.fields,
    }


def assessments_section(ctx: Context, reference: ReferenceLA90 | None = None
                        ) -> list[dict[str, Any]]:
    """Assessments of this survey's position, in settings order.

    ``reference`` is the survey's own :func:`~.background.reference_la90` when the caller
    has it (it saves computing it again).
    """
    position = ctx.survey.metadata.get("position")
    return [assess_one(ctx, a, reference) for a in ctx.settings.assessments
            if a.position == position]
