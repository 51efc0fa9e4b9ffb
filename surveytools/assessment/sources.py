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

from datetime import date, tzinfo
from typing import Any

import numpy as np

from surveytools.assessment._common import (
    FloatArray,
    IntArray,
    Pieces,
    db,
    seconds,
)
from surveytools.assessment.background import (
    BACKGROUND_PERIODS,
    ReferenceLA90,
    majority_period,
)
from surveytools.assessment.context import Context
from surveytools.assessment.source_parts import (
    ALL_PERIODS,
    PositionSourceParts,
    ResidualLA90,
    SourceFreeBackground,
    SourceParts,
    operating_flags,
    period_pieces,
    position_assessments,
    source_parts,
    window_ms,
    window_pieces,
)
from surveytools.assessment.spectral import (
    AssessmentSpectra,
    assessment_spectra,
    spectra_without_bands,
    survey_bands,
)
from surveytools.assessment.timegrid import calendar_days, format_local
from surveytools.errors import SettingsError
from surveytools.settings import Assessment, Settings

#: How the background an assessment is compared with was found (results contract).
BACKGROUND_BASES = ("source-free period", "residual time", "not available")

#: Correction names, in the order ``rating_level`` takes them (BS 4142:2014 9.2).
CORRECTION_NAMES = ("tonal", "impulsive", "intermittency", "other")

NOTE_UPPER_BOUND = (
    "the residual is within {limit:g} dB of the total: the specific level cannot be "
    "separated; the total is reported as an upper bound"
)

#: A selection of valid time: reading of each piece and its duration [s].
Selection = tuple[IntArray, FloatArray]
#: No valid time at all.
_NO_SELECTION: Selection = (np.zeros(0, dtype=np.int64), np.zeros(0))


def _piece_selection(ctx: Context, pieces: Pieces, chosen: np.ndarray) -> Selection:
    """Return the reading and duration [s] of each valid piece where ``chosen``."""
    chosen = chosen & ctx.valid[pieces.index] & (pieces.duration_ms > 0)
    return pieces.index[chosen], pieces.duration_s[chosen]


def _selections(ctx: Context, assessment: Assessment, parts: SourceParts
                ) -> tuple[Selection, Selection]:
    """Return the valid source-on and residual pieces the entry uses (for the spectra)."""
    if assessment.use_operating_column:
        on, off = operating_flags(ctx)
        pieces, piece_period = period_pieces(ctx)
        on_p, off_p = on[pieces.index], off[pieces.index]
        period, alone = parts.operating_period()
        if period is not None and alone:
            same = piece_period == BACKGROUND_PERIODS.index(period)
            on_p, off_p = on_p & same, off_p & same
        return _piece_selection(ctx, pieces, on_p), _piece_selection(ctx, pieces, off_p)
    out = []
    for windows in (assessment.source_on, assessment.residual):
        spans = window_ms(ctx.tz, windows)
        out.append(_piece_selection(ctx, *window_pieces(ctx, spans))
                   if spans.size and ctx.n else _NO_SELECTION)
    return out[0], out[1]


def _span_texts(tz: tzinfo, spans: IntArray) -> list[list[str]]:
    starts = format_local(spans[:, 0], tz)
    ends = format_local(spans[:, 1], tz)
    return [[a, b] for a, b in zip(starts, ends, strict=True)]


def _background(period: str | None, readings: int, background: SourceFreeBackground,
                residual: ResidualLA90, method: str) -> tuple[float, str, str | None]:
    """Return the unrounded background LA90 an assessment is compared with, basis, note.

    The source-free reference intervals of the period first, else the LA90 of the
    residual time. NaN when there is no background. [dB]
    """
    if period is None or readings == 0:
        return float("nan"), "not available", None
    value = background.representative(period, method)
    if np.isfinite(value):
        return value, "source-free period", None
    value = residual.la90()
    if np.isfinite(value):
        return value, "residual time", (
            f"no sufficient {period}-time background without the source: the LA90 of "
            "the residual time is used")
    return float("nan"), "not available", (
        f"no representative {period} background LA90 without the source, and no valid "
        "residual time to take it from")


def assessment_entry(assessment: Assessment, parts: SourceParts, settings: Settings,
                     tz: tzinfo, days: list[date], spectra: AssessmentSpectra
                     ) -> dict[str, Any]:
    """One entry of the ``assessments`` section from the parts of the survey's readings.

    ``days`` are the local dates the background periods are laid out on (those of the
    whole survey); ``spectra`` what the band levels add (:func:`assessment_spectra`).

    Raises
    ------
    SettingsError
        If the residual settings or a window cannot be applied.
    PartsNotMergeable
        If the residual-time LA90 is needed and cannot be had from merged parts.
    """
    from surveytools.indicators.background import residual_correction
    from surveytools.indicators.rating import (
        excess_over_background,
        impact_indication,
        rating_level,
    )

    residual_settings = settings.residual
    period_note: str | None = None
    if assessment.use_operating_column:
        selection = "operating column"
        period, alone = parts.operating_period()
        group = BACKGROUND_PERIODS.index(period) if period is not None and alone else None
        if period is not None:
            period_note = (
                f"source-on and residual time taken from {period}-time only, the period "
                "holding most of the operating time" if alone else
                f"no valid residual readings in the {period}-time, where most of the "
                "operating time lies: the residual comes from the other period and may not "
                "be comparable")
        runs = ALL_PERIODS if group is None else group
        on_spans, off_spans = parts.on_runs[runs].spans_ms, parts.off_runs[runs].spans_ms
        residual_part = parts.residual[runs]
    else:
        selection = "windows"
        group = None
        on_spans = window_ms(tz, assessment.source_on)
        off_spans = window_ms(tz, assessment.residual)
        period = majority_period(days, tz, settings.background, on_spans)
        residual_part = parts.residual[0]
    total, valid_total = parts.on.level(group)
    residual, valid_residual = parts.off.level(group)

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
    if spectra.tonal_correction_db is not None:
        corrections["tonal"] = spectra.tonal_correction_db
    rating = float(rating_level(specific, *(corrections[name] for name in CORRECTION_NAMES)))
    bg, background_basis, background_note = _background(
        period, parts.readings, parts.background, residual_part, settings.background.method)
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
        "source_on": _span_texts(tz, on_spans),
        "residual": _span_texts(tz, off_spans),
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


def assess_one(ctx: Context, assessment: Assessment, reference: ReferenceLA90 | None
               ) -> dict[str, Any]:
    """One entry of the ``assessments`` section: the survey as one part."""
    parts = source_parts(ctx, assessment, reference)
    spectra = (assessment_spectra(ctx, *_selections(ctx, assessment, parts),
                                  assessment.tonal_method)
               if survey_bands(ctx) is not None else
               spectra_without_bands(assessment.tonal_method))
    return assessment_entry(assessment, parts, ctx.settings, ctx.tz, ctx.candidate_days,
                            spectra)


def assessments_section(ctx: Context, reference: ReferenceLA90 | None = None
                        ) -> list[dict[str, Any]]:
    """Assessments of this survey's position, in settings order.

    ``reference`` is the survey's own :func:`~.background.reference_la90` when the caller
    has it (it saves computing it again).
    """
    position = ctx.survey.metadata.get("position")
    return [assess_one(ctx, a, reference)
            for a in position_assessments(ctx.settings.assessments, position)]


def assessments_from_parts(parts: PositionSourceParts, settings: Settings, position: object,
                           tz: tzinfo, first_ms: int, last_ms: int) -> list[dict[str, Any]]:
    """Return the ``assessments`` section of readings without band levels, from parts.

    ``first_ms`` / ``last_ms`` are the earliest start and latest end of the readings.

    Raises
    ------
    PartsNotMergeable
        See :mod:`~surveytools.assessment.source_parts`.
    """
    days = calendar_days(first_ms, last_ms, tz)  # as build_context lays them out
    chosen = position_assessments(settings.assessments, position)
    return [assessment_entry(a, p, settings, tz, days, spectra_without_bands(a.tonal_method))
            for a, p in zip(chosen, parts.items, strict=True)]
